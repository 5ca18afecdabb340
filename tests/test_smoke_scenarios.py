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
