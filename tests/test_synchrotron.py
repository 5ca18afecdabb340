"""Synchrotron spectrum along tracked orbits against handbook values and the radiation integral.

Sources (check values computed independently of radorbit: F(x) = x Int_x^inf K_5/3 by quadrature
of scipy.special.kv, ring numbers from the formulas below with scipy constants):
- X-ray Data Booklet (LBNL), sec. 2.1 "Characteristics of synchrotron radiation" (K.-J. Kim):
  eps_c[keV] = 0.665 E^2[GeV] B[T]; coefficient's printed form from memory -- verify.
- J. D. Jackson, Classical Electrodynamics, 3rd ed., sec. 14.6: omega_c = (3/2) gamma^3 c/rho and
  the K_{5/3} spectrum (from memory -- verify).
- G. B. Rybicki and A. P. Lightman, Radiative Processes in Astrophysics, ch. 6: F(x) and
  omega_c = (3/2) gamma^2 (qB/m) sin(alpha) for a pitch angle alpha (from memory -- verify).
- scipy.special.kv with scipy.integrate.quad as an independent evaluation of F.
"""

import math

import numpy as np
import pytest
from scipy.integrate import quad
from scipy.special import kv

from tracker import Scenario, ScenarioError, track
from tracker import constants as k
from tracker.radiation import (critical_frequency, photon_spectrum, spectrum, synchrotron_spectrum,
                               universal_function)

# E = 3 GeV, rho = 7 m: gamma = E/(m c^2), B = p/(e rho) with scipy constants
RING_GAMMA = 5870.853543
RING_B = 1.42956039


def circle_scenario(gamma, B, duration, steps, direction=(1.0, 0.0, 0.0), save_every=1):
    """Electron with Lorentz factor gamma in a uniform B (T) along z, no damping."""
    return Scenario.from_dict({
        "run": {"duration": duration, "dt": duration / steps, "radiation_reaction": "none",
                "save_every": save_every},
        "particle": {"species": "electron", "position": [0.0, 0.0, 0.0], "gamma": gamma,
                     "direction": list(direction)},
        "field": [{"type": "uniform", "B": [0.0, 0.0, B]}],
    })


@pytest.fixture(scope="module")
def ring_arc():
    """3 GeV electron on a 7 m bending radius for 1 ns (0.043 rad), 1000 steps."""
    return track(circle_scenario(RING_GAMMA, RING_B, 1e-9, 1000))


def log_integral(values, omega):
    """Int values d(omega) on a log-spaced grid, trapezoid in ln(omega)."""
    return float(np.trapezoid(values * omega, np.log(omega)))


# ---------------------------------------------------------------------- F(x)
@pytest.mark.parametrize("x, value", [(0.01, 0.444973), (0.1, 0.818186), (1.0, 0.651423),
                                      (3.0, 0.1285657), (10.0, 1.922383e-4)])
def test_universal_function_check_values(x, value):
    # x Int_x^inf K_5/3 by scipy quadrature of scipy.special.kv (values printed to 6-7 digits)
    assert universal_function(np.array([x]))[0] == pytest.approx(value, rel=3e-6)


@pytest.mark.parametrize("x", [1e-6, 1e-3, 0.3, 2.0, 20.0, 80.0])
def test_universal_function_against_scipy_quadrature(x):
    # F(x) = x Int_x^inf K_{5/3}(t) dt, evaluated independently with scipy.special.kv + quad
    tail = quad(lambda t: kv(5.0 / 3.0, t), max(x, 1.0), np.inf, limit=200)[0]
    head = quad(lambda t: kv(5.0 / 3.0, t), x, 1.0, limit=200)[0] if x < 1.0 else 0.0
    assert universal_function(np.array([x]))[0] == pytest.approx(x * (head + tail), rel=2e-6)


def test_universal_function_peak_and_integral():
    # peak F(0.285812) = 0.918012 (scipy quadrature, as above); Int_0^inf F dx = 8 pi/(9 sqrt3)
    x = np.geomspace(1e-9, 400.0, 200001)
    f = universal_function(x)
    assert x[np.argmax(f)] == pytest.approx(0.285812, rel=1e-3)
    assert f.max() == pytest.approx(0.918012, rel=1e-6)
    assert log_integral(f, x) == pytest.approx(8 * math.pi / (9 * math.sqrt(3)), rel=1e-5)


# ---------------------------------------------------------------------- handbook values on a tracked orbit
def test_critical_photon_energy_of_a_3_gev_bend(ring_arc):
    wc = critical_frequency(ring_arc)
    kev = k.hbar * wc / k.e / 1e3
    # exact (3/2) gamma^3 c/rho: 8.556249 keV (evaluated with scipy constants); X-ray Data Booklet 0.665 E^2[GeV] B[T] = 8.5559 keV
    np.testing.assert_allclose(kev, 8.556249, rtol=2e-6)
    assert kev.mean() == pytest.approx(0.665 * 3.0**2 * RING_B, rel=1e-3)


def test_half_the_power_lies_above_the_critical_frequency(ring_arc):
    # Int_1^inf S dx = 0.4999947 (scipy quadrature of S = (9 sqrt3/(8 pi)) F); Jackson sec. 14.6
    wc = float(critical_frequency(ring_arc)[0])
    below = np.geomspace(1e-10, 1.0, 20001) * wc    # omega_c is a node of both grids
    above = np.geomspace(1.0, 80.0, 20001) * wc
    energy_below = log_integral(synchrotron_spectrum(ring_arc, below), below)
    energy_above = log_integral(synchrotron_spectrum(ring_arc, above), above)
    assert energy_above / (energy_below + energy_above) == pytest.approx(0.4999947, abs=2e-6)
    # the spectrum integrates to the energy radiated along the orbit (Lienard, engine's record)
    assert energy_below + energy_above == pytest.approx(ring_arc.radiated_energy[-1], rel=2e-5)


def test_photons_per_radian_and_mean_photon_energy(ring_arc):
    # dN/dtheta = (5/(2 sqrt3)) alpha gamma = 61.837 (evaluated with scipy constants) per radian at 3 GeV;
    # <eps>/eps_c = 8/(15 sqrt3) = 0.30792 (Sands, SLAC-121, ch. 4 / X-ray Data Booklet sec. 2.1, from memory)
    wc = float(critical_frequency(ring_arc)[0])
    omega = np.geomspace(1e-12, 80.0, 12001) * wc
    dn = photon_spectrum(ring_arc, omega)
    r = ring_arc
    bend = float(np.arccos(np.dot(r.u[0], r.u[-1]) / (np.linalg.norm(r.u[0]) * np.linalg.norm(r.u[-1]))))
    photons = log_integral(dn, omega)
    assert photons / bend == pytest.approx(61.837, rel=1e-3)
    mean_energy = log_integral(dn * k.hbar * omega, omega) / photons
    assert mean_energy / (k.hbar * wc) == pytest.approx(8 / (15 * math.sqrt(3)), rel=1e-3)


def test_helical_orbit_critical_frequency_follows_the_pitch_angle():
    # Rybicki & Lightman ch. 6: omega_c = (3/2) gamma^2 (eB/m) sin(alpha); with Jackson's
    # (3/2) gamma^3 c/rho and rho = v/(omega_B sin alpha) the two differ by a factor 1/beta
    # [derived].
    gamma, B, alpha = 1000.0, 1.0, math.radians(30.0)
    result = track(circle_scenario(gamma, B, 1e-10, 200, direction=(math.sin(alpha), 0.0, math.cos(alpha))))
    beta = math.sqrt(1 - 1 / gamma**2)
    expected = 1.5 * gamma**2 * k.e * B / k.m_e * math.sin(alpha) / beta
    np.testing.assert_allclose(critical_frequency(result), expected, rtol=1e-9)


def test_acceptance_cone_counts_the_states_pointing_into_it():
    # geometry only: a full circle at constant power puts 1/4 of the energy into velocities
    # within 45 deg of any in-plane direction (exact for a uniformly sampled circle)
    gamma, B = 20.0, 1.0
    period = 2 * math.pi * gamma * k.m_e / (k.e * B)
    result = track(circle_scenario(gamma, B, period, 8000))
    wc = float(critical_frequency(result).max())
    omega = np.geomspace(1e-9, 60.0, 4001) * wc
    full = log_integral(synchrotron_spectrum(result, omega), omega)
    part = log_integral(synchrotron_spectrum(result, omega, acceptance=([0.0, 1.0, 0.0], math.pi / 4)), omega)
    assert part / full == pytest.approx(0.25, abs=2e-4)


def test_bad_synchrotron_arguments_name_the_key(ring_arc):
    with pytest.raises(ScenarioError, match="^omega"):
        synchrotron_spectrum(ring_arc, [-1.0, 2.0])
    with pytest.raises(ScenarioError, match="^acceptance"):
        synchrotron_spectrum(ring_arc, [1e18], acceptance=([0.0, 0.0, 0.0], 0.1))
    with pytest.raises(ScenarioError, match="^acceptance"):
        synchrotron_spectrum(ring_arc, [1e18], acceptance="wide")


# ---------------------------------------------------------------------- radiation integral vs universal function
@pytest.fixture(scope="module")
def arc_100():
    """Electron, gamma = 100, B = 1 T: an arc of 0.3 rad = 30/gamma, sampled finely enough for 12 omega_c."""
    gamma, B = 100.0, 1.0
    rho = math.sqrt(gamma**2 - 1) * k.m_e * k.c / (k.e * B)
    beta = math.sqrt(1 - 1 / gamma**2)
    arc = 0.3
    duration = arc * rho / (beta * k.c)
    result = track(circle_scenario(gamma, B, duration, 32000))
    mid = len(result.t) // 2
    tangent = result.u[mid] / np.linalg.norm(result.u[mid])
    return result, tangent, arc, rho / (beta * k.c)


def vertical_directions(tangent, gamma, width, n):
    """Directions tilted by psi in [0, width/gamma] above the orbit plane, Gauss-Legendre nodes and weights."""
    x, w = np.polynomial.legendre.leggauss(n)
    psi = 0.5 * width / gamma * (x + 1.0)
    weights = 0.5 * width / gamma * w
    up = np.array([0.0, 0.0, 1.0])
    return np.cos(psi)[:, None] * tangent + np.sin(psi)[:, None] * up, weights


def test_radiation_integral_reproduces_the_synchrotron_spectrum(arc_100):
    # Jackson sec. 14.6: integrating the angle-resolved radiation integral over the vertical angle
    # gives, per radian of bend, (P rho/c)/omega_c S(omega/omega_c) (up to O(1/gamma^2)).
    result, tangent, arc, _ = arc_100
    wc = float(critical_frequency(result)[0])
    directions, weights = vertical_directions(tangent, 100.0, 12.0, 40)
    x = np.geomspace(0.05, 4.0, 40)
    values = spectrum(result, directions, x * wc)
    per_radian = 2.0 * weights @ values        # both sides of the orbit plane
    expected = synchrotron_spectrum(result, x * wc) / arc
    np.testing.assert_allclose(per_radian, expected, rtol=1e-3)


def test_half_the_radiation_integral_power_is_above_the_critical_frequency(arc_100):
    # Int_1^inf S dx = 0.4999947 (scipy quadrature, as above); the energy per radian of bend is
    # P rho/(beta c) with P the Lienard power (Jackson 14.26) recorded by the engine.
    result, tangent, arc, time_per_radian = arc_100
    wc = float(critical_frequency(result)[0])
    directions, weights = vertical_directions(tangent, 100.0, 8.0, 24)
    omega = np.geomspace(1.0, 12.0, 200) * wc
    per_radian = 2.0 * weights @ spectrum(result, directions, omega)
    above = log_integral(per_radian, omega)
    assert above / (result.power[0] * time_per_radian) == pytest.approx(0.4999947, abs=3e-4)
