"""``radorbit run --models``: any set of radiation-reaction models side by side from the command line.

The CLI only builds the Scenario and calls ``tracker.compare(scenario, models=...)``: its files must
be exactly what that call returns (same seed, same photons). The physics of each model is tested in
test_radiation_reaction.py, test_quantum.py and test_stochastic*.py.
"""

import math

import numpy as np
import pytest

from tracker import Scenario, compare, load_result
from tracker import constants as k
from tracker.beam_result import load_beam_result
from tracker.cli import main

GAMMA0, CHI0 = 1000.0, 0.1


def scenario_text(beam=False):
    """An electron (or a 40-electron beam) at gamma = 1000 across a uniform B giving chi = 0.1."""
    b = CHI0 * k.E_schwinger / (GAMMA0 * math.sqrt(1 - GAMMA0**-2) * k.c)
    run = '[run]\nduration = "2 fs"\nsteps_per_period = 400\nseed = 4\n' + ('save = "all"\n' if beam else "")
    table = "[beam]\ncount = 40\n" if beam else "[particle]\n"
    who = table + 'species = "electron"\ngamma = 1000\ndirection = [1, 0, 0]\n'
    return f'{run}\n{who}\n[[field]]\ntype = "uniform"\nB = [0, 0, {b!r}]\n'


@pytest.fixture
def scenario_file(tmp_path):
    path = tmp_path / "chi01.toml"
    path.write_text(scenario_text(), encoding="utf-8")
    return path


def test_models_run_side_by_side_one_file_each(scenario_file, tmp_path, capsys):
    out = tmp_path / "run.h5"
    assert main(["run", str(scenario_file), "--models", "quantum-stochastic,none,landau-lifshitz-quantum",
                 "-o", str(out)]) == 0
    text = capsys.readouterr().out
    header = next(line for line in text.splitlines() if "quantum-stochastic" in line and "none" in line)
    # columns in the engine's model order, whatever the order typed
    assert header.index("none") < header.index("landau-lifshitz-quantum") < header.index("quantum-stochastic")
    expected = compare(Scenario.from_toml(scenario_text()),
                       models=["none", "landau-lifshitz-quantum", "quantum-stochastic"])
    for model in ("none", "landau-lifshitz-quantum", "quantum-stochastic"):
        saved = load_result(tmp_path / f"run-{model}.h5")
        assert saved.scenario.run.radiation_reaction == model
        np.testing.assert_array_equal(saved.gamma, expected[model].gamma)
    photons = load_result(tmp_path / "run-quantum-stochastic.h5").photons
    np.testing.assert_array_equal(photons.energy, expected["quantum-stochastic"].photons.energy)
    assert f"photons (quantum-stochastic): {len(photons):,} recorded" in text
    assert not (tmp_path / "run.h5").exists()


@pytest.mark.parametrize("argv", [["--models", "none,drag"], ["--models", ","], ["--models", "none", "--compare"]])
def test_bad_model_lists_exit_2_naming_the_option(scenario_file, capsys, argv):
    assert main(["run", str(scenario_file), *argv]) == 2
    assert "error: --models:" in capsys.readouterr().err


def test_a_beam_runs_the_listed_models_too(tmp_path, capsys):
    path = tmp_path / "beam.toml"
    path.write_text(scenario_text(beam=True), encoding="utf-8")
    assert main(["run", str(path), "--models", "landau-lifshitz,quantum-stochastic", "-o", str(tmp_path / "b.h5")]) == 0
    assert "photons (quantum-stochastic):" in capsys.readouterr().out
    for model in ("landau-lifshitz", "quantum-stochastic"):
        saved = load_beam_result(tmp_path / f"b-{model}.h5")
        assert saved.scenario.run.radiation_reaction == model and saved.count == 40


def test_the_stochastic_models_photons_count_once_in_the_memory_of_a_comparison():
    # the photon table is bounded by MAX_PHOTONS rows of BYTES_PER_PHOTON; a comparison counts its
    # peak only when the stochastic model is among the runs (common practice, no source: an upper bound)
    from tracker import plan as planning

    scenario = Scenario.from_toml(scenario_text())
    classical = scenario.plan()
    stochastic = scenario.with_run(radiation_reaction="quantum-stochastic").plan()
    assert classical.photon_bytes == 0 and stochastic.photon_bytes == planning.PHOTON_PEAK_BYTES
    assert stochastic.peak_bytes == classical.peak_bytes + planning.PHOTON_PEAK_BYTES
    without = planning.comparison_memory(scenario, classical, 3, ["none", "landau-lifshitz", "landau-lifshitz-quantum"])
    with_photons = planning.comparison_memory(scenario, classical, 3, ["none", "landau-lifshitz", "quantum-stochastic"])
    assert with_photons[1] - without[1] == planning.PHOTON_PEAK_BYTES
    assert with_photons[0] - without[0] == planning.PHOTON_TABLE_BYTES
    # the plan of a stochastic scenario gives the same comparison as naming the model
    assert planning.comparison_memory(scenario, stochastic, 3, ["none", "landau-lifshitz", "quantum-stochastic"]) \
        == with_photons
