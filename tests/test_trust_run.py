"""Runs that are wrong never pass as completed, and what the summary and warnings say
cannot be misread (issues "trust at first sight" and "nothing wrong passes as completed")."""

import dataclasses
import math
import re
import tomllib
from pathlib import Path

import numpy as np
import pytest

from builders import electron, scenario
from tracker import Scenario, ScenarioError, compare, load_scenario, track
from tracker.cli import EXIT_NOT_COMPLETE, comparison_table, main, summary_rows, until
from tracker.validity import ENERGY_BALANCE_LIMIT, MIN_STEPS_PER_PERIOD, check_result

ROOT = Path(__file__).resolve().parent.parent
SCENARIOS = ROOT / "scenarios"


def laser_with(**run):
    data = tomllib.loads((SCENARIOS / "laser_headon_gev.toml").read_text(encoding="utf-8"))
    data["run"].pop("steps_per_period")
    data["run"].update(run)
    return Scenario.from_dict(data)


# ---------------------------------------------------------------------- under-resolved plans
@pytest.mark.parametrize("dt", ["120 fs", "20 fs"])
def test_a_step_longer_than_the_laser_period_is_refused(dt):
    # head-on the electron meets the 0.8 um wave at omega (1 + beta) ~ 2 omega: period 1.33 fs
    with pytest.raises(ScenarioError) as info:
        laser_with(dt=dt)
    assert info.value.key == "run.dt"
    assert "laser period seen by the particle" in str(info.value) and "lower run.dt" in str(info.value)


def test_an_under_resolved_plan_warns_and_the_run_carries_it():
    s = laser_with(dt="0.25 fs")   # ~5.3 steps per seen period: above the floor of 4, below 18
    plan = s.plan()
    assert 4 < plan.steps_per_period < MIN_STEPS_PER_PERIOD
    (note,) = plan.warnings
    assert note["kind"] == "resolution" and "planned" in note["message"]
    result = track(s)
    assert any(w["kind"] == "resolution" and "steps per period" in w["message"] for w in result.warnings)


def test_the_plan_warning_is_carried_unless_the_saved_states_already_show_it():
    from tracker.validity import plan_warnings

    result = track(laser_with(dt="0.25 fs", save_every=1000))
    (carried,) = plan_warnings(result, [])
    assert carried["message"].startswith("planned ") and "laser period" in carried["message"]
    shown = [w for w in result.warnings if w["kind"] == "resolution"]
    assert shown and plan_warnings(result, shown) == []


# ---------------------------------------------------------------------- wrong runs are not complete
def test_a_failed_energy_balance_is_a_warning_and_not_complete():
    good = track(scenario([{"type": "uniform", "B": [0, 0, 1.0]}], duration=1e-9, rr="landau-lifshitz",
                          particle=electron(gamma=100.0, direction=[1, 0, 0])))
    assert good.complete and good.status == "completed"
    assert abs(good.energy_balance_residual()) < 1e-6 * ENERGY_BALANCE_LIMIT
    # the kinetic energy "rises" with no field work: as the gamma = 9.5e79 run of the issue did
    broken = dataclasses.replace(good, gamma=good.gamma * np.linspace(1.0, 3.0, len(good.gamma)), warnings=[])
    broken.warnings = check_result(broken)
    (w,) = [w for w in broken.warnings if w["kind"] == "energy-balance"]
    assert "the energy balance fails" in w["message"]
    assert not broken.complete and broken.status == "failed check: energy-balance"


def test_a_radiation_kick_too_large_for_a_step_stops_and_exits_non_zero(tmp_path, capsys):
    # gamma = 1e9 in 1 T at the default 100 steps per gyration (the run reached gamma = 9.5e79)
    path = tmp_path / "gev9.toml"
    path.write_text('[run]\nduration = "10 ms"\n[particle]\nspecies = "electron"\ngamma = 1e9\n'
                    'direction = [1, 0, 0]\n[[field]]\ntype = "uniform"\nB = [0, 0, 1]\n')
    assert main(["run", str(path)]) == EXIT_NOT_COMPLETE
    out, err = capsys.readouterr()
    assert "completed" not in out.split("status", 1)[1].splitlines()[0]
    assert "did not complete as planned" in err
    result = track(load_scenario(path))
    assert not result.complete and np.all(result.gamma <= 1e9 * (1 + 1e-9))


def test_an_adaptive_run_that_hits_max_steps_exits_non_zero(tmp_path, capsys):
    # the plan estimates 400 steps at the first step; dt_max forces ten times more
    period = 2 * math.pi * 10 * 9.1093837015e-31 / (1.602176634e-19 * 1.0)
    path = tmp_path / "adaptive.toml"
    path.write_text(f'[run]\nduration = {20 * period!r}\nsteps_per_period = 20\nadaptive = true\n'
                    f'dt_max = {period / 200!r}\nmax_steps = 800\nradiation_reaction = "none"\n'
                    '[particle]\nspecies = "electron"\ngamma = 10\ndirection = [1, 0, 0]\n'
                    '[[field]]\ntype = "uniform"\nB = [0, 0, 1]\n')
    assert main(["run", str(path)]) == EXIT_NOT_COMPLETE
    assert "max_steps" in capsys.readouterr().out


# ---------------------------------------------------------------------- honest warnings
def test_damping_below_double_precision_is_flagged_on_the_radiation_belt_scenario():
    pair = compare(load_scenario(SCENARIOS / "radiation_belt_dipole.toml"))
    (w,) = [w for w in pair.damped.warnings if w["kind"] == "precision"]
    assert "cannot show the damping" in w["message"] and "computed correctly" in w["message"]
    assert not any(w["kind"] == "precision" for w in pair.undamped.warnings)
    assert pair.damped.complete   # a precision limit, not a wrong run


def test_check_and_run_agree_on_the_radiation_belt_resolution(capsys):
    # check predicts the gyration at the mirror points from the conserved magnetic moment
    # (1/sin^2 30 deg = 4), the run measures it along the orbit: both ask for the same step
    assert main(["check", str(SCENARIOS / "radiation_belt_dipole.toml")]) == 0
    advice = capsys.readouterr().out.split("recommended resolution", 1)[1]
    want = re.search(r"steps_per_period to >= (\d+)", advice).group(1)
    result = track(load_scenario(SCENARIOS / "radiation_belt_dipole.toml"))
    (w,) = [w for w in result.warnings if w["kind"] == "resolution"]
    assert re.search(r"steps_per_period to >= (\d+)", w["message"]).group(1) == want == "73"


def test_resolution_warning_of_an_undamped_run_does_not_speak_of_damping():
    s = scenario([{"type": "uniform", "B": [0, 0, 1.0]}], duration=3e-10, rr="none",
                 particle=electron(gamma=3.0, direction=[1, 0, 0]), steps_per_period=5)
    (w,) = [w for w in track(s).warnings if w["kind"] == "resolution" and "steps per period" in w["message"]]
    assert "damping" not in w["message"] and "out of phase" in w["message"]


def test_numbers_in_warnings_are_short():
    s = scenario([{"type": "uniform", "B": [0, 0, 1.0]}], duration=1e-9, rr="landau-lifshitz",
                 particle=electron(gamma=1e9, direction=[1, 0, 0]))
    result = track(s)
    assert result.warnings
    for w in result.warnings:
        assert not re.search(r"\d{13,}", w["message"]), w["message"]


# ---------------------------------------------------------------------- the summary table
def proton_run():
    return scenario([{"type": "uniform", "B": [0, 0, 1.0]}], duration=1e-9, rr="landau-lifshitz",
                    particle={"species": "proton", "kinetic_energy": "100 keV", "direction": [1, 0, 0]})


def test_summary_labels_total_and_kinetic_energy_and_the_radiated_fraction():
    rows = dict(summary_rows(track(proton_run())))
    assert rows["total energy γmc² (final)"].endswith("MeV") and rows["total energy γmc² (final)"].startswith("938.3")
    assert rows["kinetic energy (start)"] == "0.1 MeV" and rows["kinetic energy (final)"] == "0.1 MeV"
    assert "fraction lost" not in rows and "radiated / initial kinetic energy" in rows
    assert rows["end time"] == "1 ns" and rows["steps taken"].replace(",", "").isdigit()
    assert rows["status"] == "completed"


def test_one_energy_prefix_per_table_and_the_undamped_loss_is_marked_as_not_removed(capsys):
    pair = compare(proton_run())
    comparison_table({"damped": pair.damped, "undamped": pair.undamped})
    out = capsys.readouterr().out
    energy_lines = [line for line in out.splitlines() if "energy" in line and "residual" not in line
                    and "/" not in line]
    units = {u for line in energy_lines for u in re.findall(r"\b([kMGT]?eV|meV)\b", line)}
    assert units == {"MeV"}, out
    assert "would radiate; damping off, not removed" in out


def test_a_comparison_stopped_early_is_compared_at_the_common_end_time(capsys):
    pair = compare(load_scenario(SCENARIOS / "mirror_trap.toml"))
    t_stop = 0.4 * pair.damped.t[-1]
    stopped = until(pair.damped, t_stop)
    stopped.meta.update(stop_reason="cancelled", complete=False)
    shown = comparison_table({"damped": stopped, "undamped": pair.undamped})
    out = capsys.readouterr().out
    assert out.startswith("NOTE: the runs are not comparable as they stand")
    assert "damped ended at" in out and "(cancelled)" in out and "common end time" in out
    assert shown["undamped"].t[-1] == pytest.approx(stopped.t[-1])
    rows = [line for line in out.splitlines() if line.startswith("end time")]
    assert len(set(rows[0].split()[2:])) == 2 and rows[0].split()[2] == rows[0].split()[4]
