"""Stochastic photon emission (tracker.radiation.stochastic) against the published spectrum.

Reference spectrum, written out here independently of the module's tables (Baier and Katkov,
Sov. Phys. JETP 26, 854 (1968); Berestetskii, Lifshitz & Pitaevskii, QED sec. 90; equation
from memory, the same form as tests/test_quantum.py):

    d^2N/(dt d delta) = (alpha m c^2/(hbar gamma)) S(chi, delta),
    S = [(1 - delta + 1/(1 - delta)) K_{2/3}(y) - Int_y^inf K_{1/3}(s) ds]/(sqrt3 pi),
    y = 2 delta/(3 chi (1 - delta)).

The double integrals are reduced to single ones by exchanging the order of integration:
Int_a^b d delta f(delta) Int_{y(delta)}^inf K_{1/3}(s) ds = Int_{y(a)}^inf K_{1/3}(s) [F(min(delta(s), b)) - F(a)] ds
with F' = f, delta(s) = 3 chi s/(2 + 3 chi s); then scipy.integrate.quad over y in (0, inf).
"""

import math
import os
import subprocess
import sys

import numpy as np
import pytest
from numba import njit
from scipy import stats
from scipy.integrate import quad, solve_ivp
from scipy.special import kv

from tracker import constants as k
from tracker.radiation.stochastic import (CHI_STOCHASTIC_MIN, EMISSION_PROBABILITY_MAX, SPREAD_COEFFICIENT,
                                          constant_field_ensemble, emit, emission_rate, rate_shape, rate_unit,
                                          sample_fraction, sample_fractions, substeps, table)

TAB = table()
UNIT = rate_unit(-k.e, k.m_e)
SQ3PI = math.sqrt(3.0) * math.pi


def delta_of_y(chi, y):
    return 3.0 * chi * y / (2.0 + 3.0 * chi * y)


def band(chi, m, y_a=0.0, y_b=np.inf):
    """Int delta^m S d delta over y_a < y < y_b (delta in the corresponding band), by quad in y."""
    a = delta_of_y(chi, y_a)
    b = 1.0 if np.isinf(y_b) else delta_of_y(chi, y_b)

    def first(y):  # (1 - delta + 1/(1 - delta)) K_{2/3}(y) d delta/dy
        d = delta_of_y(chi, y)
        return d**m * (1.0 - d + 1.0 / (1.0 - d)) * kv(2.0 / 3.0, y) * 6.0 * chi / (2.0 + 3.0 * chi * y) ** 2

    def second(s):  # K_{1/3}(s) [F(min(delta(s), b)) - F(a)], F = delta^(m+1)/(m+1)
        top = min(delta_of_y(chi, s), b)
        return kv(1.0 / 3.0, s) * (top ** (m + 1) - a ** (m + 1)) / (m + 1)

    opts = dict(limit=400, epsabs=0.0, epsrel=1e-10)
    upper = min(y_b, 200.0)
    pts = [p for p in (1e-6, 1e-3, 0.1, 1.0, 10.0) if y_a < p < upper]
    one = quad(first, y_a, upper, points=pts or None, **opts)[0]
    two = quad(second, y_a, 200.0, points=[p for p in (1e-6, 1e-3, 0.1, 1.0, 10.0) if y_a < p] or None, **opts)[0]
    return (one - two) / SQ3PI


# ----------------------------------------------------------------------------- rate and power
@pytest.mark.parametrize("chi", [1e-3, 0.01, 0.1, 0.37, 1.0, 10.0])
def test_total_rate_matches_the_integral_of_the_spectrum(chi):
    assert rate_shape(TAB, chi) == pytest.approx(band(chi, 0), rel=1e-4)  # 0.37 lies between table rows


def sampler_moment(chi, m):
    """Int_0^1 delta(r)^m dr: the m-th moment of the sampled photon-energy fraction (deterministic)."""
    return quad(lambda r: sample_fraction(TAB, chi, r) ** m, 0.0, 1.0, limit=400, epsrel=1e-9,
                points=[0.5, 0.9, 0.99, 0.999])[0]


@pytest.mark.parametrize("chi", [1e-3, 0.1, 1.0, 10.0])
def test_mean_power_matches_the_first_moment_of_the_spectrum(chi):
    # power = rate * <delta> * gamma m c^2 = (alpha m^2 c^4/hbar) Int delta S d delta
    assert rate_shape(TAB, chi) * sampler_moment(chi, 1) == pytest.approx(band(chi, 1), rel=5e-4)


def test_quantum_power_reproduces_the_exact_gaunt_factor():
    # P_q/P_cl at chi = 1: 0.182075 (tests/test_quantum.py TABLE, exact column); P_cl = (2/3) chi^2 in these units
    assert rate_shape(TAB, 1.0) * sampler_moment(1.0, 1) / (2.0 / 3.0) == pytest.approx(0.182075, rel=5e-4)


def electron_in_uniform_b(gamma, chi):
    """B (T) giving chi to an electron of Lorentz factor gamma moving normal to B; chi = gamma beta c B/E_S."""
    beta = math.sqrt(1.0 - 1.0 / gamma**2)
    return chi * k.E_schwinger / (gamma * beta * k.c)


def test_classical_limit_photon_rate():
    # M. Sands, "The Physics of Electron Storage Rings", SLAC-121 (1970), sec. 5 (from memory):
    # mean photon rate N = (15 sqrt3/8) P/u_c, u_c = (3/2) hbar c gamma^3/rho, P the Lienard power
    gamma, chi = 2000.0, 1e-6
    b = electron_in_uniform_b(gamma, chi)
    beta = math.sqrt(1.0 - 1.0 / gamma**2)
    rho = gamma * k.m_e * beta * k.c / (k.e * b)
    lienard = k.e**2 * k.c * beta**4 * gamma**4 / (6.0 * math.pi * k.epsilon_0 * rho**2)   # Jackson 3rd ed. (14.31)
    u_c = 1.5 * k.hbar * k.c * gamma**3 / rho
    sands = 15.0 * math.sqrt(3.0) / 8.0 * lienard / u_c
    assert emission_rate(TAB, chi, gamma, UNIT) == pytest.approx(sands, rel=2e-5)   # quantum correction ~chi


def test_classical_limit_power_is_lienard():
    # Lienard power of circular motion, Jackson 3rd ed. sec. 14.2 (eq. number from memory)
    gamma, chi = 2000.0, 1e-5
    b = electron_in_uniform_b(gamma, chi)
    beta = math.sqrt(1.0 - 1.0 / gamma**2)
    rho = gamma * k.m_e * beta * k.c / (k.e * b)
    lienard = k.e**2 * k.c * beta**4 * gamma**4 / (6.0 * math.pi * k.epsilon_0 * rho**2)
    power = emission_rate(TAB, chi, gamma, UNIT) * sampler_moment(chi, 1) * gamma * k.m_e * k.c**2
    # g(chi) = 1 - 55 sqrt3/16 chi + ... (tracker/radiation/quantum.py docstring): 6e-5 below Lienard here
    assert power == pytest.approx(lienard * (1.0 - 55.0 * math.sqrt(3.0) / 16.0 * chi), rel=5e-4)


def test_spread_coefficient_is_the_ratio_of_the_classical_moments():
    # the justification of CHI_STOCHASTIC_MIN: gamma <delta^2>/<delta> -> SPREAD_COEFFICIENT gamma chi as chi -> 0
    chi = 1e-5
    assert band(chi, 2) / band(chi, 1) / chi == pytest.approx(SPREAD_COEFFICIENT, rel=1e-3)
    assert 0.0 < CHI_STOCHASTIC_MIN <= 1e-3


# ----------------------------------------------------------------------------- sampled spectrum
@pytest.mark.parametrize("chi", [0.01, 0.1, 1.0])
def test_sampled_photon_energies_follow_the_spectrum_chi_squared(chi):
    # chi^2 goodness of fit (scipy.stats.chisquare) of 2e5 sampled fractions in 30 bins of y
    n = 200_000
    r = np.random.default_rng(int(chi * 1000)).random(n)
    r = r[r > 0.0]
    delta = sample_fractions(TAB, chi, r)
    y = 2.0 * delta / (3.0 * chi * (1.0 - delta))
    edges = np.concatenate([[0.0], np.geomspace(1e-5, 12.0, 29), [np.inf]])
    total = band(chi, 0)
    expected = np.array([band(chi, 0, a, b) for a, b in zip(edges[:-1], edges[1:])]) / total
    assert expected.sum() == pytest.approx(1.0, abs=1e-8)
    observed = np.histogram(y, bins=edges)[0]
    keep = expected * len(r) >= 5
    obs = np.append(observed[keep], observed[~keep].sum())
    exp = np.append(expected[keep], expected[~keep].sum()) * len(r)
    assert stats.chisquare(obs, exp).pvalue > 1e-3


# ----------------------------------------------------------------------------- emission leaf
def test_each_emission_conserves_energy_and_keeps_the_direction():
    rng = np.random.default_rng(5)
    for trial in range(2000):
        gamma = 10 ** rng.uniform(0.3, 4.5)
        chi = 10 ** rng.uniform(-3, 1.5)
        direction = rng.normal(size=3)
        direction /= np.linalg.norm(direction)
        u = direction * math.sqrt(gamma**2 - 1.0)
        # a long interval so that an emission happens
        hit, t_emit, t_used, ux, uy, uz, eps = emit(TAB, 3, trial, 0, 0, gamma, chi, *u, 1e3, UNIT)
        assert hit and 0.0 <= t_emit <= t_used
        g_before = math.sqrt(1.0 + u @ u)
        g_after = math.sqrt(1.0 + ux * ux + uy * uy + uz * uz)
        assert g_before - g_after == pytest.approx(eps, abs=8 * 2.2e-16 * g_before)   # a few ulps
        assert eps > 0.0 and g_after >= 1.0
        if g_after > 1.0:
            assert np.allclose(np.array([ux, uy, uz]) / math.sqrt(g_after**2 - 1.0), direction, atol=1e-12)


@pytest.mark.parametrize("expected", [1e-4, 0.0099, 0.0101, 0.5, 3.7, 250.0])
def test_sub_steps_keep_the_emission_probability_below_the_bound(expected):
    n = substeps(expected)
    assert expected / n <= EMISSION_PROBABILITY_MAX
    assert n == 1.0 or expected / (n - 1.0) > EMISSION_PROBABILITY_MAX   # no more sub-steps than needed


@njit(cache=True)
def _count_at_fixed_rate(tab, seed, n, gamma, chi, t, unit):
    counts = np.zeros(n, dtype=np.int64)
    for i in range(n):
        left = t
        event = 0
        while left > 0.0:
            hit, t_emit, t_used, ux, uy, uz, eps = emit(tab, seed, i, 0, event, gamma, chi, 1.0, 0.0, 0.0, left, unit)
            if not hit:
                break
            counts[i] += 1
            event += 1
            left -= t_used
    return counts


@pytest.mark.parametrize("mean", [0.004, 2.0])
def test_photon_counts_are_poisson_within_the_sub_step_bound(mean):
    # a constant rate W over t: counts have mean W t exactly; the variance of Bernoulli sub-steps is
    # W t (1 - p) with p <= EMISSION_PROBABILITY_MAX (Poisson: W t)
    gamma, chi = 1000.0, 0.1
    t = mean / emission_rate(TAB, chi, gamma, UNIT)
    n = 200_000
    counts = _count_at_fixed_rate(TAB, 17, n, gamma, chi, t, UNIT)
    assert abs(counts.mean() - mean) < 4.0 * math.sqrt(mean / n)
    var_err = 4.0 * math.sqrt(2.0 / n) * mean + 4.0 * math.sqrt(mean / n)
    assert mean * (1.0 - EMISSION_PROBABILITY_MAX) - var_err < counts.var() < mean + var_err


# ----------------------------------------------------------------------------- ensembles at fixed chi/gamma
def ensemble(seed, n, gamma0, chi0, dt, steps):
    g = np.empty(n)
    e = np.empty(n)
    c = np.empty(n, dtype=np.int64)
    constant_field_ensemble(TAB, seed, gamma0, chi0 / gamma0, dt, steps, UNIT, g, e, c)
    return g, e, c


def test_ensemble_mean_loss_equals_the_quantum_corrected_continuous_loss():
    # continuous model: d gamma/dt = -P_q/(m c^2) = -UNIT Int delta S d delta (chi), chi = a gamma;
    # the power is interpolated from quad values over the small chi range the run covers
    gamma0, chi0, n = 1000.0, 0.1, 100_000
    duration = 0.03 * gamma0 / (UNIT * band(chi0, 1))          # ~3 % mean loss
    steps = 20
    g, e, c = ensemble(101, n, gamma0, chi0, duration / steps, steps)
    grid = np.linspace(0.9 * chi0, chi0, 5)
    power = np.array([band(x, 1) for x in grid])
    sol = solve_ivp(lambda t, y: [-UNIT * np.interp(chi0 / gamma0 * y[0], grid, power)], (0, duration), [gamma0],
                    rtol=1e-10, atol=1e-10)
    expected_loss = gamma0 - sol.y[0, -1]
    loss = gamma0 - g
    assert abs(loss.mean() - expected_loss) < 4.0 * loss.std() / math.sqrt(n)
    assert np.allclose(loss, e, rtol=0, atol=1e-9 * gamma0)     # particle energy lost == photon energy


def test_early_variance_growth_equals_the_second_moment_of_the_spectrum():
    # Var(gamma) grows at the rate of <(delta gamma)^2>: d Var/dt = W gamma^2 <delta^2> = UNIT gamma Int delta^2 S
    gamma0, chi0, n = 1000.0, 0.1, 100_000
    rate2 = UNIT * gamma0 * band(chi0, 2)
    duration = 0.02 * gamma0**2 * 0.01 / rate2                 # variance ~ (1.4 % gamma0)^2
    g, e, c = ensemble(202, n, gamma0, chi0, duration / 10, 10)
    d = g - gamma0
    var = d.var()
    # standard error of the sample variance: sqrt((m4 - var^2)/n)
    err = math.sqrt((np.mean((d - d.mean()) ** 4) - var**2) / n)
    assert abs(var - rate2 * duration) < 4.0 * err + 0.02 * var   # 2 %: drift of chi over the run


ENSEMBLE_SCRIPT = """
import hashlib, sys, numpy as np
from tracker import constants as k
from tracker.radiation.stochastic import constant_field_ensemble, rate_unit, table
n = 64
g, e, c = np.empty(n), np.empty(n), np.empty(n, dtype=np.int64)
constant_field_ensemble(table(), int(sys.argv[1]), 1000.0, 1e-4, 2e-15, 400, rate_unit(-k.e, k.m_e), g, e, c)
print(hashlib.sha256(g.tobytes() + e.tobytes() + c.tobytes()).hexdigest(), int(c.sum()))
"""


def run_ensemble(seed, threads):
    env = dict(os.environ, NUMBA_NUM_THREADS=str(threads))
    out = subprocess.run([sys.executable, "-c", ENSEMBLE_SCRIPT, str(seed)], env=env, capture_output=True,
                         text=True, check=True, timeout=600)
    digest, photons = out.stdout.split()
    return digest, int(photons)


def test_same_seed_same_photons_with_one_and_two_threads_and_seeds_differ():
    one = run_ensemble(7, 1)
    two = run_ensemble(7, 2)
    assert one == two and one[1] > 100
    assert run_ensemble(8, 2)[0] != one[0]
