"""Angular distribution dP/dOmega of tracked states against Jackson's closed forms and Lienard's power.

Sources (SI forms; check values computed independently of radorbit from the closed forms below with
CODATA constants from scipy.constants):
- J. D. Jackson, Classical Electrodynamics, 3rd ed., sec. 14.3: general eq. (14.38), linear
  motion (14.39)-(14.41), circular motion (14.44), non-relativistic (14.21); sec. 14.2: Larmor
  (14.22), Lienard (14.26). Equation numbers from memory -- verify.
"""

import math

import numpy as np
import pytest

from tracker import Scenario, ScenarioError, track
from tracker import constants as k
from tracker.radiation import angular_distribution, radiation_pattern
from tracker.radiation.angular import direction_grid, orbit_kinematics

Q = -k.e  # electron


def lab_scenario(u, E=(0.0, 0.0, 0.0), B=(0.0, 0.0, 0.0), steps=4):
    """A few steps of an electron with u = gamma beta in uniform E (V/m) and B (T), no damping."""
    return Scenario.from_dict({
        "run": {"duration": steps * 1e-15, "dt": 1e-15, "radiation_reaction": "none"},
        "particle": {"species": "electron", "position": [0.0, 0.0, 0.0], "u": list(u)},
        "field": [{"type": "uniform", "E": list(E), "B": list(B)}],
    })


def sphere_quadrature(beta, n_theta=160, n_phi=16):
    """(theta, weights_theta, phi, weight_phi) for a pattern peaked within 1/gamma of the polar axis.

    Gauss-Legendre in cos(theta) on two pieces, split at 1 - 30 (1 - beta) so the forward lobe
    is resolved; trapezoid in phi (exact for the trigonometric polynomials of this pattern).
    """
    split = max(-0.5, 1.0 - 30.0 * (1.0 - beta))
    x, w = np.polynomial.legendre.leggauss(n_theta)
    pieces = []
    for a, b in ((-1.0, split), (split, 1.0)):
        pieces.append((0.5 * (b - a) * x + 0.5 * (b + a), 0.5 * (b - a) * w))
    cos_t = np.concatenate([p[0] for p in pieces])
    w_t = np.concatenate([p[1] for p in pieces])
    phi = 2.0 * np.pi * np.arange(n_phi) / n_phi
    return np.arccos(cos_t), w_t, phi, 2.0 * np.pi / n_phi


def integrate_state(result, index, beta):
    theta, w_t, phi, w_p = sphere_quadrature(beta)
    values = angular_distribution(result, index, theta, phi, axis="velocity")
    return float(w_t @ values.sum(axis=1) * w_p)


# ---------------------------------------------------------------------- point values
def test_point_values_match_jackson_closed_forms():
    # check values computed from Jackson (14.44)/(14.39) with scipy constants: beta = 0.9, |a| = 1e15 m/s^2, theta = 0.2, phi = 0.7:
    # circular 2.8435093045e-22 W/sr (Jackson 14.44), linear 1.1785412536e-21 W/sr (Jackson 14.39)
    beta = 0.9
    u = [0.0, 0.0, beta / math.sqrt(1 - beta**2)]
    n = direction_grid([0.2], [0.7])[0]
    circular = radiation_pattern(Q, u, [1e15 / k.c, 0.0, 0.0], n)
    linear = radiation_pattern(Q, u, [0.0, 0.0, 1e15 / k.c], n)
    assert circular[0] == pytest.approx(2.8435093045e-22, rel=1e-9)
    assert linear[0] == pytest.approx(1.1785412536e-21, rel=1e-9)


def test_general_state_integrates_to_lienard_check_value():
    # check values computed from the Lorentz force and Jackson (14.26) with scipy constants: beta = (0.5, 0.3, 0.1), E = (1e8, -2e8, 5e7) V/m,
    # B = (0.2, 0.5, -1.0) T; a = (3.44201153e17, 6.04182898e18, -1.52379731e19) m/s^2;
    # Lienard P = 3.6363695558e-15 W (Jackson 14.26).
    beta = np.array([0.5, 0.3, 0.1])
    gamma = 1.0 / math.sqrt(1.0 - beta @ beta)
    a = np.array([3.44201153e17, 6.04182898e18, -1.52379731e19])
    # integrate over the sphere with theta measured from z (pattern is broad at gamma = 1.24)
    x, w = np.polynomial.legendre.leggauss(200)
    phi = 2 * np.pi * np.arange(64) / 64
    grid = direction_grid(np.arccos(x), phi).reshape(-1, 3)
    values = radiation_pattern(Q, gamma * beta, a / k.c, grid).reshape(len(x), len(phi))
    total = float(w @ values.sum(axis=1) * (2 * np.pi / 64))
    assert total == pytest.approx(3.6363695558e-15, rel=1e-8)


def test_lorentz_acceleration_of_a_tracked_state_matches_check_value():
    # the same check values as above: the acceleration from the Lorentz force at beta = (0.5, 0.3, 0.1)
    beta = np.array([0.5, 0.3, 0.1])
    gamma = 1.0 / math.sqrt(1.0 - beta @ beta)
    sc = lab_scenario(gamma * beta, E=(1e8, -2e8, 5e7), B=(0.2, 0.5, -1.0))
    # one synchronous state at t = 0 equals the initial state to O(dt^2 a^2); compare with a fresh
    # state built from the exact beta through the same code path
    result = track(sc)
    result.u[0] = gamma * beta
    result.gamma[0] = gamma
    _, beta_dot = orbit_kinematics(result, slice(0, 1))
    expected = np.array([3.44201153e17, 6.04182898e18, -1.52379731e19]) / k.c
    np.testing.assert_allclose(beta_dot[0], expected, rtol=1e-8)


# ---------------------------------------------------------------------- tracked states
@pytest.mark.parametrize("beta", [0.5, 0.9, 0.99])
def test_circular_motion_pattern_and_integral(beta):
    # Jackson (14.44): circular motion, theta from v, phi from the acceleration direction;
    # integral q^2 a^2 gamma^4/(6 pi eps0 c^3) = Lienard (14.26) for beta-dot normal to beta.
    gamma = 1.0 / math.sqrt(1.0 - beta**2)
    B = 2.0
    result = track(lab_scenario([gamma * beta, 0.0, 0.0], B=(0.0, 0.0, B)))
    index = 2
    b = float(np.linalg.norm(result.u[index]) / result.gamma[index])
    g = float(result.gamma[index])
    a = k.e * b * k.c * B / (g * k.m_e)       # |dv/dt| in a uniform B
    theta = np.linspace(0.01, 3.0, 37)
    phi = np.linspace(0.0, 2 * np.pi, 25)
    got = angular_distribution(result, index, theta, phi, axis="velocity")
    ct = np.cos(theta)[:, None]
    st = np.sin(theta)[:, None]
    cp = np.cos(phi)[None, :]
    closed = (Q**2 * a**2 / (16 * math.pi**2 * k.epsilon_0 * k.c**3) / (1 - b * ct) ** 3
              * (1 - st**2 * cp**2 / (g**2 * (1 - b * ct) ** 2)))
    np.testing.assert_allclose(got, closed, rtol=1e-9)
    total = integrate_state(result, index, b)
    assert total == pytest.approx(result.power[index], rel=1e-9)  # engine's Lienard power (field form)
    assert total == pytest.approx(Q**2 * a**2 * g**4 / (6 * math.pi * k.epsilon_0 * k.c**3), rel=1e-9)


@pytest.mark.parametrize("beta", [0.5, 0.9, 0.99])
def test_linear_motion_pattern_peak_and_integral(beta):
    # Jackson (14.39)-(14.41): beta parallel to beta-dot; peak angle arccos[(sqrt(1+15 b^2) - 1)/(3 b)];
    # check values computed from that arccos formula: 38.158960 deg (0.5), 13.418484 deg (0.9), 4.069477 deg (0.99).
    expected_peak = {0.5: 38.158960, 0.9: 13.418484, 0.99: 4.069477}[beta]
    gamma = 1.0 / math.sqrt(1.0 - beta**2)
    E = 1e9
    result = track(lab_scenario([0.0, 0.0, gamma * beta], E=(0.0, 0.0, E)))
    index = 0
    b = float(np.linalg.norm(result.u[index]) / result.gamma[index])
    g = float(result.gamma[index])
    a = k.e * E / (g**3 * k.m_e)              # |dv/dt| for a force along v
    theta = np.linspace(0.0, math.pi, 2001)
    got = angular_distribution(result, index, theta, [0.0, 1.0, 2.5], axis="velocity")
    closed = Q**2 * a**2 / (16 * math.pi**2 * k.epsilon_0 * k.c**3) * np.sin(theta) ** 2 / (1 - b * np.cos(theta)) ** 5
    for j in range(3):  # axially symmetric
        np.testing.assert_allclose(got[:, j], closed, rtol=1e-9, atol=1e-12 * closed.max())
    fine = np.radians(np.linspace(expected_peak - 0.5, expected_peak + 0.5, 20001))
    values = angular_distribution(result, index, fine, [0.0], axis="velocity")[:, 0]
    # b differs from beta by O(dt^2) only: the peak moves by far less than the 5e-5 deg grid
    assert math.degrees(fine[np.argmax(values)]) == pytest.approx(expected_peak, abs=2e-4)
    total = integrate_state(result, index, b)
    assert total == pytest.approx(Q**2 * a**2 * g**6 / (6 * math.pi * k.epsilon_0 * k.c**3), rel=1e-9)
    assert total == pytest.approx(result.power[index], rel=1e-9)


def test_charge_at_rest_radiates_sin_squared_and_larmor_power():
    # Jackson (14.21)/(14.22), non-relativistic limit, exact at beta = 0:
    # dP/dOmega = q^2 a^2 sin^2(Theta)/(16 pi^2 eps0 c^3); Larmor a = 1e20 m/s^2 gives
    # P = 5.708327e-14 W (q^2 a^2/(6 pi eps0 c^3) with scipy constants).
    a = 1e20
    E = a * k.m_e / k.e                     # the electron accelerates along -z
    result = track(lab_scenario([0.0, 0.0, 0.0], E=(0.0, 0.0, E)))
    assert np.all(result.u[0] == 0.0)       # synchronous state at t = 0 is exactly at rest
    theta = np.linspace(0.0, math.pi, 91)
    phi = np.linspace(0.0, 2 * math.pi, 13)
    got = angular_distribution(result, 0, theta, phi)   # theta from +z, the line of the force
    closed = Q**2 * a**2 / (16 * math.pi**2 * k.epsilon_0 * k.c**3) * np.sin(theta)[:, None] ** 2 * np.ones_like(phi)
    np.testing.assert_allclose(got, closed, rtol=1e-12, atol=1e-14 * closed.max())
    x, w = np.polynomial.legendre.leggauss(20)
    total = float(w @ angular_distribution(result, 0, np.arccos(x), phi[:-1]).sum(axis=1) * (2 * math.pi / 12))
    assert total == pytest.approx(5.708327e-14, rel=1e-6)


def test_slow_charge_pattern_tends_to_sin_squared():
    # Jackson (14.38) -> (14.21) as beta -> 0; the first correction is the Doppler factor
    # (1 - n.beta)^-5 ~ 1 + 5 n.beta, so the shape error is bounded by ~5 beta + O(beta^2) (derived).
    beta = 1e-4
    B = 1.0
    result = track(lab_scenario([beta, 0.0, 0.0], B=(0.0, 0.0, B)))
    index = 1
    bd = orbit_kinematics(result, slice(index, index + 1))[1][0]
    ahat = bd / np.linalg.norm(bd)
    theta = np.linspace(0.0, math.pi, 31)
    phi = np.linspace(0.0, 2 * math.pi, 31)
    got = angular_distribution(result, index, theta, phi)
    n = direction_grid(theta, phi)
    sin2 = 1.0 - (n @ ahat) ** 2
    a = float(np.linalg.norm(bd)) * k.c
    closed = Q**2 * a**2 / (16 * math.pi**2 * k.epsilon_0 * k.c**3) * sin2
    assert np.max(np.abs(got - closed)) <= 6 * beta * closed.max()


def test_observer_time_density_carries_one_more_doppler_factor():
    # Jackson sec. 14.3: dP(t)/dOmega = dP(t')/dOmega / (1 - n.beta) (per unit observer time).
    beta = 0.9
    gamma = 1.0 / math.sqrt(1.0 - beta**2)
    result = track(lab_scenario([gamma * beta, 0.0, 0.0], B=(0.0, 0.0, 1.0)))
    theta = np.linspace(0.05, 3.0, 11)
    phi = np.linspace(0.0, 6.0, 7)
    retarded = angular_distribution(result, 1, theta, phi, axis="velocity", per="retarded")
    observer = angular_distribution(result, 1, theta, phi, axis="velocity", per="observer")
    b = float(np.linalg.norm(result.u[1]) / result.gamma[1])
    np.testing.assert_allclose(observer, retarded / (1 - b * np.cos(theta))[:, None], rtol=1e-10)


def test_bad_arguments_name_the_key():
    result = track(lab_scenario([1.0, 0.0, 0.0], B=(0.0, 0.0, 1.0)))
    with pytest.raises(ScenarioError, match="^index"):
        angular_distribution(result, 99, [0.1], [0.0])
    with pytest.raises(ScenarioError, match="^axis"):
        angular_distribution(result, 0, [0.1], [0.0], axis="sideways")
    with pytest.raises(ScenarioError, match="^per"):
        angular_distribution(result, 0, [0.1], [0.0], per="lab")
