"""Output files survive abuse and results are read back only when they match the format
(issue "nothing wrong passes as completed", files and reading results). Common practice,
no source."""

import os
import signal
import stat
from pathlib import Path

import h5py
import numpy as np
import pytest

from builders import electron, scenario
from tracker import ScenarioError, load_result, track
from tracker.cli import main
from tracker.io import UnsafeOutput, atomic_path

ROOT = Path(__file__).resolve().parent.parent
MIRROR = str(ROOT / "scenarios" / "mirror_trap.toml")


@pytest.fixture(scope="module")
def small():
    return track(scenario([{"type": "uniform", "B": [0, 0, 1.0]}], duration=1e-10, rr="landau-lifshitz",
                          particle=electron(gamma=10.0, direction=[1, 0, 0]), save_every=10))


def parts(folder):
    return [p for p in os.listdir(folder) if p.endswith(".part")]


# ---------------------------------------------------------------------- what gets replaced
def test_a_symlink_is_written_through_to_its_target(tmp_path, small):
    target = tmp_path / "data" / "run.h5"
    target.parent.mkdir()
    target.write_bytes(b"old")
    link = tmp_path / "latest.h5"
    link.symlink_to(target)
    small.to_hdf5(link)
    assert link.is_symlink() and os.readlink(link) == str(target)
    assert load_result(link).t[-1] == small.t[-1]


@pytest.mark.parametrize("make", ["fifo", "device", "directory"])
def test_special_files_are_refused_and_left_alone(tmp_path, small, make):
    if make == "fifo":
        path = tmp_path / "pipe.h5"
        os.mkfifo(path)
        kind = stat.S_ISFIFO
    elif make == "device":
        path = Path("/dev/null")
        kind = stat.S_ISCHR
    else:
        path = tmp_path / "folder.h5"
        path.mkdir()
        kind = stat.S_ISDIR
    with pytest.raises(UnsafeOutput, match="refusing to replace it"):
        small.to_hdf5(path)
    assert kind(os.stat(path).st_mode)
    assert parts(path.parent) == [] or path.parent == Path("/dev")


def test_the_command_line_keeps_the_result_when_the_output_is_a_device(tmp_path, monkeypatch, capsys):
    import tempfile

    monkeypatch.setattr(tempfile, "tempdir", str(tmp_path))
    fifo = tmp_path / "out.h5"
    os.mkfifo(fifo)
    assert main(["run", MIRROR, "-o", str(fifo)]) == 1
    err = capsys.readouterr().err
    assert "a FIFO, not a regular file" in err and "the result is kept in" in err
    assert stat.S_ISFIFO(os.stat(fifo).st_mode)


def test_new_files_respect_the_umask_and_existing_files_keep_their_mode(tmp_path, small):
    old = os.umask(0o027)
    try:
        fresh = tmp_path / "fresh.csv"
        small.to_csv(fresh)
        assert stat.S_IMODE(os.stat(fresh).st_mode) == 0o640
    finally:
        os.umask(old)
    existing = tmp_path / "shared.h5"
    existing.write_bytes(b"")
    os.chmod(existing, 0o644)
    small.to_hdf5(existing)
    assert stat.S_IMODE(os.stat(existing).st_mode) == 0o644


# ---------------------------------------------------------------------- .part files
def test_a_failed_write_leaves_no_part_file(tmp_path):
    with pytest.raises(RuntimeError):
        with atomic_path(tmp_path / "x.h5") as tmp:
            tmp.write_bytes(b"half")
            raise RuntimeError("disk full")
    assert parts(tmp_path) == [] and not (tmp_path / "x.h5").exists()


def test_a_part_file_of_a_killed_process_is_swept_by_the_next_write(tmp_path, small):
    # SIGKILL cannot be caught: the next writer of the same file removes what the dead one left
    pid = os.fork()
    if pid == 0:
        os._exit(0)
    os.waitpid(pid, 0)
    stale = tmp_path / f".run.h5.{pid}.abcd.part"
    stale.write_bytes(b"x" * 1000)
    mine = tmp_path / f".run.h5.{os.getpid()}.live.part"
    mine.write_bytes(b"in progress")
    small.to_hdf5(tmp_path / "run.h5")
    assert not stale.exists() and mine.exists()


def test_ctrl_c_during_the_write_of_a_finished_run_finishes_the_write(tmp_path, monkeypatch, capsys):
    from tracker.result import Result

    original = Result.to_hdf5

    def interrupted_write(self, path):
        os.kill(os.getpid(), signal.SIGINT)   # the user presses Ctrl-C while the file is written
        return original(self, path)

    monkeypatch.setattr(Result, "to_hdf5", interrupted_write)
    out = tmp_path / "kept.h5"
    assert main(["run", MIRROR, "-o", str(out)]) == 130
    assert load_result(out).complete
    assert "finishing the file being written" in capsys.readouterr().err


# ---------------------------------------------------------------------- formats
def test_an_unknown_extension_is_refused_before_the_run(tmp_path, capsys):
    assert main(["run", MIRROR, "-o", str(tmp_path / "output.txt")]) == 2
    assert "unknown extension '.txt'" in capsys.readouterr().err
    assert list(tmp_path.iterdir()) == []


def test_a_multi_line_title_stays_on_the_csv_comment_line(tmp_path, small):
    import dataclasses

    titled = dataclasses.replace(small, scenario=dataclasses.replace(small.scenario, title="line one\nline, two"))
    path = tmp_path / "titled.csv"
    titled.to_csv(path)
    lines = path.read_text().splitlines()
    assert lines[0].startswith("# radorbit result: \"line one\\nline, two\"")
    assert lines[1].startswith("t_s,")
    table = np.loadtxt(path, delimiter=",", comments="#", skiprows=2)
    assert table.shape == (len(small.t), 13)


# ---------------------------------------------------------------------- reading results
def damaged(tmp_path, small, edit):
    path = tmp_path / "damaged.h5"
    small.to_hdf5(path)
    with h5py.File(path, "r+") as h5:
        edit(h5)
    return path


@pytest.mark.parametrize("edit, phrase", [
    (lambda h5: (h5.__delitem__("x"), h5.create_dataset("x", data=np.zeros((len(h5["t"]), 2)))), "shape"),
    (lambda h5: (h5.__delitem__("gamma"), h5.create_dataset("gamma", data=np.zeros(3))), "saved states"),
    (lambda h5: (h5.__delitem__("u"), h5.create_dataset("u", data=np.array(["a"] * len(h5["t"]), dtype="S1"))),
     "not real numbers"),
    (lambda h5: h5.__delitem__("chi"), "missing"),
    (lambda h5: h5.attrs.__setitem__("format_version", 99), "newer than this radorbit reads"),
    (lambda h5: h5.attrs.__setitem__("format", "something-else"), "not a radorbit result"),
])
def test_load_result_refuses_files_that_do_not_match_the_format(tmp_path, small, edit, phrase):
    path = damaged(tmp_path, small, edit)
    with pytest.raises(ScenarioError, match=phrase):
        load_result(path)


def test_a_malformed_result_never_reaches_the_spectrum_kernels(tmp_path, small, capsys):
    path = damaged(tmp_path, small, lambda h5: (h5.__delitem__("x"),
                                                h5.create_dataset("x", data=np.zeros((len(h5["t"]), 2)))))
    assert main(["spectrum", str(path)]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "shape" in err


def test_spectrum_of_a_csv_result_says_in_one_line_that_it_needs_hdf5(tmp_path, small, capsys):
    path = tmp_path / "run.csv"
    small.to_csv(path)
    assert main(["spectrum", str(path)]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "needs the HDF5 file" in err


def test_a_hand_built_result_with_wrong_shapes_is_refused_before_the_compiled_code(small):
    import dataclasses

    from tracker.radiation import spectrum

    bad = dataclasses.replace(small, x=small.x[:, :2])
    with pytest.raises(ScenarioError, match="shape"):
        spectrum(bad, [[1.0, 0.0, 0.0]], [1e15])
