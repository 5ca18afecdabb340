"""Atomic file writes: a reader never sees a half-written file, and nothing but a
regular file is ever replaced.

``atomic_path(path)`` yields a temporary ``.part`` file beside the target and renames it
over the target when the block succeeds:

* a symbolic link is followed: its target file is replaced, the link stays;
* a device, FIFO, socket or directory at the path is refused (``UnsafeOutput``), never
  replaced (``-o /dev/full`` as root used to swap the device node for an HDF5 file);
* the new file gets an existing file's permission bits, or 0666 minus the umask for a
  new one (as ``open()`` would create it; ``mkstemp`` alone gives 0600);
* the ``.part`` file is removed when the block fails or is interrupted; a ``.part`` left
  by a process that was killed outright (SIGKILL cannot be caught) is removed by the
  next write to the same target once that process is gone.
"""

import os
import stat
import tempfile
import threading
from contextlib import contextmanager
from pathlib import Path

_UMASK_LOCK = threading.Lock()


class UnsafeOutput(OSError):
    """The output path names something that is not a regular file (device, FIFO, ...)."""


def current_umask():
    """The process umask (read without leaving it changed)."""
    with _UMASK_LOCK:
        mask = os.umask(0o022)
        os.umask(mask)
    return mask


def resolve_target(path):
    """The file a write to ``path`` should replace: symlinks followed, special files refused.

    Returns
    -------
    (Path, int or None)
        The target path and the permission bits of the existing file (None when new).
    """
    path = Path(path)
    target = Path(os.path.realpath(path))
    try:
        info = os.stat(target)
    except FileNotFoundError:
        return target, None
    if stat.S_ISDIR(info.st_mode):
        raise UnsafeOutput(f"{path} is a directory, not a file; refusing to replace it")
    if not stat.S_ISREG(info.st_mode):
        kind = ("a character device" if stat.S_ISCHR(info.st_mode) else "a block device" if stat.S_ISBLK(info.st_mode)
                else "a FIFO" if stat.S_ISFIFO(info.st_mode) else "a socket" if stat.S_ISSOCK(info.st_mode)
                else "not a regular file")
        raise UnsafeOutput(f"{path} is {kind}, not a regular file; refusing to replace it")
    return target, stat.S_IMODE(info.st_mode)


def _part_prefix(target):
    return f".{target.name}."


def _sweep_stale_parts(target):
    """Remove ``.part`` files of ``target`` left by processes that no longer exist."""
    prefix = _part_prefix(target)
    try:
        names = os.listdir(target.parent)
    except OSError:
        return
    for name in names:
        if not (name.startswith(prefix) and name.endswith(".part")):
            continue
        pid_text = name[len(prefix):].split(".", 1)[0]
        if not pid_text.isdigit() or int(pid_text) == os.getpid() or _alive(int(pid_text)):
            continue
        try:
            os.unlink(target.parent / name)
        except OSError:
            pass


def _alive(pid):
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    except OSError:
        return True
    return True


@contextmanager
def atomic_path(path):
    """Yield a temporary path beside ``path``; on success it replaces ``path`` in one rename.

    Raises ``UnsafeOutput`` (an OSError) when ``path`` is a directory or a special file.
    """
    target, mode = resolve_target(path)
    target.parent.mkdir(parents=True, exist_ok=True)
    _sweep_stale_parts(target)
    fd, tmp = tempfile.mkstemp(prefix=f"{_part_prefix(target)}{os.getpid()}.", suffix=".part", dir=target.parent)
    os.close(fd)
    try:
        yield Path(tmp)
        os.chmod(tmp, mode if mode is not None else 0o666 & ~current_umask())
        resolve_target(target)   # still a regular file (or absent) at the moment of the rename
        os.replace(tmp, target)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise
