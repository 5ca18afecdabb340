"""Adaptive time step ([run] adaptive = true) on a strongly cooling orbit with an exact solution.

Exact solution (derived from the Landau-Lifshitz force, Landau & Lifshitz vol. 2 sec. 76,
keeping the leading term for gamma >> 1): electron with u perpendicular to a uniform static B,
gamma(t) = coth(t/tau_B + arccoth gamma0), tau_B = 6 pi eps0 m^3 c^3/(q^4 B^2)
(5.158666 s at 1 T, evaluated with scipy constants). A strong field (1e4 T, tau_B = 51.6 ns) makes gamma fall from
1000 to 100 within 720 gyrations while the gyration period 2 pi gamma m/(e B) shrinks
tenfold with it, so a fixed step loses resolution and an adaptive one does not.
"""

import math

import numpy as np
import pytest

from tracker import Scenario, track
from tracker import constants as k
from tracker.validity import MIN_STEPS_PER_PERIOD

B = 1e4            # T
GAMMA0 = 1000.0
GAMMA1 = 100.0


def tau_b(b):
    """Cooling time 6 pi eps0 m^3 c^3/(e^4 B^2) of an electron, s."""
    return 6.0 * math.pi * k.epsilon_0 * k.m_e**3 * k.c**3 / (k.e**4 * b**2)


TAU_B = tau_b(B)
DURATION = (math.atanh(1.0 / GAMMA1) - math.atanh(1.0 / GAMMA0)) * TAU_B   # gamma: 1000 -> 100


def exact_gamma(t):
    return 1.0 / np.tanh(t / TAU_B + math.atanh(1.0 / GAMMA0))


def cooling(steps_per_period, adaptive, **run):
    return Scenario.from_dict({
        "run": {"duration": DURATION, "steps_per_period": steps_per_period, "adaptive": adaptive,
                "save_every": 20, **run},
        "particle": {"species": "electron", "gamma": GAMMA0, "direction": [1, 0, 0]},
        "field": [{"type": "uniform", "B": [0, 0, B]}],
    })


def kinds(result):
    return [w["kind"] for w in result.warnings]


def test_cooling_time_constant():
    assert tau_b(1.0) == pytest.approx(5.158666, rel=1e-6)   # 6 pi eps0 m^3 c^3/(e^4 B^2) with scipy constants


@pytest.fixture(scope="module")
def adaptive_run():
    return track(cooling(800, True))


def test_adaptive_steps_follow_the_exact_coth_solution(adaptive_run):
    r = adaptive_run
    assert r.meta["stop_reason"] == "completed"
    assert r.t[-1] == pytest.approx(DURATION, rel=1e-12)
    assert r.gamma[-1] == pytest.approx(GAMMA1, rel=1e-4)
    error = np.abs(r.gamma / exact_gamma(r.t) - 1.0)
    assert np.max(error) < 1e-4
    assert abs(r.energy_balance_residual()) < 1e-4


def test_adaptive_step_shrinks_with_the_gyration_period(adaptive_run):
    # dt = 2 pi gamma m/(e B)/steps_per_period: it falls with gamma (tenfold here)
    r = adaptive_run
    live = r.dt > 0
    period = 2.0 * math.pi * r.gamma[live] * k.m_e / (k.e * B)
    assert np.allclose(period / r.dt[live], 800.0, rtol=2e-3)
    assert r.dt[live][-1] / r.dt[0] == pytest.approx(GAMMA1 / GAMMA0, rel=2e-3)
    assert "resolution" not in kinds(r)


def gyration_phase_error(result):
    """Largest |gyration phase of u - exact phase| in rad.

    Exact phase from the coth law: dphi/dt = e B/(gamma m), so
    phi(t) = (e B/m) tau_B ln[cosh(t/tau_B + a)/cosh(a)], a = arcoth(gamma0).
    """
    a = math.atanh(1.0 / GAMMA0)
    exact = (k.e * B / k.m_e) * TAU_B * (np.log(np.cosh(result.t / TAU_B + a)) - math.log(math.cosh(a)))
    phase = np.unwrap(np.arctan2(result.u[:, 1], result.u[:, 0]))
    return float(np.max(np.abs(phase - phase[0] - exact)))


def test_fixed_steps_lose_accuracy_and_resolution():
    # Same start, fixed step: resolution falls tenfold with gamma. gamma itself stays close to the
    # coth law (the radiation kick acts along the exactly rotated momentum), but the orbit phase
    # does not: the Boris phase error per radian is theta^2/12 (theta = rotation per step), which
    # grows a hundredfold as the step covers ten times more of a gyration (common practice, no source).
    adaptive = track(cooling(800, True, save_every=5))
    fine = track(cooling(800, False, save_every=5))
    assert gyration_phase_error(adaptive) < 0.1                      # ~ (2 pi/800)^2/12 x 4490 rad
    assert gyration_phase_error(fine) > 10 * gyration_phase_error(adaptive)
    coarse = track(cooling(100, False, save_every=1))    # the default resolution: ends near 10 steps per gyration
    assert gyration_phase_error(coarse) > 10.0
    assert "resolution" not in kinds(adaptive) and "resolution" not in kinds(fine)
    warnings = [w for w in coarse.warnings if w["kind"] == "resolution"]
    assert len(warnings) == 1
    w = warnings[0]
    assert "gyration" in w["message"] and "adaptive = true" in w["message"]
    worst = float(w["message"].split("only ")[1].split(" steps")[0])
    assert worst == pytest.approx(100.0 * GAMMA1 / GAMMA0, rel=0.02)
    assert worst < MIN_STEPS_PER_PERIOD
    assert w["time"] == pytest.approx(DURATION, rel=0.01)


def test_dt_max_caps_the_step():
    dt_max = 1e-15
    r = track(cooling(100, True, dt_max=dt_max))
    assert np.all(r.dt <= dt_max * (1 + 1e-12))
    assert r.t[-1] == pytest.approx(DURATION, rel=1e-12)


def test_a_step_floor_above_the_need_is_reported():
    # dt_min = 3e-14 s is above the 3.6e-15 s that 100 steps per gyration need at gamma = 100:
    # the run ends with ~12 steps per gyration
    r = track(cooling(100, True, dt_min=3e-14))
    messages = [w["message"] for w in r.warnings if w["kind"] == "resolution"]
    assert messages and "dt_min" in messages[0] and "floor" in messages[0]
