"""The focused laser pulse (gaussian-beam) against the textbook Gaussian beam and the ponderomotive force.

Sources:
- A. E. Siegman, Lasers (University Science Books, 1986), ch. 17 (chapter from memory):
  the TEM00 beam u ~ (w0/w) exp(-r^2/w^2) exp(i[psi - k r^2/(2R)]), w(z) = w0 sqrt(1 + z^2/z_R^2),
  z_R = pi w0^2/lambda, Gouy phase psi = arctan(z/z_R), so the intensity at the focus is
  exp(-2 r^2/w0^2) and on the axis it halves at z = z_R.
- M. Lax, W. H. Louisell and W. B. McKnight, Phys. Rev. A 11, 1365 (1975): the paraxial
  field with its first-order longitudinal part satisfies Maxwell's equations up to the
  second order in 1/(k w0); checked here on div E and div B.
- Ponderomotive force on an electron in a linearly polarised field of slowly varying
  amplitude E_s: f = -(e^2/(4 m w^2)) grad E_s^2 = -(m c^2/4) grad a^2 (F. F. Chen,
  Introduction to Plasma Physics and Controlled Fusion, 2nd ed., sec. 8.4, from memory).
"""

import math

import numpy as np
import pytest
from scipy import constants as sc

from builders import scenario
from tracker import track
from tracker.cli import main

LAMBDA = 1e-6
OMEGA = 2 * math.pi * sc.c / LAMBDA
K = 2 * math.pi / LAMBDA


def beam(waist=5e-6, duration=1e-12, **extra):
    field = {"type": "gaussian-beam", "a0": 1.0, "wavelength": LAMBDA, "waist": waist, "duration": duration,
             "envelope": "gaussian", **extra}
    particle = {"species": "electron", "position": [0.0, 0.0, 0.0], "gamma": 2.0, "direction": [1, 0, 0]}
    return scenario([field], duration=1e-13, particle=particle, dt=1e-16)


def phasor(s, point, zeta, component=0):
    """(amplitude, phase) of one E component at ``point`` over one carrier period at the envelope peak.

    E = -A (g' cos th - g w sin th) with th = w tau + psi - k r^2/(2R); g' ~ 0 at the peak, so
    E = M sin(w tau + phi): least squares on sin and cos gives M and phi.
    """
    tau = np.linspace(-math.pi / OMEGA, math.pi / OMEGA, 64, endpoint=False)  # centred on the peak
    values = np.array([s.fields_at([point], zeta / sc.c + t)[0][0, component] for t in tau])
    basis = np.column_stack([np.sin(OMEGA * tau), np.cos(OMEGA * tau)])
    (alpha, beta), *_ = np.linalg.lstsq(basis, values, rcond=None)
    return math.hypot(alpha, beta), math.atan2(beta, alpha)


def test_focal_plane_profile_is_exp_minus_2_r2_over_w0_squared():
    w0 = 5e-6
    s = beam(w0)
    r = np.linspace(0.0, 2.5 * w0, 11)
    for t in (0.3e-15, 1.1e-15):  # any instant: at the focus the phase does not depend on r (1/R = 0)
        e, _ = s.fields_at(np.c_[r * 0.6, r * 0.8, 0 * r], t)
        intensity = np.sum(e[:, :2] ** 2, axis=1)
        assert np.allclose(intensity / intensity[0], np.exp(-2 * r**2 / w0**2), rtol=1e-12, atol=0)


def test_beam_width_rayleigh_length_and_gouy_phase_on_the_axis():
    w0 = 5e-6
    z_r = math.pi * w0**2 / LAMBDA  # Siegman ch. 17
    s = beam(w0)
    m0, phi0 = phasor(s, [0, 0, 0], 0.0)
    for zeta in (-z_r, 0.4 * z_r, z_r, 3 * z_r):
        m_axis, phi = phasor(s, [0, 0, zeta], zeta)
        width = w0 * math.sqrt(1 + (zeta / z_r) ** 2)
        # on-axis intensity (w0/w)^2: one half at z = z_R
        assert (m_axis / m0) ** 2 == pytest.approx((w0 / width) ** 2, rel=1e-5)
        # Gouy phase arctan(z/z_R) relative to the focus
        assert phi - phi0 == pytest.approx(math.atan(zeta / z_r), abs=1e-5)
        # width from the fall-off at r = w0 off the axis: exp(-r^2/w^2)
        m_off, _ = phasor(s, [0, w0, zeta], zeta)
        assert math.sqrt(-w0**2 / math.log(m_off / m_axis)) == pytest.approx(width, rel=1e-5)


def test_equals_the_plane_wave_pulse_on_the_axis_at_the_focus():
    # at the focus U = 1: the same vector potential, envelope and phase as plane-wave
    common = {"a0": 3.0, "wavelength": LAMBDA, "duration": 20e-15, "envelope": "sin2", "phase": 0.7,
              "direction": [0, 1, 0], "polarization": "circular"}
    particle = {"species": "electron", "position": [0.0, 0.0, 0.0], "gamma": 2.0, "direction": [1, 0, 0]}
    g = scenario([{"type": "gaussian-beam", "waist": 4e-6, "focus": [1e-6, 2e-6, 3e-6], **common}],
                 duration=1e-13, particle=particle, dt=1e-16)
    p = scenario([{"type": "plane-wave", "peak_position": [1e-6, 2e-6, 3e-6], **common}],
                 duration=1e-13, particle=particle, dt=1e-16)
    for t in np.linspace(-15e-15, 15e-15, 7):
        eg, bg = g.fields_at([[1e-6, 2e-6, 3e-6]], t)
        ep, bp = p.fields_at([[1e-6, 2e-6, 3e-6]], t)
        assert np.allclose(eg, ep, rtol=1e-13, atol=1e-13 * np.abs(ep).max())
        assert np.allclose(bg, bp, rtol=1e-13, atol=1e-13 * np.abs(bp).max())


def relative_divergence(s, point, t, h=LAMBDA / 2000):
    """(|div E|, |div B|) relative to k |E| and k |B| at the point (central differences)."""
    div_e = div_b = 0.0
    for j in range(3):
        step = np.zeros(3)
        step[j] = h
        ep, bp = s.fields_at([np.asarray(point) + step], t)
        em, bm = s.fields_at([np.asarray(point) - step], t)
        div_e += (ep[0, j] - em[0, j]) / (2 * h)
        div_b += (bp[0, j] - bm[0, j]) / (2 * h)
    e, b = s.fields_at([point], t)
    return abs(div_e) / (K * np.abs(e).max()), abs(div_b) / (K * np.abs(b).max())


@pytest.mark.parametrize("polarization", ["linear", "circular"])
def test_longitudinal_fields_make_the_divergence_second_order(polarization):
    # Lax, Louisell & McKnight (1975): with the first-order E_z, B_z the residual is O(1/(k w0)^2)
    residual = []
    for waist in (3 * LAMBDA, 6 * LAMBDA):
        s = beam(waist, polarization=polarization)
        z_r = math.pi * waist**2 / LAMBDA
        worst = np.zeros(2)
        for point, t in (([0.5 * waist, 0.3 * waist, 0.5 * z_r], 0.21e-15), ([-0.7 * waist, 0.2 * waist, -z_r], 0.0),
                         ([0.3 * waist, -0.6 * waist, 0.1 * z_r], 1.3e-15)):
            worst = np.maximum(worst, relative_divergence(s, point, t + point[2] / sc.c))
        residual.append(worst)
        eps = 1 / (K * waist)
        assert np.all(worst < 2 * eps**2), (worst, eps**2)
    ratio = residual[0] / residual[1]
    assert np.all(ratio > 3.0), ratio  # halving 1/(k w0) divides the residual by ~4


def test_circular_polarisation_has_a_constant_field_magnitude_on_the_axis():
    s = beam(5e-6, polarization="circular")
    tau = np.linspace(0, 2 * math.pi / OMEGA, 32, endpoint=False)
    e2 = np.array([np.sum(s.fields_at([[0, 0, 0]], t)[0][0, :2] ** 2) for t in tau])
    assert np.std(e2) < 1e-4 * np.mean(e2)


def test_narrow_waist_warns_before_and_after_the_run(tmp_path, capsys):
    (tmp_path / "tight.toml").write_text(
        '[run]\nduration = "20 fs"\nsteps_per_period = 30\nradiation_reaction = "none"\n'
        '[particle]\nspecies = "electron"\ngamma = 1\ndirection = [1, 0, 0]\nposition = ["0.3 um", 0, 0]\n'
        '[[field]]\ntype = "gaussian-beam"\na0 = 0.1\nwavelength = "0.8 um"\nwaist = "1.2 um"\n'
        'duration = "10 fs"\nfocus_time = "10 fs"\n')
    assert main(["check", str(tmp_path / "tight.toml")]) == 0
    out = capsys.readouterr().out
    assert "warning (domain)" in out and "1.5 wavelengths" in out
    assert "laser period seen by the particle" in out
    from tracker import load_scenario

    result = track(load_scenario(tmp_path / "tight.toml"))
    assert any(w["kind"] == "domain" and "paraxial" in w["message"] for w in result.warnings)


def test_ponderomotive_force_pushes_an_electron_out_of_the_focus():
    # electron at rest at y0 = w0/2 beside the focus of a long a0 = 0.05 pulse (c T = 30 um << z_R = 314 um)
    w0, a0, fwhm, y0 = 10e-6, 0.05, 100e-15, 5e-6
    field = {"type": "gaussian-beam", "a0": a0, "wavelength": LAMBDA, "waist": w0, "duration": fwhm,
             "envelope": "gaussian", "focus_time": 300e-15}
    particle = {"species": "electron", "position": [0.0, y0, 0.0], "gamma": 1.0, "direction": [1, 0, 0]}
    result = track(scenario([field], duration=600e-15, particle=particle, steps_per_period=40))
    assert result.meta["stop_reason"] == "completed"
    # Chen sec. 8.4: f_y = -(m c^2/4) d/dy [a0^2 g^2 exp(-2 r^2/w0^2)], integrated over the pulse with
    # int g^2 dt = fwhm sqrt(pi/(4 ln 2)) for the Gaussian intensity envelope of FWHM `fwhm`
    expected = sc.c * a0**2 * y0 / w0**2 * math.exp(-2 * y0**2 / w0**2) * fwhm * math.sqrt(math.pi / (4 * math.log(2)))
    u_final = result.u[-1]
    assert u_final[1] > 0  # outwards, away from the axis
    assert u_final[1] == pytest.approx(expected, rel=0.05)  # measured: 0.2 % apart
    # the transverse push dominates the quiver that is left once the pulse has gone
    assert abs(u_final[0]) < 0.1 * u_final[1]
