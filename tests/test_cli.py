"""The command line keeps results when a run is interrupted or a file cannot be written
(common practice, no source)."""

import os
import signal
from pathlib import Path

from tracker.cli import _InterruptToCancel, main

MIRROR = str(Path(__file__).resolve().parent.parent / "scenarios" / "mirror_trap.toml")


def test_first_ctrl_c_asks_the_run_to_stop_instead_of_killing_it():
    with _InterruptToCancel() as cancel:
        os.kill(os.getpid(), signal.SIGINT)
        assert cancel.is_set()
    assert signal.getsignal(signal.SIGINT) is signal.default_int_handler


def test_unwritable_output_is_kept_in_the_temp_folder(tmp_path, monkeypatch, capsys):
    import tempfile

    from tracker import load_result

    monkeypatch.setattr(tempfile, "tempdir", str(tmp_path))
    blocked = tmp_path / "not-a-folder"
    blocked.write_text("a file where a folder should be")
    code = main(["run", MIRROR, "-o", str(blocked / "out.h5")])
    assert code == 1
    err = capsys.readouterr().err
    assert "cannot write" in err and "the result is kept in" in err
    rescued = err.split("the result is kept in ")[1].strip()
    assert load_result(rescued).complete


def test_run_settings_can_be_overridden_on_the_command_line(tmp_path, capsys):
    from tracker import load_result

    out = tmp_path / "vay.h5"
    assert main(["run", MIRROR, "--pusher", "vay", "--radiation-reaction", "landau-lifshitz-quantum",
                 "-o", str(out)]) == 0
    result = load_result(out)
    assert result.scenario.run.pusher == "vay"
    assert result.scenario.run.radiation_reaction == "landau-lifshitz-quantum"
    assert "landau-lifshitz-quantum" in capsys.readouterr().out
