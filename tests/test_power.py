"""Instantaneous radiated power against Larmor and Lienard, computed independently here.

Larmor P = q^2 a^2/(6 pi eps0 c^3); Lienard P = q^2 gamma^6/(6 pi eps0 c) [|beta_dot|^2 - |beta x beta_dot|^2]
(J. D. Jackson, Classical Electrodynamics, 3rd ed., sec. 14.2; eq. numbers from memory),
with beta_dot from the Lorentz force dv/dt = q/(gamma m) [E + v x B - (v.E) v/c^2].
"""

import math

import numpy as np
import pytest
from scipy import constants as sc

from builders import electron, scenario
from tracker import track
from tracker.radiation.power import lienard_power, power_scale, transverse_force_squared

Q, M, C, EPS0 = -sc.e, sc.m_e, sc.c, sc.epsilon_0


def lienard_from_acceleration(beta, e_field, b_field, q=Q, m=M):
    """Jackson's beta-dot form, with the Lorentz-force acceleration (independent of the engine)."""
    beta = np.asarray(beta, float)
    gamma = 1.0 / math.sqrt(1.0 - beta @ beta)
    v = C * beta
    accel = q / (gamma * m) * (e_field + np.cross(v, b_field) - (v @ e_field) * v / C**2)
    beta_dot = accel / C
    return q**2 * gamma**6 / (6 * math.pi * EPS0 * C) * (beta_dot @ beta_dot - np.cross(beta, beta_dot) @ np.cross(beta, beta_dot))


def engine_power(beta, e_field, b_field):
    beta = np.asarray(beta, float)
    gamma = 1.0 / math.sqrt(1.0 - beta @ beta)
    f2 = transverse_force_squared(*beta, *e_field, *b_field)
    return lienard_power(power_scale(Q, M), gamma, f2)


def test_lienard_general_state_matches_beta_dot_form():
    # physics reference Example A: 3.6363695558e-15 W
    beta, e_field, b_field = (0.5, 0.3, 0.1), np.array([1e8, -2e8, 5e7]), np.array([0.2, 0.5, -1.0])
    independent = lienard_from_acceleration(beta, e_field, b_field)
    assert independent == pytest.approx(3.6363695558e-15, rel=1e-9)
    assert engine_power(beta, e_field, b_field) == pytest.approx(independent, rel=1e-12)


@pytest.mark.parametrize("seed", range(5))
def test_lienard_random_states(seed):
    rng = np.random.default_rng(seed)
    direction = rng.normal(size=3)
    beta = direction / np.linalg.norm(direction) * (1 - 10.0 ** rng.uniform(-6, -0.5))
    e_field = rng.normal(size=3) * 10.0 ** rng.uniform(6, 12)
    b_field = rng.normal(size=3) * 10.0 ** rng.uniform(-2, 3)
    assert engine_power(beta, e_field, b_field) == pytest.approx(
        lienard_from_acceleration(beta, e_field, b_field), rel=1e-9)


def test_larmor_limit_for_slow_electron_in_uniform_b():
    # 1 eV electron in 1 T: a = |q| v B/m; gamma^4 - 1 ~ 8e-6 separates Larmor from Lienard
    result = track(scenario([{"type": "uniform", "B": [0, 0, 1.0]}], duration=1e-10,
                            particle=electron(kinetic_energy="1 eV", direction=[1, 0, 0]),
                            steps_per_period=400, save_every=50))
    v = C * np.linalg.norm(result.u[0]) / result.gamma[0]
    accel = abs(Q) * v * 1.0 / M
    larmor = Q**2 * accel**2 / (6 * math.pi * EPS0 * C**3)
    assert np.allclose(result.power, larmor, rtol=2e-5)


def test_tracked_power_equals_lienard_at_every_saved_state():
    # an electron in crossed fields plus a dipole: every saved state against the independent formula
    result = track(scenario(
        [{"type": "uniform", "E": [2e8, 0, 1e8], "B": [0, 0.5, 1.0]},
         {"type": "dipole", "moment": [0, 0, 1e3], "center": [0.05, 0, 0]}],
        duration=2e-10, particle=electron(gamma=30, direction=[1, 1, 0]), steps_per_period=300, save_every=7))
    e_fields, b_fields = result.scenario.fields_at(result.x, 0.0)
    for i in range(0, len(result.t), 5):
        beta = result.u[i] / result.gamma[i]
        assert result.power[i] == pytest.approx(lienard_from_acceleration(beta, e_fields[i], b_fields[i]), rel=1e-9)


def test_power_for_gamma_1000_in_one_tesla():
    # physics reference Example B: 1.587057e-8 W
    beta = math.sqrt(1 - 1 / 1000**2)
    assert engine_power((beta, 0, 0), np.zeros(3), np.array([0, 0, 1.0])) == pytest.approx(1.587057e-8, rel=1e-6)
