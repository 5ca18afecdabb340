"""The compiled step against its plain-NumPy twin (tests/twin_step.py), value by value,
for every registered pusher and damping model, and the registries behind the dispatchers.

The twin is written from the published formulas (sources in twin_step.py); agreement to
1e-10 relative means the compiled leaf functions implement those formulas and the
documented splitting. Vay and Higuera-Cary are solved in the twin by a root finder, so
their tolerance is the root finder's (1e-9).
"""

import math

import numpy as np
import pytest
from scipy import constants as sc

import twin_step
from tracker import Scenario
from tracker.compile import compile_scenario
from tracker.fields import MODELS as FIELD_MODELS
from tracker.fields.evaluate import EVALUATORS, RATES, field_at
from tracker.pushers import PUSHERS
from tracker.pushers.dispatch import DISPATCHED
from tracker.radiation.reaction import MODELS as RR_MODELS
from tracker.step import (EPREV, BPREV, PLAN_SIZE, RAD, STATE_SIZE, U, X, advance, load_state, plan_tuple,
                          species_tuple)

E_FIELD = [3.0e11, -1.2e11, 0.7e11]   # V/m: strong enough that the damping terms are well above round-off
B_FIELD = [200.0, 450.0, -300.0]      # T


def one_step_scenario(pusher, model):
    return Scenario.from_dict({
        "run": {"duration": "200 fs", "dt": "10 fs", "pusher": pusher, "radiation_reaction": model},
        "particle": {"species": "electron", "gamma": 800.0, "direction": [0.3, 0.8, -0.52]},
        "field": [{"type": "uniform", "E": E_FIELD, "B": B_FIELD}],
    })


@pytest.mark.parametrize("model", sorted(RR_MODELS))
@pytest.mark.parametrize("pusher", sorted(PUSHERS))
def test_compiled_step_matches_the_numpy_twin(pusher, model):
    scenario = one_step_scenario(pusher, model)
    bundle = compile_scenario(scenario)
    state = np.array(bundle.state)
    # a state with distinct previous fields, so the field-rate term of the LL force is exercised
    state[EPREV:EPREV + 3, 0] = np.array(E_FIELD) * 0.999
    state[BPREV:BPREV + 3, 0] = np.array(B_FIELD) * 1.001
    s = load_state(state, 0)
    f = field_at(bundle.kinds, bundle.params, bundle.data, s[X], s[X + 1], s[X + 2], 0.0)
    s_new, recorded, t_s, usx, usy, usz, gs, power, chi, dt = advance(
        species_tuple(bundle.species), plan_tuple(bundle.plan_row), s, f, 0.0)

    u_new, x_new, us, g_ref, p_ref, chi_ref = twin_step.step(
        -sc.e, sc.m_e, pusher, model, np.array(s[X:X + 3]), np.array(s[U:U + 3]),
        np.array(E_FIELD), np.array(B_FIELD), state[EPREV:EPREV + 3, 0], state[BPREV:BPREV + 3, 0],
        bundle.plan.dt)
    rtol = 1e-10 if pusher == "boris" else 1e-9
    assert recorded
    np.testing.assert_allclose(s_new[U:U + 3], u_new, rtol=rtol, atol=rtol * np.linalg.norm(u_new))
    np.testing.assert_allclose(s_new[X:X + 3], x_new, rtol=rtol, atol=rtol * np.linalg.norm(x_new - s[X:X + 3]))
    np.testing.assert_allclose([usx, usy, usz], us, rtol=rtol, atol=rtol * np.linalg.norm(us))
    assert gs == pytest.approx(g_ref, rel=rtol)
    assert power == pytest.approx(p_ref, rel=1e-8)
    assert chi == pytest.approx(chi_ref, rel=1e-8)
    assert s_new[RAD] == 0.0    # the first step only opens the trapezoid
    from tracker.radiation.stochastic import CHI_STOCHASTIC_MIN
    assert twin_step.CHI_STOCHASTIC_MIN == CHI_STOCHASTIC_MIN
    # the damping did act (the undamped twin differs well beyond the tolerance), except for the stochastic
    # model above its threshold, whose photons the kernels sample after the step (tests/test_stochastic_engine.py)
    if model != "none" and not (model == "quantum-stochastic" and chi >= twin_step.CHI_STOCHASTIC_MIN):
        u_free = twin_step.step(-sc.e, sc.m_e, pusher, "none", np.array(s[X:X + 3]), np.array(s[U:U + 3]),
                                np.array(E_FIELD), np.array(B_FIELD), state[EPREV:EPREV + 3, 0],
                                state[BPREV:BPREV + 3, 0], bundle.plan.dt)[0]
        assert np.linalg.norm(u_free - u_new) > 1e3 * rtol * np.linalg.norm(u_new)


# ---------------------------------------------------------------- registries (common practice, no source)
def test_every_field_model_has_a_unique_code_and_an_evaluator():
    codes = [m.code for m in FIELD_MODELS.values()]
    assert len(codes) == len(set(codes))
    assert set(codes) == set(EVALUATORS), "a registered field model has no branch in field_at (or vice versa)"
    for m in FIELD_MODELS.values():
        assert bool(m.rate_label) == (m.code in RATES), f"{m.name}: rate leaf and rate_label must come together"


def test_every_pusher_and_damping_model_is_unique_and_dispatched():
    assert len(set(PUSHERS.values())) == len(PUSHERS)
    assert set(PUSHERS.values()) == set(DISPATCHED)
    assert len(set(RR_MODELS.values())) == len(RR_MODELS)


def test_unknown_codes_fail_loudly():
    from tracker.errors import ScenarioError
    from tracker.compile import check_codes
    from tracker.pushers.dispatch import push
    from tracker.radiation.reaction import radiation_kick

    unknown = max(max(PUSHERS.values()), max(RR_MODELS.values()), max(EVALUATORS)) + 17
    assert all(math.isnan(v) for v in push(unknown, 1.0, 0.0, 0.0, 0.1, 0.0, 0.0, 0.0, 0.0, 0.1))
    assert all(math.isnan(v) for v in radiation_kick(unknown, 1e-15, -1.7e11, 6e-24, 1e-18, math.sqrt(2.0), 1.0, 0.0, 0.0,
                                                      1e9, 0, 0, 0, 0, 1.0, 0, 0, 0, 0, 0, 0))
    kinds = np.array([unknown], dtype=np.int64)
    params = np.zeros((1, 24))
    assert all(math.isnan(v) for v in field_at(kinds, params, np.zeros(1), 0.0, 0.0, 0.0, 0.0))
    with pytest.raises(ScenarioError, match="field"):
        check_codes(kinds, 0, 0)
    with pytest.raises(ScenarioError, match="pusher"):
        check_codes(np.zeros(0, dtype=np.int64), unknown, 0)


def test_state_and_plan_layouts_fit_their_tuples():
    scenario = one_step_scenario("boris", "none")
    bundle = compile_scenario(scenario)
    assert bundle.state.shape == (STATE_SIZE, 1) and bundle.plan_row.shape == (PLAN_SIZE,)
    assert len(load_state(bundle.state, 0)) == STATE_SIZE and len(plan_tuple(bundle.plan_row)) == PLAN_SIZE
