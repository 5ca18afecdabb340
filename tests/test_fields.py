"""Field models against their defining formulas and Maxwell's equations.

- Vacuum fields satisfy div B = 0 and (static) curl B = 0 (Jackson, Classical
  Electrodynamics, 3rd ed., ch. 5); checked by central differences here.
- Dipole: B = mu0/(4 pi r^3) [3 (M.r^) r^ - M] (Jackson sec. 5.6, from memory), and on a
  planet |B| = B_eq (R/r)^3 sqrt(1 + 3 sin^2 lat) (Walt, Introduction to Geomagnetically
  Trapped Radiation, ch. 4, from memory).
- Plane wave: B = n x E/c, E normal to n, peak E0 = a0 m_e c w/e (Jackson sec. 7.1, from memory).
- Undulator: K = e B0 lambda_u/(2 pi m c) = 0.934 B0[T] lambda_u[cm] (X-ray Data Booklet sec. 2.1;
  section number from memory).
"""

import math

import numpy as np
import pytest
from scipy import constants as sc

from builders import scenario
from tracker import track

H = 1e-6


def field_only(fields, position=(0.7, 0.003, 0.1)):
    # the particle sits away from every model's singular points (dipole centre, tokamak axis)
    # and where the fields are moderate (the undulator grows as cosh(k_u y)): the plan
    # refuses a step that cannot resolve the gyration or laser period at the start
    particle = {"species": "electron", "position": list(position), "gamma": 2.0, "direction": [1, 0, 0]}
    return scenario(fields, duration=1e-16, particle=particle, dt=1e-18)


def derivatives(s, point, t=0.0, h=H):
    """dB_i/dx_j (3x3) by central differences."""
    jac = np.zeros((3, 3))
    for j in range(3):
        step = np.zeros(3)
        step[j] = h
        _, bp = s.fields_at(np.array([point + step]), t)
        _, bm = s.fields_at(np.array([point - step]), t)
        jac[:, j] = (bp[0] - bm[0]) / (2 * h)
    return jac


@pytest.mark.parametrize("fields,point,curl_free", [
    ([{"type": "mirror", "B0": 2.0, "L": 0.3}], [0.01, -0.02, 0.1], False),
    ([{"type": "dipole", "moment": [1e3, -2e3, 5e3], "center": [0.1, 0, 0]}], [0.4, 0.3, -0.2], True),
    ([{"type": "undulator", "B0": 1.2, "period": 0.03, "length": 0.9}], [0.001, 0.004, 0.3], True),
    ([{"type": "tokamak", "R0": 1.7, "B0": 2.5, "q": 2.0}], [1.9, 0.3, 0.2], False),
])
def test_magnetic_fields_are_divergence_free(fields, point, curl_free):
    s = field_only(fields)
    jac = derivatives(s, np.array(point, float))
    scale = np.abs(jac).max()
    assert abs(np.trace(jac)) < 1e-7 * scale
    if curl_free:
        curl = np.array([jac[2, 1] - jac[1, 2], jac[0, 2] - jac[2, 0], jac[1, 0] - jac[0, 1]])
        assert np.abs(curl).max() < 1e-7 * scale


def test_dipole_matches_planetary_latitude_law():
    moment, radius = 8.0e22, 6.3712e6
    s = field_only([{"type": "dipole", "moment": [0, 0, -moment]}], position=(2.5 * radius, 0.0, 0.0))
    b_eq = sc.mu_0 * moment / (4 * math.pi * radius**3)
    for lat in np.radians([0.0, 20.0, 45.0, 70.0]):
        r = 2.5 * radius
        _, b = s.fields_at([[r * math.cos(lat), 0.0, r * math.sin(lat)]], 0.0)
        expected = b_eq / 2.5**3 * math.sqrt(1 + 3 * math.sin(lat) ** 2)
        assert np.linalg.norm(b[0]) == pytest.approx(expected, rel=1e-12)


def test_mirror_on_axis_profile():
    s = field_only([{"type": "mirror", "B0": 2.0, "L": 0.3, "center": [0, 0, 0.1]}])
    z = np.linspace(-0.5, 0.5, 11)
    _, b = s.fields_at(np.c_[0 * z, 0 * z, z], 0.0)
    assert np.allclose(b[:, 2], 2.0 * (1 + (z - 0.1) ** 2 / 0.09), rtol=1e-14)
    assert np.allclose(b[:, :2], 0.0)


@pytest.mark.parametrize("polarization", ["linear", "circular"])
def test_plane_wave_is_transverse_with_b_equal_n_cross_e_over_c(polarization):
    n = np.array([1.0, 2.0, 2.0]) / 3.0
    s = field_only([{"type": "plane-wave", "a0": 3.0, "wavelength": 1e-6, "direction": list(n),
                     "polarization": polarization, "envelope": "gaussian", "duration": 20e-15}])
    pts = np.outer(np.linspace(-3e-6, 3e-6, 4001), n)
    e, b = s.fields_at(pts, 0.0)
    assert np.abs(e @ n).max() < 1e-6 * np.abs(e).max()
    assert np.allclose(b, np.cross(n, e) / sc.c, atol=1e-12 * np.abs(b).max())
    omega = 2 * math.pi * sc.c / 1e-6
    peak = 3.0 * sc.m_e * sc.c * omega / sc.e
    # the envelope derivative adds ~1/(omega tau) ~ 1 % to the carrier term near the peak
    assert np.linalg.norm(e, axis=1).max() == pytest.approx(peak, rel=2e-2)


def test_plane_wave_e0_and_a0_agree():
    common = {"type": "plane-wave", "wavelength": 0.8e-6, "envelope": "sin2", "duration": 30e-15}
    omega = 2 * math.pi * sc.c / 0.8e-6
    e0 = 5.0 * sc.m_e * sc.c * omega / sc.e
    a = field_only([{**common, "a0": 5.0}]).field_table[1]
    b = field_only([{**common, "E0": e0}]).field_table[1]
    assert np.allclose(a, b, rtol=1e-12)


def test_gaussian_duration_is_intensity_fwhm():
    tau = 30e-15
    s = field_only([{"type": "plane-wave", "a0": 1.0, "wavelength": 0.8e-6, "envelope": "gaussian",
                     "polarization": "circular", "duration": tau}])
    t = np.linspace(-2 * tau, 2 * tau, 4001)
    intensity = np.array([np.sum(s.fields_at([[0, 0, 0]], ti)[0] ** 2) for ti in t])
    above = t[intensity >= 0.5 * intensity.max()]
    # circular polarisation has no carrier ripple in |E|^2; 1/(omega tau)^2 corrections ~ 1e-3
    assert above[-1] - above[0] == pytest.approx(tau, rel=3e-3)


def test_undulator_k_and_on_axis_exit_parallel():
    k_param = sc.e * 0.5 * 0.02 / (2 * math.pi * sc.m_e * sc.c)
    assert k_param == pytest.approx(0.934 * 0.5 * 2, rel=1e-3)      # X-ray Data Booklet K formula
    result = track(scenario([{"type": "undulator", "B0": 0.5, "period": 0.02, "length": 0.4, "start": 0.0}],
                            duration=0.5 / sc.c, particle={"species": "electron", "position": [0, 0, -0.02],
                                                           "gamma": 1000.0, "direction": [0, 0, 1]},
                            steps_per_period=200, save_every=10))
    gamma = 1000.0
    inside = (result.x[:, 2] > 0) & (result.x[:, 2] < 0.4)
    # peak transverse angle K/gamma (X-ray Data Booklet sec. 2.1), oscillating about zero
    angle = result.u[inside, 0] / result.u[inside, 2]
    assert np.abs(angle).max() == pytest.approx(k_param / gamma, rel=1e-4)
    full = (result.x[:, 2] > 0.01) & (result.x[:, 2] < 0.39)
    assert abs(np.mean(angle[full[inside]])) < 2e-2 * k_param / gamma
    # half-strength end half-periods: exit parallel, displaced by K period/(2 gamma)
    after = result.x[:, 2] > 0.41
    assert np.abs(result.u[after, 0]).max() < 1e-3 * k_param
    assert np.allclose(np.abs(result.x[after, 0]), k_param * 0.02 / (2 * gamma), rtol=1e-3)


def test_tokamak_safety_factor_and_loop_field():
    r0, b0, q = 1.7, 2.5, 2.0
    s = field_only([{"type": "tokamak", "R0": r0, "B0": b0, "q": q, "loop_voltage": 3.0}])
    minor = 0.01
    e, b = s.fields_at([[r0 + minor, 0.0, 0.0]], 0.0)
    b_tor, b_pol = abs(b[0, 1]), abs(b[0, 2])
    # q = r B_tor/(R0 B_pol) on a circular large-aspect-ratio surface (J. Wesson, Tokamaks, ch. 3; chapter from memory)
    assert minor * b_tor / ((r0 + minor) * b_pol) == pytest.approx(q * r0 / (r0 + minor), rel=1e-12)
    assert b_tor == pytest.approx(b0 * r0 / (r0 + minor), rel=1e-12)
    assert np.linalg.norm(e[0]) == pytest.approx(3.0 / (2 * math.pi * (r0 + minor)), rel=1e-12)


def test_fields_sum_over_components():
    one = field_only([{"type": "uniform", "E": [1.0, 2.0, 3.0]}])
    two = field_only([{"type": "uniform", "E": [1.0, 2.0, 3.0]}, {"type": "mirror", "B0": 1.0, "L": 1.0}])
    mirror = field_only([{"type": "mirror", "B0": 1.0, "L": 1.0}])
    pts = np.random.default_rng(1).normal(size=(5, 3))
    e1, _ = one.fields_at(pts, 0.0)
    e2, b2 = two.fields_at(pts, 0.0)
    _, bm = mirror.fields_at(pts, 0.0)
    assert np.array_equal(e1, e2) and np.array_equal(b2, bm)
