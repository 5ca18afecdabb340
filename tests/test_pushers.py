"""Relativistic pushers (Boris, Vay, Higuera-Cary) against exact properties and a scipy reference.

Sources: J.-L. Vay, Phys. Plasmas 15, 056701 (2008) (force-free crossed fields);
A. V. Higuera and J. R. Cary, Phys. Plasmas 24, 052104 (2017) (abstract: energy
conservation for E = 0, volume preservation of Boris and HC, E x B velocity of
Vay and HC); check values computed with numpy from the update formulas re-derived from
the papers' implicit relations (independently of the code under test).
"""

import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from tracker import Scenario, track
from tracker import constants as k
from tracker.pushers import NOTES, PUSHERS, REFERENCES
from tracker.pushers.dispatch import push

ALL = sorted(PUSHERS)


def iterate(code, u, e, t, steps):
    """u after ``steps`` pushes with constant dimensionless kicks e, t."""
    for _ in range(steps):
        u = push(code, *u, *e, *t)
    return np.array(u)


def force_free_kicks(gamma0, phase):
    """u along x, B along z, E = -v x B; ``phase`` = q B dt/(gamma0 m) per step."""
    u0 = math.sqrt(gamma0 * gamma0 - 1.0)
    tau = 0.5 * phase * gamma0          # q dt B/(2 m)
    eps = (0.0, u0 / gamma0 * tau, 0.0)  # q dt E/(2 m c), |E| = beta c B along +y
    return (u0, 0.0, 0.0), eps, (0.0, 0.0, tau)


def test_registry_lists_the_three_pushers_with_references():
    assert set(PUSHERS) == {"boris", "vay", "higuera-cary"}
    assert len(set(PUSHERS.values())) == 3
    assert set(REFERENCES) == set(PUSHERS) == set(NOTES)
    assert "056701" in REFERENCES["vay"] and "052104" in REFERENCES["higuera-cary"]


@pytest.mark.parametrize("gamma0", [1e3, 1e6])
@pytest.mark.parametrize("name", ["vay", "higuera-cary"])
def test_force_free_particle_moves_straight(name, gamma0):
    # Vay 2008: with E + v x B = 0 the exact u is constant; Vay and HC keep it
    # (to round-off: <= 5e-15 after 100 steps in a numpy evaluation of the updates).
    u0, eps, tau = force_free_kicks(gamma0, 0.1)
    u = iterate(PUSHERS[name], u0, eps, tau, 100)
    assert abs(math.atan2(u[1], u[0])) < 1e-14
    assert abs(np.linalg.norm(u) / u0[0] - 1.0) < 1e-13


@pytest.mark.parametrize("gamma0, phase, deflection, growth", [
    (10.0, 0.1, 9.72e-3, 0.054),
    (1e3, 0.1, 1.1515e-2, 0.0598),
    (1e6, 0.1, 1.1515e-2, 0.0598),
    (1e3, 1.0, 0.1137, 15.0),
])
def test_boris_shows_the_spurious_force_free_deflection(gamma0, phase, deflection, growth):
    # Vay 2008 (motivation of the paper): Boris uses gamma(u-) for the rotation, so
    # E and v x B no longer cancel. Values from a numpy evaluation of the Boris update
    # (final gamma/gamma0 after 100 steps is 16.0 for phase 1, i.e. growth 15.0).
    u0, eps, tau = force_free_kicks(gamma0, phase)
    u = iterate(PUSHERS["boris"], u0, eps, tau, 100)
    angle = math.atan2(u[1], u[0])
    assert angle == pytest.approx(deflection, rel=2e-3)
    gamma = math.sqrt(1.0 + u @ u)
    assert gamma / gamma0 - 1.0 == pytest.approx(growth, rel=1e-2)  # reference gives 2-3 digits


@pytest.mark.parametrize("name", ALL)
def test_magnitude_of_u_is_conserved_in_a_pure_magnetic_field(name):
    # HC 2017 abstract: all three conserve energy when E = 0 (exact rotation).
    rng = np.random.default_rng(7)
    code = PUSHERS[name]
    for _ in range(50):
        u0 = rng.normal(size=3) * 10.0 ** rng.uniform(-2, 4)
        tau = rng.normal(size=3) * 10.0 ** rng.uniform(-3, 2)
        u = iterate(code, tuple(u0), (0.0, 0.0, 0.0), tuple(tau), 200)
        # round-off only: 200 steps of ~1e-16 each
        assert np.linalg.norm(u) == pytest.approx(np.linalg.norm(u0), rel=1e-12)


@pytest.mark.parametrize("name, det", [("boris", 1.0), ("higuera-cary", 1.0), ("vay", 1.0264929)])
def test_phase_volume_jacobian(name, det):
    # HC 2017 abstract: Boris and HC are volume-preserving, Vay is not.
    # Check values: finite-difference Jacobians of numpy versions of the updates at u = (3, -1, 2), eps_E = (0.3, 0.5, -0.2),
    # tau = (0.4, -0.7, 0.9).
    code, e, t, h = PUSHERS[name], (0.3, 0.5, -0.2), (0.4, -0.7, 0.9), 1e-6
    u = np.array([3.0, -1.0, 2.0])
    jac = np.empty((3, 3))
    for j in range(3):
        step = np.zeros(3)
        step[j] = h
        jac[:, j] = (np.array(push(code, *(u + step), *e, *t)) - np.array(push(code, *(u - step), *e, *t))) / (2 * h)
    assert np.linalg.det(jac) == pytest.approx(det, abs=1e-7)


@pytest.mark.parametrize("name", ALL)
def test_quartic_root_is_stable_when_the_rotation_is_huge(name):
    # |t| >> gamma (absurdly coarse step, ~180 degrees per step): the update must stay
    # finite and keep |u| (E = 0). Vay's u' is ~|t| times larger than the result, so
    # its round-off grows like |t| * 1e-16 (inherent to the scheme; 4e-9 here).
    u = iterate(PUSHERS[name], (0.5, 0.2, -0.1), (0.0, 0.0, 0.0), (3e7, -1e7, 2e7), 5)
    assert np.all(np.isfinite(u))
    assert np.linalg.norm(u) == pytest.approx(math.sqrt(0.3), rel=1e-7)


# ---------------------------------------------------------------------- through the engine
B_CONV = 1.0                                   # T
E_CONV = (0.3 * k.c * B_CONV, 0.0, 0.1 * k.c * B_CONV)  # V/m: drift plus acceleration along B
GAMMA_CONV = 3.0
QM = -k.e / k.m_e
GYRATION = 2.0 * math.pi * GAMMA_CONV / (abs(QM) * B_CONV)


def crossed_field_scenario(pusher, steps_per_gyration, radiation_reaction="none", turns=3.0):
    return Scenario.from_dict({
        "run": {"duration": turns * GYRATION, "dt": GYRATION / steps_per_gyration, "pusher": pusher,
                "radiation_reaction": radiation_reaction},
        "particle": {"species": "electron", "gamma": GAMMA_CONV, "direction": [1.0, 0.5, 0.2]},
        "field": [{"type": "uniform", "E": list(E_CONV), "B": [0.0, 0.0, B_CONV]}],
    })


def reference_orbit_end(scenario):
    """x (m) at the end from scipy DOP853 at rtol 1e-13 of du/dt = q/(m c) (E + c beta x B)."""
    e = np.array(E_CONV)
    b = np.array([0.0, 0.0, B_CONV])

    def rhs(_, y):
        u = y[3:]
        beta = u / math.sqrt(1.0 + u @ u)
        return np.concatenate([k.c * beta, QM / k.c * (e + k.c * np.cross(beta, b))])

    y0 = np.concatenate([[0.0, 0.0, 0.0], scenario.particle.u])
    sol = solve_ivp(rhs, (0.0, scenario.run.duration), y0, method="DOP853", rtol=1e-13, atol=1e-20)
    return sol.y[:3, -1]


@pytest.mark.parametrize("name", ALL)
def test_position_error_converges_at_second_order(name):
    # All three are second-order leapfrog schemes (Vay 2008; HC 2017); observed order
    # from successive halvings of dt against scipy's DOP853 (common practice for
    # verifying an integrator's order).
    reference = reference_orbit_end(crossed_field_scenario(name, 25))
    errors = []
    for n in (25, 50, 100, 200):
        result = track(crossed_field_scenario(name, n))
        assert result.t[-1] == pytest.approx(3.0 * GYRATION, rel=1e-12)
        errors.append(np.linalg.norm(result.x[-1] - reference))
    orders = np.log2(np.array(errors[:-1]) / np.array(errors[1:]))
    assert np.all(orders > 1.85) and np.all(orders < 2.15), orders


def force_free_run(pusher, gamma0=1e3):
    """Engine run in E = -v x B (u along x, B along z): 100 steps at phase 0.1 per step."""
    b = 1.0
    beta = math.sqrt(1.0 - gamma0**-2)
    dt = 0.1 * gamma0 / (abs(QM) * b)
    return track(Scenario.from_dict({
        "run": {"duration": 100 * dt, "dt": dt, "pusher": pusher, "radiation_reaction": "none"},
        "particle": {"species": "electron", "gamma": gamma0, "direction": [1, 0, 0]},
        # E = -v x B = +beta c B y-hat for v along x, B along z (any sign of charge)
        "field": [{"type": "uniform", "E": [0.0, beta * k.c * b, 0.0], "B": [0.0, 0.0, b]}],
    }))


def test_engine_dispatches_the_pusher_by_code():
    # Same force-free case through the compiled loop: only Boris drifts off the axis.
    straight = {name: force_free_run(name) for name in ALL}
    for name in ("vay", "higuera-cary"):
        r = straight[name]
        assert np.max(np.abs(r.x[:, 1:])) < 1e-12 * np.max(np.abs(r.x[:, 0]))
        assert np.max(np.abs(r.gamma / 1e3 - 1.0)) < 1e-12
    boris = straight["boris"]
    assert np.max(np.abs(boris.gamma / 1e3 - 1.0)) > 1e-2
    assert boris.meta["pusher"] == "boris"


def test_scenario_refuses_an_unknown_pusher():
    from tracker import ScenarioError

    with pytest.raises(ScenarioError, match="run.pusher"):
        Scenario.from_dict({"run": {"duration": 1e-9, "pusher": "leapfrog"},
                            "particle": {"species": "electron", "gamma": 2.0, "direction": [1, 0, 0]},
                            "field": [{"type": "uniform", "B": [0, 0, 1]}]})
