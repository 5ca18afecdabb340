"""Formula fields: the parser refuses everything outside its whitelist and never runs user code;
compiled formulas agree with built-in fields; Maxwell checks flag unphysical formulas.

Sources: the safety properties are the input contract of tracker.fields.expression
(common practice, no source). The physics references are the built-in models the
formulas copy (mirror: Chen sec. 2.3; dipole: Jackson sec. 5.6; both from memory) and
Maxwell's equations div B = 0, curl E = -dB/dt (Jackson ch. 5-6, from memory).
"""

import math
import sys

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from scipy import constants as sc

from builders import scenario
from tracker import Scenario, ScenarioError, track
from tracker.fields.evaluate import evaluate
from tracker.fields.expression import (COMPONENTS, EXPRESSION, MAX_LENGTH, FormulaError, compile_components,
                                       compile_formula)

PARTICLE = {"species": "electron", "position": [0.01, 0.02, 0.0], "kinetic_energy": "1 MeV",
            "direction": [1.0, 0.3, 0.5]}

# ---------------------------------------------------------------------- never executes code
_watch = {"on": False, "events": []}
#: audit events (PEP 578) that would mean user text is being executed or reaches the system;
#: "compile" is allowed: ast.parse raises it while only building the syntax tree
FORBIDDEN_EVENTS = ("exec", "import", "os.system", "subprocess.Popen", "open", "builtins.input", "ctypes.dlopen",
                    "socket.connect", "os.exec", "os.spawn", "shutil.rmtree", "os.remove")


def _audit(event, args):
    if _watch["on"] and event.startswith(FORBIDDEN_EVENTS):
        _watch["events"].append(event)


sys.addaudithook(_audit)


def compile_watched(text):
    """compile_formula under the audit hook: (result or FormulaError, forbidden events seen)."""
    _watch["events"].clear()
    _watch["on"] = True
    try:
        outcome = compile_formula(text, {"B0": 2.0, "L": 0.5})
    except FormulaError as exc:
        outcome = exc
    finally:
        _watch["on"] = False
    return outcome, list(_watch["events"])


DANGEROUS = st.lists(st.sampled_from(
    list("xyzt0123456789.+-*/%()[]{}<>=!,:;'\"_ \n\\@&|^~#")
    + ["sin", "where", "lambda", "import", "__", "os", "eval", "exec", "B0", "L", "**", " for ", " in ", " if ",
       " else ", "and", "or", "not", "1e308", "9", "open", "getattr", "class", "__import__", "system", "j"]),
    max_size=40).map("".join)


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(DANGEROUS)
def test_any_text_gives_a_program_or_a_clear_error_and_runs_nothing(text):
    outcome, events = compile_watched(text)
    assert events == []
    if isinstance(outcome, FormulaError):
        assert str(outcome) and outcome.reason
        assert 0 <= outcome.column <= len(text.strip()) + 1
    else:
        program, depth, _ = outcome
        assert program.dtype == np.float64 and program.ndim == 1 and 1 <= depth


# ---------------------------------------------------------------------- valid formulas evaluate correctly
def _leaf():
    names = st.sampled_from(["x", "y", "z", "t", "B0", "L"]).map(lambda n: (n, lambda env, n=n: env[n]))
    numbers = st.floats(0.1, 10.0).map(lambda v: (repr(v), lambda env, v=v: v))
    return names | numbers


def _grow(children):
    binary = st.tuples(children, st.sampled_from(["+", "-", "*"]), children).map(
        lambda a: (f"({a[0][0]} {a[1]} {a[2][0]})",
                   lambda env, a=a: {"+": float.__add__, "-": float.__sub__, "*": float.__mul__}[a[1]](
                       float(a[0][1](env)), float(a[2][1](env)))))
    divide = st.tuples(children, children).map(
        lambda a: (f"({a[0][0]}) / (1 + ({a[1][0]})**2)", lambda env, a=a: a[0][1](env) / (1 + a[1][1](env) ** 2)))
    functions = {"sin": math.sin, "cos": math.cos, "atan": math.atan, "tanh": math.tanh, "abs": abs}
    unary = st.tuples(st.sampled_from(sorted(functions)), children).map(
        lambda a: (f"{a[0]}({a[1][0]})", lambda env, a=a: functions[a[0]](a[1][1](env))))
    where = st.tuples(children, children, children).map(
        lambda a: (f"where({a[0][0]} > 1 and not {a[1][0]} < 0, {a[1][0]}, -({a[2][0]}))",
                   lambda env, a=a: a[1][1](env) if (a[0][1](env) > 1 and not a[1][1](env) < 0) else -a[2][1](env)))
    return binary | divide | unary | where


FORMULAS = st.recursive(_leaf(), _grow, max_leaves=12)


def evaluate_formula(text, point, t, parameters):
    block, _ = compile_components({"Ez": text}, parameters)
    kinds, params = np.array([EXPRESSION]), np.zeros((1, 24))
    for a in (kinds, params, block):  # read-only like a Scenario's field table (same compiled evaluator)
        a.setflags(write=False)
    e, _ = evaluate(kinds, params, block, np.array([point], dtype=float), t)
    return e[0, 2]


@settings(max_examples=150, deadline=None)
@given(FORMULAS, st.tuples(*[st.floats(-3, 3)] * 4))
def test_compiled_formulas_agree_with_a_direct_evaluation(formula, where):
    text, reference = formula
    x, y, z, t = where
    env = {"x": x, "y": y, "z": z, "t": t, "B0": 2.0, "L": 0.5}
    expected = float(reference(env))
    got = evaluate_formula(text, (x, y, z), t, {"B0": 2.0, "L": 0.5})
    assert got == pytest.approx(expected, rel=1e-12, abs=1e-12)


# ---------------------------------------------------------------------- explicit tries
@pytest.mark.parametrize("text,column,fragment", [
    ("x.__class__", 2, "attribute access"),
    ("B0 + x.real", 7, "attribute access"),
    ("__import__('os').system('ls')", 17, "attribute access"),
    ("__import__('os')", 1, "unknown function '__import__'"),
    ("import os", 1, "syntax error"),
    ("exec('print(1)')", 1, "unknown function 'exec'"),
    ("getattr(x, 'y')", 1, "unknown function 'getattr'"),
    ("__builtins__", 1, "unknown name '__builtins__'"),
    ("x.__globals__['os']", 1, "indexing"),
    ("lambda: 1", 1, "lambda"),
    ("[i for i in range(3)]", 1, "comprehension"),
    ("sum(i for i in (1, 2))", 1, "unknown function 'sum'"),
    ("sin((i for i in (1, 2)))", 5, "generator"),
    ("{1: 2}", 1, "a dict"),
    ("B0 * 'abc'", 6, "only real numbers"),
    ("1j * x", 1, "only real numbers"),
    ("True + x", 1, "only real numbers"),
    ("x if y else z", 1, "where(c, a, b)"),
    ("(B0 := 3)", 2, "assignment"),
    ("sin(x=1)", 7, "keyword"),
    ("sin(*x)", 5, "unpacking"),
    ("f'{x}'", 1, "a string"),
    ("x // 2", 1, "'//'"),
    ("x ^ 2", 1, "'^'"),
    ("B0 * foo(x)", 6, "unknown function 'foo'"),
    ("B0 * q", 6, "unknown name 'q'"),
    ("2 ** 1000", 6, "exponent too large"),
    ("x ** 9 ** 9 ** 9", 6, "exponent too large"),
    ("x ** -(10 ** 3)", 6, "exponent too large"),
    ("x ** 1e400", 6, "exponent too large"),
    ("1e400 * x", 1, "number too large"),
    ("sin(x, y)", 1, "takes 1 argument"),
    ("sin", 1, "is a function"),
    ("x +", 4, "syntax error"),
    ("x; y", 2, "syntax error"),
])
def test_refused_formulas_point_at_the_offending_column(text, column, fragment):
    outcome, events = compile_watched(text)
    assert events == []
    assert isinstance(outcome, FormulaError), outcome
    assert fragment in outcome.reason
    assert outcome.column == column
    assert f"column {column}" in str(outcome)


@pytest.mark.parametrize("text,fragment", [
    ("(" * 300 + "x" + ")" * 300, "syntax error"),       # the parser's own nesting limit
    ("-" * 200 + "x", "nested more than"),
    ("sin(" * 60 + "x" + ")" * 60, "nested more than"),
    ("+".join(["x"] * 1200), "too long"),
    (" + ".join(f"x*{i}" for i in range(200)), "too large"),
    ("where(" * 50 + "x" + ", 1, 2)" * 50, "nested more than"),
    ("\x00x", "NUL"),
])
def test_huge_or_deeply_nested_input_is_refused_quickly(text, fragment):
    outcome, events = compile_watched(text)
    assert events == []
    assert isinstance(outcome, FormulaError) and fragment in str(outcome), outcome


def test_length_limit_is_the_documented_one():
    assert isinstance(compile_watched("x" + " " * (MAX_LENGTH - 1))[0], tuple)
    assert isinstance(compile_watched("x" + " " * MAX_LENGTH)[0], FormulaError)


# ---------------------------------------------------------------------- the scenario contract
def test_scenario_errors_name_the_component_and_column():
    with pytest.raises(ScenarioError) as err:
        scenario([{"type": "expression", "Bz": "B0 * os.getcwd()", "parameters": {"B0": "1 T"}}],
                 duration=1e-9, particle=PARTICLE, dt=1e-12)
    assert err.value.key == "field[0].Bz" and "column 8" in str(err.value)
    with pytest.raises(ScenarioError) as err:
        scenario([{"type": "expression", "Bz": "x", "parameters": {"sin": 1.0}}], duration=1e-9, particle=PARTICLE,
                 dt=1e-12)
    assert err.value.key == "field[0].parameters.sin"
    with pytest.raises(ScenarioError) as err:
        scenario([{"type": "expression"}], duration=1e-9, particle=PARTICLE, dt=1e-12)
    assert "at least one formula" in str(err.value)
    with pytest.raises(ScenarioError, match="wrong|cannot read") as err:
        scenario([{"type": "expression", "Bz": "B0", "parameters": {"B0": "2 furlongs per bogon"}}],
                 duration=1e-9, particle=PARTICLE, dt=1e-12)
    assert err.value.key == "field[0].parameters.B0"


def test_parameters_with_units_round_trip_through_toml():
    s = scenario([{"type": "expression", "Bz": "B0 * (1 + (z/L)**2)", "parameters": {"B0": "200 mT", "L": "50 cm"}}],
                 duration=1e-9, particle=PARTICLE, dt=1e-12)
    assert s.fields[0].params["parameters"] == (("B0", pytest.approx(0.2)), ("L", pytest.approx(0.5)))
    assert Scenario.from_toml(s.to_toml()) == s
    assert "parameters = {B0 = 0.2" in s.to_toml()
    with pytest.raises(ScenarioError, match="Gaussian-CGS"):
        scenario([{"type": "expression", "Bz": "B0", "parameters": {"B0": "2 kG"}}], duration=1e-9,
                 particle=PARTICLE, dt=1e-12)


# ---------------------------------------------------------------------- same orbit as the built-in field
MIRROR_FORMULAS = {"Bx": "-B0*x*z*(1/(L*L))", "By": "-B0*y*z*(1/(L*L))", "Bz": "B0*(1 + z*z*(1/(L*L)))"}


@pytest.mark.parametrize("builtin,formulas,parameters", [
    # the paraxial mirror written with the operations of tracker.fields.static.mirror_field
    ({"type": "mirror", "B0": 1.5, "L": 0.2}, MIRROR_FORMULAS, {"B0": 1.5, "L": 0.2}),
    # point dipole (Jackson sec. 5.6, from memory), moment along z, written independently
    ({"type": "dipole", "moment": [0, 0, 2e4]},
     {"Bx": "K*3*z*x/sqrt(x*x+y*y+z*z)**5", "By": "K*3*z*y/sqrt(x*x+y*y+z*z)**5",
      "Bz": "K*(3*z*z - (x*x+y*y+z*z))/sqrt(x*x+y*y+z*z)**5"}, {"K": sc.mu_0 / (4 * math.pi) * 2e4}),
    # crossed uniform fields with a time-dependent E
    ({"type": "uniform", "E": [1e5, 0, 2e4], "B": [0, 0, 0.05]},
     {"Ex": "1e5", "Ez": "2e4", "Bz": "0.05"}, {}),
])
def test_an_expression_of_a_builtin_field_gives_the_same_orbit(builtin, formulas, parameters):
    run = {"duration": 3e-10, "dt": 2e-13}
    particle = dict(PARTICLE, position=[0.01, 0.02, 0.03])
    if builtin["type"] == "dipole":
        particle["position"] = [0.3, 0.05, 0.02]
    a = track(scenario([builtin], particle=particle, rr="landau-lifshitz", **run))
    b = track(scenario([{"type": "expression", **formulas, "parameters": parameters}], particle=particle,
                       rr="landau-lifshitz", **run))
    assert a.meta["stop_reason"] == b.meta["stop_reason"] == "completed"
    span = np.abs(a.x - a.x[0]).max()
    assert np.abs(b.x - a.x).max() <= 1e-11 * span
    assert b.radiated_energy[-1] == pytest.approx(a.radiated_energy[-1], rel=1e-10)
    if builtin["type"] == "mirror":
        assert np.array_equal(a.x, b.x)  # the same operations in the same order: bit for bit


# ---------------------------------------------------------------------- Maxwell checks
def _maxwell_warnings(fields, **kw):
    s = scenario(fields, duration=1e-11, particle=PARTICLE, dt=1e-13, **kw)
    return [w for w in track(s).warnings if w["kind"] == "maxwell"]


def test_a_divergent_b_formula_is_flagged_and_the_mirror_is_not():
    bad = _maxwell_warnings([{"type": "expression", "Bz": "B0*(1 + (z/L)**2)", "parameters": {"B0": 1.0, "L": 0.5}}])
    assert len(bad) == 1 and "div B" in bad[0]["message"]
    good = _maxwell_warnings([{"type": "expression", **MIRROR_FORMULAS, "parameters": {"B0": 1.0, "L": 0.5}}])
    assert good == []


def test_a_static_e_with_curl_is_flagged_unless_it_depends_on_time():
    bad = _maxwell_warnings([{"type": "expression", "Ex": "E0*y/L", "parameters": {"E0": 1e5, "L": 0.5}}])
    assert len(bad) == 1 and "curl E" in bad[0]["message"]
    varying = _maxwell_warnings([{"type": "expression", "Ex": "E0*y/L*cos(w*t)", "frequency": "1 GHz",
                                  "parameters": {"E0": 1e5, "L": 0.5, "w": 2 * math.pi * 1e9}}])
    assert varying == []


def test_declared_frequency_sets_the_step():
    s = scenario([{"type": "expression", "Ex": "E0*cos(w*t)", "frequency": "10 GHz",
                   "parameters": {"E0": 1e3, "w": "62.83 GHz"}}], duration=1e-9, particle=PARTICLE,
                 steps_per_period=20)
    assert s.plan().dt == pytest.approx(1e-10 / 20, rel=1e-6)


def test_every_component_can_be_given():
    formulas = {name: f"{i + 1}*x" for i, name in enumerate(COMPONENTS)}
    s = scenario([{"type": "expression", **formulas}], duration=1e-9, particle=PARTICLE, dt=1e-12)
    e, b = s.fields_at([[2.0, 0.0, 0.0]], 0.0)
    assert e[0].tolist() == [2.0, 4.0, 6.0] and b[0].tolist() == [8.0, 10.0, 12.0]
