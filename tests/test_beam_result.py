"""BeamResult: statistics (emittance by hand, free-drift invariance), particle(i), HDF5 round trip.

Normalised rms emittance eps_n,x = sqrt(<dx^2><dux^2> - <dx dux>^2) with centred moments and
ux = gamma beta_x (M. Reiser, "Theory and Design of Charged Particle Beams", ch. 3; K. Floettmann,
Phys. Rev. ST Accel. Beams 6, 034202 (2003); both from memory). In a free drift every particle
moves as x(t) = x0 + c t u/gamma: a shear of the (x, ux) plane with determinant 1, which leaves
the rms emittance unchanged when all particles share one gamma (Liouville; Reiser ch. 3, from
memory); with an energy spread the shear differs between particles (chromatic) and the rms
emittance grows.
"""

import math

import numpy as np
import pytest
from scipy import constants as sc

from tracker import Scenario, load_result
from tracker.beam_result import STAT_KEYS, BeamResult, beam_statistics
from tracker.result import Result


def beam_scenario(**beam):
    base = {"species": "electron", "gamma": 200.0, "direction": [0, 0, 1], "count": 4}
    return Scenario.from_dict({"run": {"duration": "1 ps", "dt": "1 fs"}, "beam": {**base, **beam}})


def drift(scenario, times):
    """(t, x, u, gamma) of a free drift x(t) = x0 + c t u/gamma, evaluated in numpy."""
    x0, u0, _ = scenario.initial_particles()
    gamma = np.sqrt(1.0 + np.sum(u0 * u0, axis=1))
    x = x0[None] + sc.c * times[:, None, None] * (u0 / gamma[:, None])[None]
    return x, np.broadcast_to(u0, x.shape).copy(), np.broadcast_to(gamma, x.shape[:2]).copy()


def full_result(scenario, times, **extra):
    x, u, gamma = drift(scenario, times)
    n = scenario.particle_count
    rng = np.random.default_rng(1)
    shape = (len(times), n)
    arrays = dict(power=rng.uniform(0, 1, shape), radiated_energy=np.cumsum(rng.uniform(0, 1e-15, shape), axis=0),
                  field_work=rng.uniform(-1, 1, shape), chi=rng.uniform(0, 0.1, shape), dt=np.full(shape, 1e-15))
    return BeamResult(t=times, scenario=scenario, x=x, u=u, gamma=gamma, meta={"complete": True, "steps": 10},
                      **arrays, **extra)


def test_emittance_matches_a_hand_calculation():
    # Four particles, weights 1 (hand calculation):
    #   x  = [1, 2, 3, 4] um           -> <x> = 2.5 um,  dx = [-1.5, -0.5, 0.5, 1.5] um, <dx^2> = 1.25 um^2
    #   ux = [1, 3, 2, 6] e-3          -> <ux> = 3e-3,   dux = [-2, 0, -1, 3] e-3,    <dux^2> = 3.5e-6
    #   <dx dux> = (3 + 0 - 0.5 + 4.5)/4 um e-3 = 1.75e-9 m
    #   eps^2 = 1.25e-12 * 3.5e-6 - (1.75e-9)^2 = 4.375e-18 - 3.0625e-18 = 1.3125e-18 -> eps = 1.1456439e-9 m rad
    # A fifth particle far away, lost at t = 0, must not change the moments but is counted.
    x = np.zeros((1, 5, 3))
    u = np.zeros((1, 5, 3))
    x[0, :, 0] = [1e-6, 2e-6, 3e-6, 4e-6, 1.0]
    u[0, :, 0] = [1e-3, 3e-3, 2e-3, 6e-3, 5.0]
    u[0, :, 2] = 100.0
    gamma = np.sqrt(1 + np.sum(u * u, axis=2))
    zeros = np.zeros((1, 5))
    lost = np.array([0, 0, 0, 0, 2], dtype=np.int8)
    lost_time = np.array([np.inf] * 4 + [0.0])
    stats = beam_statistics(np.zeros(1), x, u, gamma, zeros, zeros, np.ones(5), lost, lost_time)
    assert stats["emittance_x"][0] == pytest.approx(math.sqrt(1.3125e-18), rel=1e-12)
    assert stats["emittance_y"][0] == 0.0
    assert stats["lost"][0] == 1
    assert set(stats) == set(STAT_KEYS)
    # weight 2 on one particle is the same as that particle twice
    doubled = beam_statistics(np.zeros(1), x[:, [0, 0, 1, 2, 3]], u[:, [0, 0, 1, 2, 3]], gamma[:, [0, 0, 1, 2, 3]],
                              np.zeros((1, 5)), np.zeros((1, 5)), np.ones(5), np.zeros(5, np.int8), np.full(5, np.inf))
    weighted = beam_statistics(np.zeros(1), x[:, :4], u[:, :4], gamma[:, :4], zeros[:, :4], zeros[:, :4],
                               np.array([2.0, 1, 1, 1]), np.zeros(4, np.int8), np.full(4, np.inf))
    for key in ("mean_gamma", "rms_gamma_spread", "emittance_x"):
        assert weighted[key][0] == pytest.approx(doubled[key][0], rel=1e-12)


def test_free_drift_conserves_emittance_without_energy_spread():
    s = beam_scenario(count=2000, divergence=[1e-3, 2e-3], size=[1e-6, 2e-6, 1e-6])
    times = np.linspace(0.0, 1e-10, 6)   # the bunch grows ~30x wider: c t sigma' = 30 um vs 1 um
    r = full_result(s, times)
    stats = r.statistics()
    for key in ("emittance_x", "emittance_y"):
        assert stats[key][0] > 0
        assert np.max(np.abs(stats[key] / stats[key][0] - 1.0)) < 1e-10, key
    assert np.std(r.x[-1, :, 0]) > 20 * np.std(r.x[0, :, 0])
    # with a 1 % energy spread the drift shears each particle differently (chromatic): the
    # rms emittance grows, by a clearly resolved amount over the same drift
    spread = full_result(beam_scenario(count=2000, divergence=[1e-3, 2e-3], size=[1e-6, 2e-6, 1e-6],
                                       energy_spread=0.01), times).statistics()
    assert spread["emittance_x"][-1] / spread["emittance_x"][0] - 1.0 > 1e-3


def test_statistics_of_energy_and_losses():
    s = beam_scenario(count=50, energy_spread=0.02)
    times = np.linspace(0.0, 1e-12, 3)
    lost = np.zeros(50, np.int8)
    lost[7] = 1
    lost_time = np.full(50, np.inf)
    lost_time[7] = 0.7e-12
    r = full_result(s, times, lost=lost, lost_time=lost_time)
    r.radiated_energy[2, 7] = np.nan       # a lost particle's later states may be non-finite
    stats = r.statistics()
    gamma0 = r.gamma[0]
    assert stats["mean_gamma"][0] == pytest.approx(gamma0.mean(), rel=1e-14)
    assert stats["rms_gamma_spread"][0] == pytest.approx(gamma0.std() / gamma0.mean(), rel=1e-12)
    alive = np.arange(50) != 7
    assert stats["mean_gamma"][2] == pytest.approx(gamma0[alive].mean(), rel=1e-14)
    assert stats["lost"].tolist() == [0, 0, 1]
    held = r.radiated_energy[2].copy()
    held[7] = r.radiated_energy[1, 7]          # the lost particle keeps what it radiated
    assert stats["radiated_energy"][2] == pytest.approx(held.sum(), rel=1e-14)
    assert stats["max_chi"][2] == r.chi[2, alive].max()
    assert stats["mean_chi"][1] == pytest.approx(r.chi[1].mean(), rel=1e-14)
    summary = r.summary()
    assert summary["particles"] == 50 and summary["lost"] == 1
    assert summary["energy_radiated"] == stats["radiated_energy"][-1]


def test_particle_i_is_the_matching_slice_with_its_own_scenario():
    s = beam_scenario(count=6, energy_spread=0.01, divergence=1e-3)
    times = np.linspace(0.0, 1e-12, 4)
    lost = np.zeros(6, np.int8)
    lost[2] = 3
    lost_time = np.full(6, np.inf)
    lost_time[2] = times[1]
    r = full_result(s, times, lost=lost, lost_time=lost_time)
    r.x[2:, 2] = np.nan
    p = r.particle(4)
    assert isinstance(p, Result)
    for name in ("x", "u", "gamma", "power", "radiated_energy", "field_work", "chi", "dt"):
        assert np.array_equal(getattr(p, name), getattr(r, name)[:, 4]), name
    assert np.array_equal(p.t, times) and p.meta["particle"] == 4
    x0, u0, _ = s.initial_particles()
    assert p.scenario.beam is None and p.scenario.particle_count == 1
    assert np.array_equal(p.scenario.particle.u, u0[4]) and p.scenario.particle.position == tuple(x0[4])
    assert Scenario.from_toml(p.scenario.to_toml()) == p.scenario
    lost_particle = r.particle(2)
    assert np.array_equal(lost_particle.t, times[:2]) and lost_particle.meta["lost"] == 3
    with pytest.raises(IndexError):
        r.particle(6)


def test_hdf5_round_trip_full_and_statistics_only(tmp_path):
    s = beam_scenario(count=5, energy_spread=0.01, size=["1 um", 0, 0])
    times = np.linspace(0.0, 1e-12, 3)
    x0, u0, w0 = s.initial_particles()
    r = full_result(s, times, snapshots=[(0.0, x0, u0, w0), (1e-12, x0 + 1e-6, u0, w0)],
                    warnings=[{"kind": "quantum", "message": "m", "time": 0.0, "particle": 1}],
                    photons={"energy": np.array([1.0, 2.0]), "particle": np.array([0, 3])})
    r.stats = r.statistics()
    path = tmp_path / "beam.h5"
    r.to_hdf5(path)
    again = load_result(path)
    assert isinstance(again, BeamResult)
    for name in ("t", "x", "u", "gamma", "power", "radiated_energy", "field_work", "chi", "dt", "lost",
                 "lost_time", "weight"):
        assert np.array_equal(getattr(again, name), getattr(r, name)), name
    assert again.scenario == s and again.meta == r.meta and again.warnings == r.warnings
    assert all(np.array_equal(again.stats[k], r.stats[k]) for k in r.stats)
    assert len(again.snapshots) == 2 and again.snapshots[1][0] == 1e-12
    assert all(np.array_equal(a, b) for a, b in zip(again.snapshots[1][1:], r.snapshots[1][1:]))
    assert np.array_equal(again.photons["particle"], [0, 3])
    assert again.warning_counts() == {"quantum": 1}
    assert not list(tmp_path.glob("*.part"))

    only = BeamResult(t=times, scenario=s.with_run(save="statistics"), stats=r.stats, meta={"complete": True})
    assert not only.has_particles
    only.to_hdf5(tmp_path / "stats.h5")
    back = load_result(tmp_path / "stats.h5")
    assert back.x is None and back.chi is None
    assert all(np.array_equal(back.statistics()[k], r.stats[k]) for k in STAT_KEYS)
    with pytest.raises(ValueError, match="statistics only"):
        back.particle(0)


def test_engine_statistics_agree_with_the_numpy_definition():
    """The engine's in-kernel moments and ``beam_statistics`` on the saved states are one definition."""
    from tracker import track

    s = Scenario.from_dict({
        "run": {"duration": "2 ps", "steps_per_period": 50, "radiation_reaction": "landau-lifshitz"},
        "beam": {"species": "electron", "gamma": 300, "direction": [1, 0, 0], "count": 40, "energy_spread": 0.01,
                 "divergence": 1e-3, "size": [1e-6, 1e-6, 1e-6]},
        "field": [{"type": "uniform", "B": [0, 0, 20]}]})
    r = track(s)
    assert isinstance(r, BeamResult) and r.x.shape[1:] == (40, 3)
    mine = r.statistics()
    for key in STAT_KEYS:
        assert np.allclose(mine[key], r.stats[key], rtol=1e-12, atol=0), key
    assert mine["radiated_energy"][-1] > 0
