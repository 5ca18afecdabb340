"""Parameter scans (tracker.sweep): rows are compare() runs, executors agree, resume, failures, CLI.

Sources
- Plane wave: A. Di Piazza, Lett. Math. Phys. 83, 305 (2008), exact light-front solution (the
  closed form ``di_piazza_final_gamma`` of tests/test_radiation_reaction.py, reused here).
- Everything else checks bookkeeping against the engine itself (common practice, no source).
"""

import math
import threading
from pathlib import Path

import numpy as np
import pytest
from scipy import constants as sc

from builders import electron, scenario
from test_radiation_reaction import di_piazza_final_gamma
from tracker import Scenario, ScenarioError, compare, load_scenario, load_sweep, sweep
from tracker.cli import main
from tracker.scan import execute
from tracker.scan.point import RUNS, compute_point
from tracker.scan.spec import parse_values
from tracker.sweep import quantity_columns

BUNDLED = Path(__file__).resolve().parent.parent / "scenarios" / "laser_scan_a0_energy.toml"
C = sc.c


def small_collision(a0=10.0):
    """Head-on GeV-scale electron and a short sin^2 pulse: ~1e3 steps per run."""
    pulse = {"type": "plane-wave", "a0": a0, "wavelength": 0.8e-6, "direction": [0, 0, 1],
             "polarization_axis": [1, 0, 0], "envelope": "sin2", "duration": "8 fs",
             "peak_position": [0, 0, -8e-6]}
    return scenario([pulse], duration=50e-15, particle=electron(kinetic_energy="0.5 GeV", direction=[0, 0, -1]),
                    rr="landau-lifshitz", steps_per_period=40, save_every=20, pusher="higuera-cary")


def table(result, skip=("wall_time",)):
    return [{k: v for k, v in r.items() if k not in skip} for r in result.rows]


def same(a, b):
    """Equal rows, NaN equal to NaN (bit-for-bit otherwise)."""
    assert len(a) == len(b)
    for x, y in zip(a, b):
        assert x.keys() == y.keys()
        for k in x:
            if isinstance(x[k], float) and math.isnan(x[k]):
                assert isinstance(y[k], float) and math.isnan(y[k]), k
            else:
                assert x[k] == y[k], (k, x[k], y[k])


# ---------------------------------------------------------------------- values and keys
def test_value_text_ranges_lists_and_units():
    assert parse_values("5:50:10", "k") == [5.0, 10.0, 15.0, 20.0, 25.0, 30.0, 35.0, 40.0, 45.0, 50.0]
    assert parse_values("1:100:3:log", "k") == pytest.approx([1.0, 10.0, 100.0])
    assert parse_values("0.5 GeV,1 GeV, 2 GeV", "k") == ["0.5 GeV", "1 GeV", "2 GeV"]
    assert parse_values("0.5 GeV:1500 MeV:3", "k") == ["0.5 GeV", "1.0 GeV", "1.5 GeV"]
    assert parse_values("boris,vay,true,3", "k") == ["boris", "vay", True, 3]
    assert parse_values("[[0,0,1],[0,1,1]]", "k") == [[0, 0, 1], [0, 1, 1]]
    with pytest.raises(ScenarioError, match="same dimension"):
        parse_values("1 GeV:2 m:3", "particle.kinetic_energy")


def test_every_point_is_validated_before_anything_runs(monkeypatch):
    ran = []
    monkeypatch.setattr(execute, "compute_point", lambda *a, **k: ran.append(1))
    base = small_collision()
    with pytest.raises(ScenarioError) as bad_value:
        sweep(base, {"field[0].a0": [5, -5, 10], "run.pusher": ["boris", "vay"]})
    assert bad_value.value.key == "field[0].a0"
    assert "point 2 of 6" in str(bad_value.value) and "field[0].a0 = -5" in str(bad_value.value)
    with pytest.raises(ScenarioError) as bad_key:
        sweep(base, {"field[0].wavelenght": [1e-6]})
    assert bad_key.value.key == "field[0].wavelenght" and "wavelength" in str(bad_key.value)
    with pytest.raises(ScenarioError, match="there is no field\\[3\\]"):
        sweep(base, {"field[3].a0": [1]})
    with pytest.raises(ScenarioError, match="equal lengths"):
        sweep(base, {"field[0].a0": [1, 2], "run.pusher": ["vay"]}, grid=False)
    assert ran == []


def test_sweep_table_round_trips_through_toml():
    s = load_scenario(BUNDLED)
    assert s.sweep.grid and [k for k, _ in s.sweep.vary] == ["field[0].a0", "particle.kinetic_energy"]
    assert Scenario.from_toml(s.to_toml()) == s
    data = s.to_dict()
    data["sweep"]["vary"]["particle.nonsense"] = [1]
    with pytest.raises(ScenarioError, match="sweep.vary.particle.nonsense"):
        Scenario.from_dict(data)


# ---------------------------------------------------------------------- rows are compare()
def test_each_row_equals_compare_on_that_point_alone():
    base = small_collision()
    scan = sweep(base, {"field[0].a0": [5, 20], "particle.kinetic_energy": ["0.3 GeV", "600 MeV"],
                        "run.pusher": ["boris", "higuera-cary"]}, workers=2)
    assert len(scan) == 8 and scan.shape == (2, 2, 2)
    assert scan.status_counts() == {"completed": 8}
    for i, row in enumerate(scan.rows):
        alone = compare(scan.scenario(i))
        for run in RUNS:
            result = getattr(alone, run)
            s = result.summary()
            assert row[f"final_gamma_{run}"] == result.gamma[-1]
            assert row[f"energy_radiated_{run}"] == s["energy_radiated"]
            assert row[f"fraction_radiated_{run}"] == s["fraction_lost"]
            assert row[f"peak_power_{run}"] == s["peak_power"]
            assert row[f"peak_chi_{run}"] == s["peak_chi"]
            assert row[f"energy_balance_residual_{run}"] == s["energy_balance_residual"]
            assert row[f"warnings_{run}"] == ",".join(sorted({w["kind"] for w in result.warnings}))
    # the varied entries are stored in SI, as the point's scenario holds them
    assert scan.column("particle.kinetic_energy")[2] == pytest.approx(0.6e9 * sc.e, rel=1e-12)
    assert list(scan.column("run.pusher")[:2]) == ["boris", "higuera-cary"]


def test_a_point_may_be_a_beam():
    # a small sampled beam: rows take the beam's means (tracker.beam_result.BeamResult.summary)
    data = small_collision().to_dict(as_entered=True)
    data["beam"] = {**data.pop("particle"), "count": 4, "energy_spread": 0.01}
    scan = sweep(data, {"beam.energy_spread": [0.0, 0.02], "field[0].a0": [5.0, 10.0]}, grid=False, workers=1)
    assert scan.status_counts() == {"completed": 2}
    for i, row in enumerate(scan.rows):
        alone = compare(scan.scenario(i)).damped.summary()
        assert row["final_gamma_damped"] == alone["mean_gamma"][1]
        assert row["energy_radiated_damped"] == alone["energy_radiated"]
    with pytest.raises(ScenarioError, match="particle.gamma: the scenario has no \\[particle\\] table"):
        sweep(data, {"particle.gamma": [10.0]})


def test_zip_pairs_the_lists():
    scan = sweep(small_collision(), {"field[0].a0": [5, 10, 20], "particle.kinetic_energy": [2e-11, 4e-11, 8e-11]},
                 grid=False, workers=1)
    assert len(scan) == 3 and scan.shape == (3,)
    assert list(scan.column("field[0].a0")) == [5.0, 10.0, 20.0]
    assert list(scan.column("particle.kinetic_energy")) == [2e-11, 4e-11, 8e-11]


def test_dask_local_cluster_gives_the_same_table_as_local_threads():
    from distributed import Client, LocalCluster

    base = small_collision()
    vary = {"field[0].a0": [5, 15, 30], "particle.kinetic_energy": ["0.3 GeV", "0.6 GeV"]}
    local = sweep(base, vary, workers=2)
    with LocalCluster(n_workers=2, threads_per_worker=1, processes=False, dashboard_address=None) as cluster, \
            Client(cluster) as client:
        remote = sweep(base, vary, client=client, keep="results")
    same(table(local), table(remote))
    # kept runs travelled back as plain data and rebuild the full Comparison
    pair = remote.point(4)
    assert pair.damped.gamma[-1] == remote.rows[4]["final_gamma_damped"]
    assert pair.undamped.scenario.run.radiation_reaction == "none"


# ---------------------------------------------------------------------- physics
def test_a0_scan_of_a_head_on_collision_matches_di_piazza_at_every_point():
    # the pulse of tests/test_radiation_reaction.py: a = a0 sin^2(phi/2N) sin(phi), N = 10 cycles
    gamma0, cycles, wavelength = 1000.0, 10, 0.8e-6
    full_length = cycles * wavelength / C
    fwhm = full_length * 2 / math.pi * math.acos(2 ** -0.25)
    pulse = {"type": "plane-wave", "a0": 10.0, "wavelength": wavelength, "direction": [0, 0, 1],
             "polarization_axis": [1, 0, 0], "envelope": "sin2", "duration": fwhm,
             "peak_position": [0, 0, -C * full_length / 2], "phase": -math.pi / 2}
    base = scenario([pulse], duration=0.6 * full_length, particle=electron(gamma=gamma0, direction=[0, 0, -1]),
                    rr="landau-lifshitz", steps_per_period=200, save_every=100)
    a0_values = [2.0, 10.0, 25.0, 50.0]
    scan = sweep(base, {"field[0].a0": a0_values})
    for a0, final in zip(a0_values, scan.column("final_gamma_damped")):
        # Di Piazza (2008) light-front solution; measured 2e-7 at 200 steps per seen period
        assert final == pytest.approx(di_piazza_final_gamma(gamma0, a0, cycles, wavelength), rel=2e-6)
    # without the reaction force gamma returns to gamma0 after the pulse (Lawson-Woodward, no net gain)
    assert scan.column("final_gamma_undamped") == pytest.approx(gamma0, rel=1e-6)


# ---------------------------------------------------------------------- failures, files, resume
def test_a_failing_point_is_retried_once_and_recorded_with_its_message(monkeypatch):
    calls = []

    def flaky(scenario, keep=False, cancel=None):
        calls.append(scenario.fields[0].params["a0"])
        if calls[-1] == 15.0:
            raise RuntimeError("kernel exploded on purpose")
        return compute_point(scenario, keep, cancel)

    monkeypatch.setattr(execute, "compute_point", flaky)
    scan = sweep(small_collision(), {"field[0].a0": [5.0, 15.0, 25.0]}, workers=1)
    assert [r["status"] for r in scan.rows] == ["completed", "failed", "completed"]
    assert "kernel exploded on purpose" in scan.rows[1]["error"] and "failed 2 times" in scan.rows[1]["error"]
    assert math.isnan(scan.rows[1]["energy_radiated_damped"])
    assert calls.count(15.0) == 2 and len(calls) == 4


def test_files_round_trip_and_kept_runs_load_from_the_scan_file(tmp_path):
    out = tmp_path / "scan.h5"
    scan = sweep(small_collision(), {"field[0].a0": [5.0, 20.0], "run.pusher": ["vay", "boris"]}, grid=False,
                 keep="results", output=out)
    loaded = load_sweep(out)
    same(table(scan, skip=()), table(loaded, skip=()))
    stored = loaded.point(1)
    rerun = compare(loaded.scenario(1))
    assert np.array_equal(stored.damped.gamma, rerun.damped.gamma)
    assert stored.damped.scenario == rerun.damped.scenario
    text = scan.to_csv(tmp_path / "scan.csv").read_text()
    assert "energy_radiated_damped [J]" in text and text.count("\n") == 4
    copy = scan.to_hdf5(tmp_path / "copy.h5")
    same(table(load_sweep(copy), skip=()), table(scan, skip=()))


class Killed(BaseException):
    """Stands for the process dying: nothing after it runs."""


def test_a_scan_killed_midway_resumes_computing_only_the_missing_points(tmp_path, monkeypatch):
    out = tmp_path / "scan.h5"
    vary = {"field[0].a0": [5.0, 10.0, 15.0, 20.0, 25.0, 30.0]}
    calls = []

    def counted(text, keep=False, cancel=None):
        calls.append(text)
        return compute_point(text, keep, cancel)

    monkeypatch.setattr(execute, "compute_point", counted)

    def die_after_two(done, total):
        if done == 2:
            raise Killed()

    with pytest.raises(Killed):
        sweep(small_collision(), vary, output=out, workers=1, progress=die_after_two)
    partial = load_sweep(out)                      # the file on disk is a readable, partial scan
    assert partial.status_counts() == {"completed": 2, "not run": 4}
    calls.clear()
    resumed = sweep(small_collision(), vary, output=out, workers=1)
    assert resumed.reused == 2 and resumed.computed == 4 and len(calls) == 4
    assert resumed.status_counts() == {"completed": 6}
    again = sweep(small_collision(), vary, output=out, workers=1)
    assert again.reused == 6 and again.computed == 0 and len(calls) == 4


def test_cancel_keeps_finished_points_and_marks_the_rest(tmp_path, monkeypatch):
    stop = threading.Event()

    def first_then_cancel(text, keep=False, cancel=None):
        out = compute_point(text, keep, cancel)
        stop.set()                                 # as a Ctrl-C during the first point would
        return out

    monkeypatch.setattr(execute, "compute_point", first_then_cancel)
    scan = sweep(small_collision(), {"field[0].a0": [5.0, 10.0, 15.0]}, workers=1, output=tmp_path / "s.h5",
                 cancel=stop)
    assert [r["status"] for r in scan.rows] == ["completed", "cancelled", "cancelled"]
    assert load_sweep(tmp_path / "s.h5").status_counts() == {"completed": 1, "not run": 2}


# ---------------------------------------------------------------------- command line
def test_cli_bad_vary_key_exits_2_naming_it(capsys):
    code = main(["sweep", str(BUNDLED), "--vary", "field[0].amplitude=1,2"])
    assert code == 2
    assert "field[0].amplitude" in capsys.readouterr().err


def test_cli_runs_the_bundled_scan_from_its_sweep_table_and_resumes(tmp_path, capsys):
    out = tmp_path / "scan.h5"
    assert main(["sweep", str(BUNDLED), "-o", str(out), "--workers", "2"]) == 0
    text = capsys.readouterr().out
    assert "24 points: 24 completed; reused 0" in text and "radiated (damped)" in text
    assert main(["sweep", str(BUNDLED), "-o", str(out)]) == 0
    assert "reused 24 from an earlier run, computed 0" in capsys.readouterr().out
    scan = load_sweep(out)
    # more laser or more electron energy, more radiated (classical loss ~ a0^2 gamma^2 while the loss is small)
    grid = scan.on_grid(scan.quantity("energy_radiated", "damped"))
    assert np.all(np.diff(grid, axis=0) > 0) and np.all(np.diff(grid, axis=1) > 0)
    # radiation reaction lowers what is radiated: the damped particle has less energy to lose
    assert np.all(scan.quantity("energy_radiated", "ratio") < 1.0)


def test_cli_vary_options_and_zip(tmp_path, capsys):
    code = main(["sweep", str(BUNDLED), "--vary", "field[0].a0=5,10", "--vary",
                 "particle.kinetic_energy=0.25 GeV,0.5 GeV", "--zip", "--csv", str(tmp_path / "t.csv")])
    assert code == 0
    assert "2 points: 2 completed" in capsys.readouterr().out
    assert (tmp_path / "t.csv").read_text().count("\n") == 4   # comment, header, 2 points


def test_cli_scheduler_option_runs_the_points_on_that_cluster(tmp_path, capsys):
    from distributed import LocalCluster

    with LocalCluster(n_workers=1, threads_per_worker=1, processes=False, dashboard_address=None) as cluster:
        code = main(["sweep", str(BUNDLED), "--vary", "field[0].a0=5,10", "--scheduler", cluster.scheduler_address,
                     "-o", str(tmp_path / "remote.h5")])
    assert code == 0
    assert "2 points: 2 completed" in capsys.readouterr().out
    local = sweep(load_scenario(BUNDLED), {"field[0].a0": [5, 10]})
    same(table(load_sweep(tmp_path / "remote.h5")), table(local))


def test_quantity_columns_cover_both_runs():
    assert len(quantity_columns()) == 12 and "peak_chi_undamped" in quantity_columns()
