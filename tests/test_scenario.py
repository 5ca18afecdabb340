"""Scenario schema: validation messages name the key, TOML round trip, plan limits.

Checks here are about the input contract (common practice, no source), except the
unit conversions, which are checked against CODATA values from scipy.constants.
"""

import math
from pathlib import Path

import numpy as np
import pytest
from scipy import constants as sc

from tracker import Scenario, ScenarioError, load_scenario
from tracker.cli import main

SCENARIOS = sorted((Path(__file__).resolve().parent.parent / "scenarios").glob("*.toml"))

VALID = """
[run]
duration = "1 ns"
steps_per_period = 50

[particle]
species = "electron"
kinetic_energy = "2 GeV"
direction = [0, 3, 4]

[[field]]
type = "uniform"
B = ["0 T", "0 T", "1.5 T"]
"""


def with_line(section_line, new_line):
    return VALID.replace(section_line, section_line + "\n" + new_line)


@pytest.mark.parametrize("path", SCENARIOS, ids=lambda p: p.stem)
def test_bundled_scenarios_round_trip_exactly_through_toml(path):
    s = load_scenario(path)
    again = Scenario.from_toml(s.to_toml())
    assert again == s
    assert again.to_toml() == s.to_toml()


def test_units_are_parsed_to_si_and_direction_normalised():
    s = Scenario.from_toml(VALID)
    assert s.run.duration == pytest.approx(1e-9)
    assert s.fields[0].params["B"] == (0.0, 0.0, 1.5)
    assert s.particle.direction == pytest.approx((0.0, 0.6, 0.8))
    gamma = 1 + 2e9 * sc.e / (sc.m_e * sc.c**2)
    assert s.particle.gamma == pytest.approx(gamma, rel=1e-12)
    assert np.linalg.norm(s.particle.u) == pytest.approx(math.sqrt(gamma**2 - 1), rel=1e-12)


@pytest.mark.parametrize("text,key,fragment", [
    (VALID.replace('duration = "1 ns"\n', ""), "run.duration", "is required"),
    (with_line("[run]", "colour = 3"), "run.colour", "unknown key"),
    (with_line("[run]", "").replace('duration = "1 ns"', "duration = nan"), "run.duration", "finite"),
    (VALID.replace('species = "electron"', 'mass = -1.0\ncharge = -1.6e-19'), "particle.mass", "positive"),
    (VALID.replace("direction = [0, 3, 4]", "direction = [0, 0, 0]"), "particle.direction", "non-zero"),
    (VALID.replace('duration = "1 ns"', 'duration = "3 parsec"'), "run.duration", "wrong dimension"),
    (VALID.replace('type = "uniform"', 'type = "warp-drive"'), "field[0].type", "must be one of"),
    (VALID.replace('B = ["0 T", "0 T", "1.5 T"]', 'B = [0, 1]'), "field[0].B", "three values"),
    (VALID.replace('kinetic_energy = "2 GeV"', 'kinetic_energy = "2 GeV"\ngamma = 3'), "particle.kinetic_energy",
     "exactly one"),
    (VALID.replace("steps_per_period = 50", "steps_per_period = 50\ndt = 1e-12"), "run.dt", "not both"),
], ids=["missing-duration", "unknown-key", "nan", "negative-mass", "zero-direction", "wrong-dimension",
        "unknown-field", "short-vector", "two-momenta", "dt-and-steps"])
def test_bad_input_raises_scenario_error_naming_the_key(text, key, fragment):
    with pytest.raises(ScenarioError) as info:
        Scenario.from_toml(text)
    assert info.value.key == key
    assert str(info.value).startswith(key + ":")
    assert fragment in str(info.value)


def test_scenario_error_is_a_value_error():
    assert issubclass(ScenarioError, ValueError)


def test_plane_wave_needs_exactly_one_amplitude():
    text = VALID.replace('type = "uniform"\nB = ["0 T", "0 T", "1.5 T"]',
                         'type = "plane-wave"\nwavelength = "0.8 um"\nduration = "30 fs"')
    with pytest.raises(ScenarioError, match=r"field\[0\]\.a0: give exactly one of a0, E0 and intensity"):
        Scenario.from_toml(text)


def test_undulator_length_must_hold_whole_periods():
    text = VALID.replace('type = "uniform"\nB = ["0 T", "0 T", "1.5 T"]',
                         'type = "undulator"\nB0 = "1 T"\nperiod = "3 cm"\nlength = "1 m"')
    with pytest.raises(ScenarioError, match=r"field\[0\]\.length: must be a whole number of periods"):
        Scenario.from_toml(text)


def test_oversized_plan_is_refused_with_its_memory_need():
    text = VALID.replace('duration = "1 ns"', 'duration = "1 s"').replace("steps_per_period = 50",
                                                                         "steps_per_period = 50\nmax_steps = 1000")
    with pytest.raises(ScenarioError) as info:
        Scenario.from_toml(text)
    assert info.value.key == "run.max_steps"
    assert "GiB" in str(info.value) and "steps" in str(info.value)


def test_plan_resolves_relativistic_gyration():
    s = Scenario.from_toml(VALID)
    plan = s.plan()
    gamma = s.particle.gamma
    period = 2 * math.pi * gamma * sc.m_e / (sc.e * 1.5)     # relativistic gyro-period (Chen ch. 2)
    assert plan.period == pytest.approx(period, rel=1e-12)
    assert plan.dt <= period / 50 and plan.steps == math.ceil(1e-9 / (period / 50))


def test_cli_returns_2_with_one_clear_message(tmp_path, capsys):
    bad = tmp_path / "bad.toml"
    bad.write_text(VALID.replace('duration = "1 ns"\n', ""))
    assert main(["run", str(bad)]) == 2
    err = capsys.readouterr().err
    assert err.strip() == 'radorbit: error: run.duration: is required (e.g. duration = "2 ns").'
    assert "Traceback" not in err
    assert main(["check", str(bad)]) == 2


def test_cli_check_prints_plan(tmp_path, capsys):
    good = tmp_path / "good.toml"
    good.write_text(VALID)
    assert main(["check", str(good)]) == 0
    out = capsys.readouterr().out
    for label in ("dt", "steps", "memory estimate", "resolution", "scenario is valid"):
        assert label in out


def test_ions_and_custom_species():
    ion = VALID.replace('species = "electron"', 'species = "ion"\ncharge_state = 2\nmass_number = 4')
    s = Scenario.from_toml(ion)
    assert s.particle.charge == pytest.approx(2 * sc.e)
    assert s.particle.mass == pytest.approx(4 * sc.physical_constants["atomic mass constant"][0] - 2 * sc.m_e)
    custom = VALID.replace('species = "electron"', 'mass = "1 GeV/c**2"\ncharge = "1 e"')
    s = Scenario.from_toml(custom)
    assert s.particle.mass == pytest.approx(1e9 * sc.e / sc.c**2, rel=1e-9)
