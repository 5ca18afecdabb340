"""Pure magnetic field and crossed fields without radiation reaction.

Closed forms: gyroradius r_L = p_perp/(|q| B), relativistic gyrofrequency
omega_c = |q| B/(gamma m), E x B drift v_E = E x B/B^2 (F. F. Chen, Introduction to
Plasma Physics and Controlled Fusion, ch. 2, secs. 2.2-2.3; section numbers from memory).
"""

import math

import numpy as np
import pytest
from scipy import constants as sc

from builders import electron, scenario
from tracker import track

M_E, E_CHARGE, C = sc.m_e, sc.e, sc.c


@pytest.fixture(scope="module")
def gyration():
    # electron, T = 1 MeV, B = 1 T; 1000 steps per turn, 20 turns
    return track(scenario([{"type": "uniform", "B": [0, 0, 1.0]}], duration=20 * 1.056337e-10,
                          particle=electron(kinetic_energy="1 MeV", direction=[1, 0, 0]),
                          steps_per_period=1000))


def test_momentum_magnitude_is_conserved_to_round_off(gyration):
    # Boris rotation is exactly norm-preserving when E = 0 (Higuera & Cary 2017, abstract)
    u = np.linalg.norm(gyration.u, axis=1)
    assert np.max(np.abs(u / u[0] - 1.0)) < 1e-13
    assert np.max(np.abs(gyration.gamma / gyration.gamma[0] - 1.0)) < 1e-13


def test_gyroradius_matches_textbook(gyration):
    # r_L = p/(|q| B): 4.743180e-3 m for 1 MeV electron at 1 T (physics reference check value)
    gamma = 1.0 + 1e6 * E_CHARGE / (M_E * C**2)
    r_expected = M_E * C * math.sqrt(gamma**2 - 1.0) / (E_CHARGE * 1.0)
    assert r_expected == pytest.approx(4.743180e-3, rel=1e-6)
    xy = gyration.x[:, :2]
    center = 0.5 * (xy.max(axis=0) + xy.min(axis=0))
    radius = np.linalg.norm(xy - center, axis=1)
    # Boris circle radius differs from r_L by ~ theta^2/24 (theta = 2 pi/1000)
    assert np.allclose(radius, r_expected, rtol=1e-5)


def test_relativistic_gyrofrequency_matches_textbook(gyration):
    # omega_c = |q| B/(gamma m) = 5.948086e10 rad/s; Boris phase error ~ theta^2/12
    gamma = gyration.gamma[0]
    omega_expected = E_CHARGE * 1.0 / (gamma * M_E)
    assert omega_expected == pytest.approx(5.948086e10, rel=1e-6)
    phase = np.unwrap(np.arctan2(gyration.u[:, 1], gyration.u[:, 0]))
    omega = abs(np.polyfit(gyration.t, phase, 1)[0])
    assert omega == pytest.approx(omega_expected, rel=1e-5)


def test_exb_drift_velocity():
    # v_E = E x B / B^2 = 1e6 m/s along +x for E = 1e5 V/m along y, B = 0.1 T along z (Chen sec. 2.2)
    omega = E_CHARGE * 0.1 / M_E
    periods = 50
    result = track(scenario([{"type": "uniform", "E": [0, 1e5, 0], "B": [0, 0, 0.1]}],
                            duration=periods * 2 * math.pi / omega,
                            particle=electron(u=[0.0, 0.0, 0.0]), steps_per_period=400))
    drift = (result.x[-1] - result.x[0]) / (result.t[-1] - result.t[0])
    # relativistic corrections are of order beta_D^2 ~ 1e-5
    assert drift[0] == pytest.approx(1e6, rel=1e-4)
    assert abs(drift[1]) < 1e-3 * 1e6 and abs(drift[2]) < 1e-9
