"""Beams through the command line, their plan and memory, compare, validity counts and snapshots.

Physics here is limited to what the single-particle checks already cover (their sources are in
tracker/validity.py); the rest is bookkeeping checked against independent recomputation
(common practice, no source).
"""

import math

import numpy as np
import pytest
from scipy import constants as sc

from tracker import Scenario, ScenarioError, compare, load_result, load_scenario, track
from tracker.beam_result import BeamResult
from tracker.cli import main
from tracker.validity import check_result

B_TESLA = 5000.0


def gyration_period(gamma):
    """2 pi gamma m/(e B): the relativistic gyration period in a uniform B (Jackson sec. 12.2)."""
    return 2 * math.pi * gamma * sc.m_e / (sc.e * B_TESLA)


BEAM_TOML = """title = "test beam in a uniform field"

[run]
duration = {duration!r}
steps_per_period = {spp}
save_every = 10
save = "{save}"
{extra}

[beam]
species = "electron"
count = {count}
seed = 4
gamma = 2000.0
direction = [1, 0, 0]
energy_spread = {spread}
size = ["1 um", "1 um", "1 um"]

[[field]]
type = "uniform"
B = [0, 0, {b}]
"""


def beam_file(tmp_path, name="beam.toml", save="all", count=12, spp=30, periods=4.0, extra="", spread=0.2):
    path = tmp_path / name
    path.write_text(BEAM_TOML.format(duration=periods * gyration_period(2000.0), spp=spp, save=save, extra=extra,
                                     count=count, b=B_TESLA, spread=spread))
    return path


def test_check_on_a_beam_shows_count_save_memory_and_the_centroid_regime(tmp_path, capsys):
    assert main(["check", str(beam_file(tmp_path, save="statistics", count=300))]) == 0
    out = capsys.readouterr().out
    assert "electron x 300, sampled" in out
    assert "beam.count = 300 and run.save = 'statistics'" in out and "peak" in out
    assert "(centroid)" in out and "scenario is valid" in out


def test_run_and_compare_on_a_beam_print_the_summary_and_write_beam_results(tmp_path, capsys):
    path = beam_file(tmp_path)
    out = tmp_path / "run.h5"
    assert main(["run", str(path), "-o", str(out)]) == 0
    text = capsys.readouterr().out
    for label in ("particles", "lost", "mean gamma", "rms gamma spread", "emittance x", "energy radiated",
                  "peak chi", "particle-steps/s", "completed"):
        assert label in text, label
    back = load_result(out)
    assert isinstance(back, BeamResult) and back.x.shape[1:] == (12, 3)
    assert back.complete and back.summary()["energy_radiated"] > 0
    # particle-steps per second: every particle makes the planned steps
    plan = back.scenario.plan()
    assert back.meta["steps"] == 12 * plan.steps
    assert back.summary()["particle_steps_per_second"] == pytest.approx(12 * plan.steps / back.meta["wall_time"])

    assert main(["run", str(path), "--compare", "-o", str(tmp_path / "pair.csv")]) == 0
    text = capsys.readouterr().out
    assert "damped" in text and "undamped" in text
    header = [line for line in (tmp_path / "pair-undamped.csv").read_text().splitlines() if not line.startswith("#")]
    assert header[0].startswith("t [s],mean_gamma [1]") and len(header) == len(back.t) + 1


def test_compare_on_a_beam_starts_both_runs_from_the_same_particles(tmp_path):
    scenario = load_scenario(beam_file(tmp_path, count=20, periods=1.0))
    pair = compare(scenario)
    x0, u0, w0 = scenario.initial_particles()
    for run in (pair.damped, pair.undamped):
        x, u, w = run.scenario.initial_particles()
        assert np.array_equal(x, x0) and np.array_equal(u, u0) and np.array_equal(w, w0)
        assert np.array_equal(run.x[0], x0)
    assert pair.damped.scenario.run.radiation_reaction == "landau-lifshitz"
    assert pair.undamped.scenario.run.radiation_reaction == "none"
    # the undamped beam keeps its energy in a static B; the damped one loses it (Larmor/Lienard power)
    assert np.allclose(pair.undamped.gamma[-1], pair.undamped.gamma[0], rtol=1e-9)
    assert np.all(pair.damped.gamma[-1] < pair.damped.gamma[0])


def test_beam_warnings_count_the_particles_whose_own_checks_raise_them(tmp_path):
    # cooling shortens each gyration period (proportional to gamma) until some particles fall below
    # the resolution threshold; the beam's count must equal check_result over particle(i) one by one
    r = track(load_scenario(beam_file(tmp_path, count=40, spp=22, periods=10.0)))
    counts = r.warning_counts()
    expected = {}
    for i in range(r.count):
        for kind in {w["kind"] for w in check_result(r.particle(i))}:
            expected[kind] = expected.get(kind, 0) + 1
    assert counts == expected
    assert 0 < counts["resolution"] < r.count
    warning = next(w for w in r.warnings if w["kind"] == "resolution")
    assert f"{counts['resolution']} of 40 particles" in warning["message"]
    assert "steps_per_period" in warning["message"]          # the single-particle advice is kept


def test_statistics_only_beam_warns_from_what_the_statistics_hold(tmp_path):
    # a plan resolving the fastest particle at 10 steps per gyration; particle i has
    # 2 pi/(omega_i dt) steps per period with omega_i = e B/(gamma_i m) (Jackson sec. 12.2), and
    # fewer than MIN_STEPS_PER_PERIOD raises "resolution" (tracker/validity.py)
    from tracker.validity import MIN_STEPS_PER_PERIOD

    scenario = load_scenario(beam_file(tmp_path, save="statistics", count=30, spp=10, periods=0.5))
    r = track(scenario)
    _, u0, _ = scenario.initial_particles()
    gamma0 = np.sqrt(1.0 + np.sum(u0 * u0, axis=1))
    steps_per_period = 2 * math.pi * gamma0 * sc.m_e / (sc.e * B_TESLA * r.meta["dt"])
    expected = int(np.count_nonzero(steps_per_period < MIN_STEPS_PER_PERIOD))
    assert 0 < expected < 30
    counts = r.warning_counts()
    assert counts["resolution"] == expected
    text = next(w for w in r.warnings if w["kind"] == "resolution")["message"]
    assert "at the start only" in text


def test_memory_of_a_plan_too_large_is_refused_naming_count_and_save(tmp_path, monkeypatch):
    huge = BEAM_TOML.format(duration=100 * gyration_period(2000.0), spp=100, save="all", extra="",
                            count=1_000_000, b=B_TESLA, spread=0.0)
    with pytest.raises(ScenarioError) as info:       # 1e6 particles x ~1e3 saved states x 104 B > 100 GB
        Scenario.from_toml(huge)
    assert info.value.key == "beam.count"
    message = str(info.value)
    assert "beam.count = 1,000,000" in message and "run.save = 'all'" in message and 'save = "statistics"' in message

    from tracker import plan as plan_module

    small = load_scenario(beam_file(tmp_path, count=50)).plan()
    assert small.memory_bytes > small.state_bytes > 0 and small.peak_bytes > small.memory_bytes
    monkeypatch.setattr(plan_module, "memory_limit_bytes", lambda: small.peak_bytes - 1)
    with pytest.raises(ScenarioError, match="run.save = 'all'"):
        load_scenario(beam_file(tmp_path, count=50))
    # statistics only: the kept part does not grow with the count
    monkeypatch.undo()
    lean = [load_scenario(beam_file(tmp_path, save="statistics", count=n, spread=0.0)).plan() for n in (10, 1000)]
    assert lean[0].memory_bytes - lean[0].state_bytes == lean[1].memory_bytes - lean[1].state_bytes


def side_by_side_peak(scenario, plan, runs):
    """Peak bytes of ``runs`` runs of a comparison, recomputed from the plan by the rule stated in
    tracker/plan.py: two runs at their peak while the others hold their kept arrays and
    10 floats per particle (initial particles and the result's loss record); no field data here."""
    finished = plan.memory_bytes - plan.state_bytes + 10 * 8 * scenario.particle_count
    return (runs - 2) * finished + 2 * plan.peak_bytes


def test_compare_refuses_models_that_do_not_fit_together_before_any_run(tmp_path, monkeypatch, capsys):
    from tracker import engine
    from tracker import plan as plan_module

    path = beam_file(tmp_path, count=50)
    scenario = load_scenario(path)
    plan = scenario.plan()
    three = ["none", "landau-lifshitz", "landau-lifshitz-quantum"]
    assert plan_module.comparison_memory(scenario, plan, 1)[1] == plan.peak_bytes
    assert plan_module.comparison_memory(scenario, plan, 3)[1] == side_by_side_peak(scenario, plan, 3)
    # every run fits alone and two fit together, three do not
    monkeypatch.setattr(plan_module, "memory_limit_bytes", lambda: side_by_side_peak(scenario, plan, 3) - 1)
    started = []
    monkeypatch.setattr(engine, "track", lambda *a, **k: started.append(a) or pytest.fail("a run started"))
    with pytest.raises(ScenarioError) as info:
        compare(scenario, models=three)
    assert info.value.key == "beam.count" and started == []
    message = str(info.value)
    assert "comparing 3 models" in message and "beam.count = 50" in message and "run.save = 'all'" in message
    assert 'run.save = "statistics"' in message and "fewer models" in message
    plan_module.refuse_if_comparison_too_large(scenario, 2)   # the pair fits
    # the command line refuses the same before running, and check says so too
    assert main(["run", str(path), "--models", ",".join(three)]) == 2
    assert main(["check", str(path), "--models", ",".join(three)]) == 2
    errors = capsys.readouterr().err.splitlines()
    assert len(errors) == 2 and all("comparing 3 models" in line and "beam.count" in line for line in errors)
    assert main(["check", str(path), "--compare"]) == 0
    out = capsys.readouterr().out
    assert "memory, 2 runs" in out and "2 runs side by side (2 at once)" in out
    assert main(["check", str(path)]) == 0
    assert "--compare (2 runs) peaks at" in capsys.readouterr().out


def test_compare_of_one_particle_refuses_naming_save_every(monkeypatch):
    from builders import electron, scenario as one_particle
    from tracker import plan as plan_module
    from tracker.engine import MODEL_ORDER

    single = one_particle([{"type": "uniform", "B": [0, 0, 1.0]}], duration=1e-10, save_every=10,
                          particle=electron(gamma=10.0, direction=[1, 0, 0]))
    plan = single.plan()
    monkeypatch.setattr(plan_module, "memory_limit_bytes", lambda: side_by_side_peak(single, plan, 4) - 1)
    with pytest.raises(ScenarioError) as info:
        compare(single, models=list(MODEL_ORDER))
    assert info.value.key == "run.save_every" and "comparing 4 models" in str(info.value)


def test_physical_memory_limit_is_a_share_of_this_machine():
    from tracker.plan import MEMORY_FRACTION, memory_limit_bytes, physical_memory_bytes

    assert 0 < MEMORY_FRACTION < 1
    assert memory_limit_bytes() == int(MEMORY_FRACTION * physical_memory_bytes()) > 0


def test_snapshots_round_trip_through_openpmd_into_a_beam_file_scenario(tmp_path, capsys):
    period = gyration_period(2000.0)
    times = [0.0, 2 * period]
    extra = f"snapshots = [{times[0]!r}, {times[1]!r}]"
    path = beam_file(tmp_path, save="statistics", count=16, extra=extra)
    snap = tmp_path / "snap.h5"
    assert main(["run", str(path), "--snapshots", str(snap)]) == 0
    assert "openPMD" in capsys.readouterr().out
    # the engine's dumps equal the saved states of the same run with every state kept
    full = track(load_scenario(beam_file(tmp_path, name="full.toml", save="all", count=16, extra=extra)))
    k = int(np.argmin(np.abs(full.t - times[1])))
    assert len(full.snapshots) == 2
    assert full.snapshots[1][0] == pytest.approx(times[1], rel=1e-12)
    assert np.array_equal(full.snapshots[1][1], full.x[k]) and np.array_equal(full.snapshots[1][2], full.u[k])
    # the file loads back as a [beam] file, relative to the scenario
    text = (tmp_path / "full.toml").read_text()
    head, _, _ = text.partition("[beam]")
    head = head.replace(extra, "")
    loaded = Scenario.from_toml(head + '[beam]\nspecies = "electron"\nfile = "snap.h5"\niteration = 1\n\n'
                                "[[field]]\ntype = \"uniform\"\nB = [0, 0, 5000.0]\n", base_dir=tmp_path)
    x, u, w = loaded.initial_particles()
    np.testing.assert_allclose(x, full.x[k], rtol=1e-15, atol=0)
    np.testing.assert_allclose(u, full.u[k], rtol=1e-14, atol=0)
    assert np.array_equal(w, full.weight)
    (tmp_path / "from_snap.toml").write_text(loaded.to_toml())
    assert main(["check", str(tmp_path / "from_snap.toml")]) == 0
    assert "from snap.h5 (iteration 1)" in capsys.readouterr().out


def test_snapshots_option_needs_snapshot_times_and_a_beam(tmp_path, capsys):
    assert main(["run", str(beam_file(tmp_path)), "--snapshots", str(tmp_path / "s.h5")]) == 2
    assert "--snapshots" in capsys.readouterr().err
