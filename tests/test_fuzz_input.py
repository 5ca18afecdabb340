"""Property-based checks: bad input ends as ScenarioError (Python), exit status 2 with one
short line (command line) or a message on the lab page (upload) -- never another
exception. Common practice, no source.

Inputs are generated from the bundled scenarios by replacing one entry with a generated
value (numbers from 1e-320 to 400-digit integers, NaN, unit strings, long strings,
nested arrays and tables), and by corrupting the file's bytes. About 2,000 inputs in all.
"""

import contextlib
import io
import math
import tempfile
import tomllib
from pathlib import Path

from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

from tracker import Scenario, ScenarioError
from tracker.cli import main
from tracker.errors import MAX_MESSAGE

ROOT = Path(__file__).resolve().parent.parent
BUNDLED = sorted((ROOT / "scenarios").glob("*.toml"))
TEXTS = [p.read_text(encoding="utf-8") for p in BUNDLED]
BASES = [tomllib.loads(t) for t in TEXTS]

UNIT_STRINGS = ["1.5 T", "1e5 G", "100 kG", "3 parsec", "0.8 um", "30 fs", "2 GeV", "0.9 c", "1e18 W/cm^2", "",
                " ", "1 T * 2", "5e400 m", "-1 s", "nan", "inf J", "1 / 0", "(", "1e-320 s", "kg m/s", "2 GeV/c",
                "1e308 V/m", "1 parsec**9", "1.5 T T T", "10 % "]
NUMBERS = st.one_of(
    st.integers(min_value=-(10**400), max_value=10**400),
    st.floats(allow_nan=True, allow_infinity=True),
    st.sampled_from([0, -1, 1e-320, 5e-324, 1e19, 1e308, 2**63, 2**53 + 1, 50e6, 0.5]),
)
# long strings are built, not drawn character by character (drawing them dominated the run time)
LONG = st.builds(lambda piece, n: (piece * n)[:n], st.sampled_from(["1", "x", "1e5 T ", "é", "[", "1" * 7 + " m"]),
                 st.integers(90, 100_000))
SCALARS = st.one_of(NUMBERS, st.booleans(), st.sampled_from(UNIT_STRINGS), st.text(max_size=12), LONG)
VALUES = st.recursive(SCALARS, lambda inner: st.lists(inner, max_size=3)
                      | st.dictionaries(st.text(max_size=6), inner, max_size=2), max_leaves=5)
KEYS = st.sampled_from(["duration", "dt", "steps_per_period", "pusher", "radiation_reaction", "save_every",
                        "max_steps", "adaptive", "dt_min", "dt_max", "species", "charge_state", "mass_number",
                        "mass", "charge", "position", "direction", "gamma", "kinetic_energy", "speed",
                        "momentum", "u", "type", "B", "E", "B0", "L", "center", "moment", "a0", "E0", "intensity",
                        "wavelength", "polarization", "envelope", "duration", "peak_position", "phase", "period",
                        "length", "start", "R0", "q", "loop_voltage", "title", "unknown"])
FAST = dict(deadline=None, suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])


def mutate(base, section, key, value):
    """A copy of ``base`` with ``section.key = value`` (section: run, particle, field[0], top)."""
    body = "beam" if "beam" in base else "particle"   # a [beam] scenario has no [particle]
    data = {**base, "run": dict(base["run"]), body: dict(base[body]),
            "field": [dict(f) for f in base.get("field", [])]}
    if section == "particle":
        section = body
    if section == "top":
        data[key] = value
    elif section == "field":
        if data["field"]:
            data["field"][0][key] = value
        else:
            data["field"] = [{"type": "uniform", key: value}]
    else:
        data[section][key] = value
    return data


def assert_one_short_line(message):
    assert "\n" not in message.strip() and len(message) <= MAX_MESSAGE + 40, message[:300]


@settings(max_examples=1000, **FAST)
@given(base=st.sampled_from(BASES), section=st.sampled_from(["run", "particle", "field", "top"]), key=KEYS,
       value=VALUES)
def test_loader_refuses_bad_values_only_with_scenario_error(base, section, key, value):
    try:
        scenario = Scenario.from_dict(mutate(base, section, key, value))
    except ScenarioError as exc:
        assert_one_short_line(str(exc))
        return
    # accepted: then it is a usable scenario
    plan = scenario.plan()
    assert plan.steps >= 1 and math.isfinite(plan.dt) and plan.dt > 0
    assert Scenario.from_toml(scenario.to_toml()) == scenario


@settings(max_examples=600, **FAST)
@given(text=st.sampled_from(TEXTS), at=st.floats(0, 1), junk=st.one_of(
    st.text(max_size=20), st.sampled_from(["[" * 500, "{" * 300, "= =", "\x00", "[[field]]\n", '"""', "\\u0000"]),
))
def test_loader_refuses_corrupted_text_only_with_scenario_error(text, at, junk):
    cut = int(at * len(text))
    try:
        Scenario.from_toml(text[:cut] + junk + text[cut:])
    except ScenarioError as exc:
        assert_one_short_line(str(exc))


WORKDIR = Path(tempfile.mkdtemp(prefix="radorbit-fuzz-"))


@settings(max_examples=200, **FAST)
@given(text=st.sampled_from(TEXTS), at=st.floats(0, 1), junk=st.one_of(
    st.binary(max_size=16), st.sampled_from([b"\xff\xfe", b"\xe9", b"\x00" * 8, b"[" * 500, b""]),
))
def test_command_line_check_exits_0_or_2_with_one_line(text, at, junk):
    data = text.encode("utf-8")
    cut = int(at * len(data))
    path = WORKDIR / "fuzz.toml"
    path.write_bytes(data[:cut] + junk + data[cut:])
    err, out = io.StringIO(), io.StringIO()
    with contextlib.redirect_stderr(err), contextlib.redirect_stdout(out):
        code = main(["check", str(path)])
    assert code in (0, 2)
    if code == 2:
        assert err.getvalue().startswith("radorbit: error: ")
        assert_one_short_line(err.getvalue())


@settings(max_examples=200, **FAST)
@given(base=st.sampled_from(BASES), section=st.sampled_from(["run", "particle", "field"]), key=KEYS, value=VALUES)
def test_lab_upload_shows_a_message_and_never_fails(base, section, key, value):
    from tracker.toml_writer import scenario_toml
    from ui.state import LabState

    try:
        text = scenario_toml(mutate(base, section, key, value))
    except Exception:
        assume(False)   # the generated value has no TOML form (e.g. a key that is not text)
    state = LabState()
    state.load_toml(text, "upload: fuzz.toml")
    message = state.error or state.source_error
    assert not message.startswith("the engine could not read"), message
    if state.scenario is None:
        assert message


def test_lab_upload_of_garbage_bytes_shows_a_message():
    from ui.state import LabState

    state = LabState()
    state.load_toml("[" * 500 + "]" * 500, "upload: nested.toml")
    assert "nested" in state.source_error
