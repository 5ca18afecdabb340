"""Result files, partial runs and failure handling (common practice, no source)."""

import csv
import dataclasses
import threading

import numpy as np
import pytest

from builders import electron, scenario
from tracker import load_result, track
from tracker.result import ARRAYS
from tracker.stops import StopReason


@pytest.fixture(scope="module")
def short_run():
    return track(scenario([{"type": "uniform", "E": [1e5, 0, 0], "B": [0, 0, 0.3]}], duration=2e-9,
                          particle=electron(kinetic_energy="5 MeV", direction=[1, 1, 0]),
                          rr="landau-lifshitz", steps_per_period=100, save_every=3))


def test_hdf5_round_trip_keeps_arrays_units_and_scenario(short_run, tmp_path):
    import h5py

    path = tmp_path / "run.h5"
    short_run.to_hdf5(path)
    again = load_result(path)
    for name in ARRAYS:
        assert np.array_equal(getattr(again, name), getattr(short_run, name)), name
    assert again.scenario == short_run.scenario
    assert again.meta == short_run.meta
    with h5py.File(path) as h5:
        assert h5["power"].attrs["unit"] == "W"
        assert h5["x"].attrs["unit"] == "m"
    assert not list(tmp_path.glob("*.part"))     # atomic write left no temporary file


def test_csv_has_one_row_per_saved_state(short_run, tmp_path):
    path = tmp_path / "run.csv"
    short_run.to_csv(path)
    with open(path) as fh:
        first = fh.readline()
        rows = list(csv.reader(fh))
    assert first.startswith("# radorbit result") and "complete=True" in first
    assert rows[0][0] == "t_s" and rows[0][8] == "power_W"
    data = np.array(rows[1:], dtype=float)
    assert data.shape == (len(short_run.t), 13)
    assert np.array_equal(data[:, 8], short_run.power)


def test_saved_states_follow_save_every(short_run):
    plan = short_run.scenario.plan()
    assert len(short_run.t) == plan.saved_states
    assert short_run.t[-1] == pytest.approx(2e-9, rel=1e-12)
    assert np.allclose(np.diff(short_run.t)[:-1], 3 * plan.dt)


def test_cancelled_run_keeps_and_marks_what_it_computed(monkeypatch):
    import tracker.engine as engine

    monkeypatch.setattr(engine, "CHUNK_STEPS", 1000)
    stop = threading.Event()
    seen = []

    def progress(fraction):
        seen.append(fraction)
        if fraction > 0.3:
            stop.set()

    result = track(scenario([{"type": "uniform", "B": [0, 0, 1.0]}], duration=1e-7,
                            particle=electron(gamma=10.0, direction=[1, 0, 0]), steps_per_period=100),
                   progress=progress, cancel=stop)
    assert result.meta["stop_reason"] == "cancelled" and result.complete is False
    assert 0.3 < seen[-1] < 0.5
    assert len(result.t) == result.meta["steps"]          # save_every = 1: steps 0 .. steps-1 kept
    assert np.all(np.isfinite(result.gamma))


def test_non_finite_values_stop_the_run_and_keep_the_last_good_state():
    # a pathological pulse (a0 = 1e290) makes the momentum overflow once it arrives. The
    # loader refuses such an amplitude (tracker.plausibility), so the field is swapped in
    # behind its back: the engine must still stop cleanly on whatever a field model returns.
    pulse = {"type": "plane-wave", "a0": 1.0, "wavelength": 1e-6, "envelope": "sin2", "duration": 5e-15,
             "peak_position": [0, 0, -10e-6]}
    valid = scenario([pulse], duration=100e-15, particle=electron(gamma=2.0, direction=[0, 0, -1]),
                     steps_per_period=50)
    field = valid.fields[0]
    wild = type(field)(field.type, tuple((n, 1e290 if n == "a0" else v) for n, v in field.values))
    result = track(dataclasses.replace(valid, fields=(wild,)))
    assert result.meta["stop_reason"] == StopReason.NONFINITE
    assert 0 < result.t[-1] < 100e-15
    assert result.complete is False
    assert np.all(np.isfinite(result.x)) and np.all(np.isfinite(result.u))
