"""Keep numba's on-disk cache consistent across edits of *other* modules.

numba keys a cached kernel on its own source file only: when ``kernel.py`` is
cached and ``fields/laser.py`` (whose evaluator it inlines) changes, the stale
machine code would still be loaded. We hash every source file that kernels are
built from once at import (~1 ms) and drop all cached kernels when the hash changes.
"""

import hashlib
from pathlib import Path

PACKAGE = Path(__file__).resolve().parent
STAMP = PACKAGE / "__pycache__" / "kernel-sources.sha256"


#: the modules compiled kernels are made of (editing the CLI or the schema keeps the cache)
KERNEL_SOURCES = ("config.py", "constants.py", "kernel.py", "step.py", "timescales.py", "rng.py", "fields", "pushers",
                  "radiation")


def kernel_source_files():
    """The .py files whose code can end up inside a compiled kernel."""
    for name in KERNEL_SOURCES:
        path = PACKAGE / name
        yield from (sorted(path.rglob("*.py")) if path.is_dir() else [path])


def source_digest():
    """sha256 over the kernel source files (path and content), hex string."""
    h = hashlib.sha256()
    for path in kernel_source_files():
        h.update(str(path.relative_to(PACKAGE)).encode())
        h.update(path.read_bytes())
    return h.hexdigest()


def ensure_consistent_cache():
    """Delete cached kernels (*.nbi, *.nbc) if any source file changed since they were built."""
    digest = source_digest()
    try:
        if STAMP.read_text() == digest:
            return False
    except OSError:
        pass
    for pattern in ("*.nbi", "*.nbc"):
        for stale in PACKAGE.rglob(pattern):
            try:
                stale.unlink()
            except OSError:
                pass
    try:
        STAMP.parent.mkdir(exist_ok=True)
        STAMP.write_text(digest)
    except OSError:  # read-only install: numba falls back to its own checks
        pass
    return True
