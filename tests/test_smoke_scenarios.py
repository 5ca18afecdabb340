"""Every bundled scenario loads, validates and runs through the CLI (common practice, no source)."""

from pathlib import Path

import pytest

from tracker.cli import main

SCENARIOS = sorted((Path(__file__).resolve().parent.parent / "scenarios").glob("*.toml"))


def test_there_are_at_least_five_bundled_scenarios():
    assert len(SCENARIOS) >= 5


@pytest.mark.parametrize("path", SCENARIOS, ids=lambda p: p.stem)
def test_cli_run_succeeds_on_bundled_scenario(path, tmp_path, capsys):
    out = tmp_path / "result.h5"
    assert main(["run", str(path), "-o", str(out)]) == 0
    text = capsys.readouterr().out
    assert "energy radiated" in text and "completed" in text
    assert out.exists()


@pytest.mark.parametrize("path", SCENARIOS, ids=lambda p: p.stem)
def test_cli_check_succeeds_on_bundled_scenario(path, capsys):
    assert main(["check", str(path)]) == 0
    assert "scenario is valid" in capsys.readouterr().out


def test_a_bundled_beam_scenario_runs_as_a_beam(tmp_path, capsys):
    from tracker import load_result
    from tracker.beam_result import BeamResult

    path = next(p for p in SCENARIOS if p.stem == "laser_bunch_collision")
    assert main(["check", str(path)]) == 0
    assert "beam.count = 1,000 and run.save = 'statistics'" in capsys.readouterr().out
    out = tmp_path / "bunch.h5"
    assert main(["run", str(path), "-o", str(out)]) == 0
    text = capsys.readouterr().out
    assert "rms gamma spread" in text and "emittance x" in text and "particle-steps/s" in text
    result = load_result(out)
    assert isinstance(result, BeamResult) and not result.has_particles and result.count == 1000
    assert result.stats["mean_gamma"][-1] < result.stats["mean_gamma"][0]     # the pulse cools the bunch
