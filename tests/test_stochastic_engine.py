"""The quantum-stochastic model inside the engine: energy balance, photons, seeds, compare, files.

Physics references: the emission spectrum (Baier-Katkov; BLP QED sec. 90, from memory) is
checked in tests/test_stochastic.py; here the engine must reproduce its consequences.
"""

import math

import h5py
import numpy as np
import pytest

from tracker import Scenario, compare, track
from tracker import constants as k
from tracker.photons import PhotonTable
from tracker.radiation import (classical_photon_spectrum, emitted_energy, photon_angular_histogram,
                               photon_energy_histogram)
from tracker.result import load_result

GAMMA0 = 1000.0
CHI0 = 0.1


def uniform_b(chi=CHI0, gamma=GAMMA0, duration=2e-15, seed=1, model="quantum-stochastic", **run):
    """Electron along x in Bz chosen so that chi = gamma beta c B/E_S."""
    beta = math.sqrt(1.0 - 1.0 / gamma**2)
    b = chi * k.E_schwinger / (gamma * beta * k.c)
    return Scenario.from_dict({
        "run": {"duration": duration, "steps_per_period": 400, "radiation_reaction": model, "seed": seed, **run},
        "particle": {"species": "electron", "gamma": gamma, "direction": [1, 0, 0]},
        "field": [{"type": "uniform", "B": [0, 0, b]}],
    })


def test_energy_lost_equals_photon_energy_and_balance_closes():
    r = track(uniform_b(photon_min_energy=0.0, duration=1.5e-14))
    assert len(r.photons) > 3 and r.photons.dropped == 0
    # uniform B does no work: the particle's loss is the radiated energy to round-off
    assert r.energy_balance_residual() < 1e-12
    # every photon's energy was taken from the particle: with chi above CHI_STOCHASTIC_MIN throughout
    # (no continuous part) the recorded photons add up to the radiated energy to round-off
    assert r.chi.min() > 1e-4
    assert r.photons.energy.sum() == pytest.approx(r.radiated_energy[-1], rel=1e-12)
    # photons leave along the particle's momentum: |p| c = energy, and p within one step's turn of u
    assert np.allclose(np.linalg.norm(r.photons.p, axis=1) * k.c, r.photons.energy, rtol=1e-12)
    assert np.all(r.photons.t >= -r.dt[0]) and np.all(r.photons.t <= r.t[-1] + r.dt[0])


def test_same_seed_same_run_and_different_seeds_differ():
    a, b, c = (track(uniform_b(seed=s)) for s in (5, 5, 6))
    assert np.array_equal(a.gamma, b.gamma) and np.array_equal(a.photons.energy, b.photons.energy)
    assert not np.array_equal(a.gamma, c.gamma)


def test_photon_min_energy_filters_the_record_but_not_the_loss():
    full = track(uniform_b(seed=9, duration=1.5e-14))
    cut = float(np.median(full.photons.energy))
    part = track(uniform_b(seed=9, duration=1.5e-14, photon_min_energy=cut))
    assert np.array_equal(full.gamma, part.gamma)
    assert np.array_equal(part.photons.energy, full.photons.energy[full.photons.energy >= cut])
    assert part.photons.min_energy == cut


def beam_in_uniform_b(count, model="quantum-stochastic", duration=2e-15):
    data = uniform_b(duration=duration, model=model).to_dict()
    data["beam"] = dict(data.pop("particle"), count=count)
    data["run"]["save"] = "all"
    return Scenario.from_dict(data)


def test_beam_mean_loss_matches_the_quantum_corrected_model():
    # a 400-particle beam (identical particles, independent photon streams) against
    # landau-lifshitz-quantum (Gaunt-factor fit within 1.4 % of the exact power, quantum.py):
    # the mean losses agree within 4 standard errors plus the fit's 1.4 %
    beam = track(beam_in_uniform_b(400))
    assert beam.photons is not None and len(beam.photons) > 100
    assert set(np.unique(beam.photons.particle)) <= set(range(400))
    losses = GAMMA0 - beam.gamma[-1]
    mean_field = GAMMA0 - track(uniform_b(model="landau-lifshitz-quantum")).gamma[-1]
    err = losses.std() / math.sqrt(len(losses))
    assert abs(losses.mean() - mean_field) < 4.0 * err + 0.014 * mean_field


def test_below_the_threshold_the_stochastic_model_is_the_corrected_continuous_one():
    # chi = 1e-5 < CHI_STOCHASTIC_MIN: no photons, the same orbit as landau-lifshitz-quantum
    s = track(uniform_b(chi=1e-5, duration=1e-12))
    q = track(uniform_b(chi=1e-5, duration=1e-12, model="landau-lifshitz-quantum"))
    assert len(s.photons) == 0
    assert np.allclose(s.gamma, q.gamma, rtol=1e-14, atol=0)


def test_compare_any_set_of_models_and_default_pair():
    scenario = uniform_b(duration=1e-15)
    models = ["quantum-stochastic", "none", "landau-lifshitz", "landau-lifshitz-quantum"]
    comparison = compare(scenario, models=models)
    assert comparison.models == ["none", "landau-lifshitz", "landau-lifshitz-quantum", "quantum-stochastic"]
    assert comparison.undamped is comparison["none"] and comparison.damped is comparison["quantum-stochastic"]
    energy = emitted_energy(comparison)
    assert energy["none"] == comparison["none"].radiated_energy[-1]
    # classical LL radiates more than the quantum-corrected model (g(0.1) = 0.65)
    assert energy["landau-lifshitz"] > energy["landau-lifshitz-quantum"] > 0
    pair = compare(scenario.with_run(radiation_reaction="landau-lifshitz"))
    assert pair.damped.scenario.run.radiation_reaction == "landau-lifshitz"
    assert pair.undamped.scenario.run.radiation_reaction == "none"
    assert set(pair.results) == {"landau-lifshitz", "none"}


def test_photons_saved_to_hdf5_and_openpmd(tmp_path):
    r = track(uniform_b(seed=2))
    path = r.to_hdf5(tmp_path / "run.h5")
    back = load_result(path)
    assert isinstance(back.photons, PhotonTable)
    for name in ("t", "x", "p", "energy", "particle", "weight"):
        assert np.array_equal(getattr(back.photons, name), getattr(r.photons, name))
    pmd = r.photons.to_openpmd(tmp_path / "photons.h5")
    with h5py.File(pmd, "r") as h5:
        assert h5.attrs["openPMD"] == b"1.1.0"
        group = h5["data/0/particles/photons"]
        assert np.array_equal(group["momentum/x"][()], r.photons.p[:, 0])
        assert np.array_equal(group["energy"][()], r.photons.energy)
        assert list(group["momentum"].attrs["unitDimension"]) == [1, 1, -1, 0, 0, 0, 0]


def test_openpmd_photons_read_back_with_openpmd_api(tmp_path):
    io = pytest.importorskip("openpmd_api")
    r = track(uniform_b(seed=4))
    r.photons.to_openpmd(tmp_path / "photons.h5")
    series = io.Series(str(tmp_path / "photons.h5"), io.Access.read_only)
    photons = series.iterations[0].particles["photons"]
    px = photons["momentum"]["x"].load_chunk()
    series.flush()
    assert np.array_equal(px, r.photons.p[:, 0])


def test_histograms_carry_poisson_errors_and_the_classical_spectrum_shares_the_axes():
    r = track(uniform_b(seed=3, duration=1.5e-14, save_every=1))
    h = photon_energy_histogram(r, np.geomspace(1e-3, 1.0, 8) * GAMMA0 * k.m_e * k.c**2)
    inside = (r.photons.energy >= h.edges[0]) & (r.photons.energy < h.edges[-1])
    assert h.counts.sum() == inside.sum()
    assert np.allclose(h.error, np.sqrt(h.counts) / np.diff(h.edges))       # weight 1: sqrt(N)/width
    e = photon_energy_histogram(r, h.edges, weighted_by_energy=True)
    assert np.sum(e.density * np.diff(e.edges)) == pytest.approx(r.photons.energy[inside].sum(), rel=1e-12)
    a = photon_angular_histogram(r)
    solid = 2 * np.pi * (np.cos(a.edges[:-1]) - np.cos(a.edges[1:]))
    assert np.sum(a.density * solid) == pytest.approx(len(r.photons), rel=1e-6)
    dn, de = classical_photon_spectrum(r, h.centers)
    assert np.all(dn > 0) and np.allclose(de, dn * h.centers)


@pytest.mark.parametrize("chi0", [1e-3, 1e-2])
def test_as_chi_goes_to_zero_the_beam_mean_follows_the_classical_coth_law(chi0):
    # Classical limit: Landau-Lifshitz cooling across a uniform B, gamma(t) = coth(t/tau_B + arcoth gamma0),
    # tau_B = 1/(tau0 (qB/m)^2) (Landau & Lifshitz vol. 2 sec. 76 problem, from memory). The quantum mean
    # loss is lower by the Gaunt factor g(chi) = 1 - (55 sqrt(3)/16) chi + O(chi^2) (Baier-Katkov; BLP
    # QED sec. 90, from memory), so the beam mean must sit within that fraction of the classical loss
    # (plus 4 standard errors) and never above it: a gap that closes linearly as chi -> 0.
    # gyrations per e-fold of the loss, 1/(2 pi tau0 omega_B gamma^2), scale as 1/(chi gamma): at gamma = 1000
    # and chi = 1e-3 a 30 % loss takes ~14 gyrations, resolved with 200 steps each
    gamma0, count = 1.0e3, 1000
    b_field = chi0 * k.E_schwinger / (gamma0 * k.c)
    tau0 = k.e**2 / (6 * math.pi * k.epsilon_0 * k.m_e * k.c**3)
    tau_b = 1.0 / (tau0 * (k.e * b_field / k.m_e) ** 2)
    duration = tau_b * (1.0 / (0.7 * gamma0) - 1.0 / gamma0)   # the classical law loses 30 %
    scenario = Scenario.from_dict({
        "run": {"duration": duration, "steps_per_period": 200, "radiation_reaction": "quantum-stochastic",
                "seed": 3, "save": "statistics", "save_every": 1000},
        "beam": {"species": "electron", "count": count, "gamma": gamma0, "direction": [1, 0, 0]},
        "field": [{"type": "uniform", "B": [0, 0, b_field]}],
    })
    beam = track(scenario)
    t_end = beam.stats["t"][-1]
    classical_loss = gamma0 - 1.0 / np.tanh(t_end / tau_b + np.arctanh(1.0 / gamma0))
    mean = beam.stats["mean_gamma"][-1]
    error = beam.stats["rms_gamma_spread"][-1] * mean / math.sqrt(count)
    quantum_gap = 55.0 * math.sqrt(3.0) / 16.0 * chi0 * classical_loss   # 1 - g(chi0), largest at the start
    loss = gamma0 - mean
    assert classical_loss == pytest.approx(0.3 * gamma0, rel=0.02)
    assert beam.meta["complete"] and beam.meta["steps"] >= 100 * count   # resolved, not a few giant steps
    assert loss <= classical_loss + 4.0 * error
    assert loss >= classical_loss - quantum_gap - 4.0 * error
    if chi0 >= 1e-2:
        # and the quantum deficit is really there, beyond the noise, where it is large enough to see
        assert loss < classical_loss - 4.0 * error
