"""Input hygiene at the edge: reading scenario text safely, and refusing numbers far
outside any physical use.

Plain numbers are SI, so ``kinetic_energy = 50e6`` means 50 MJ (gamma ~ 6e20 for an
electron): a valid float, but no experiment or observation comes near it. Such values
are refused with the key, the value in the unit people use, and the reading that was
probably meant (``did you mean "50 MeV"?``).

Limits (each far above the largest value known in nature or the laboratory, so that
only mistakes are refused):

* particle energy: ``MAX_PARTICLE_ENERGY_EV`` = 1e22 eV, thirty times the most energetic
  cosmic ray recorded, 3.2e20 eV (D. J. Bird et al., Astrophys. J. 441, 144 (1995);
  from memory);
* magnetic field: ``MAX_MAGNETIC_FIELD`` = 1e13 T, a hundred times the strongest
  magnetar fields, ~1e11 T (from memory);
* electric field: ``MAX_ELECTRIC_FIELD`` = 1e21 V/m, about 1e3 times the critical field
  E_S = m_e^2 c^3/(e hbar) = 1.32e18 V/m (computed from CODATA constants);
* lengths: ``MAX_LENGTH`` = 1e21 m (about the size of a galaxy); times:
  ``MAX_TIME`` = 1e18 s (twice the age of the universe, 4.35e17 s; from memory).
"""

import math
import tomllib

import numpy as np

from . import constants as k
from .errors import ScenarioError, brief

MAX_PARTICLE_ENERGY_EV = 1e22
MAX_MAGNETIC_FIELD = 1e13
MAX_ELECTRIC_FIELD = 1e21
MAX_LENGTH = 1e21
MAX_TIME = 1e18
#: largest scenario file read (bytes): bundled scenarios are ~1 kB; a field map would
#: come as a separate data file (common practice, no source).
MAX_SCENARIO_BYTES = 1_000_000
#: deepest nesting of arrays and tables accepted (a scenario needs 3: [[field]] -> vector)
MAX_NESTING = 8

EV_PREFIXES = (("GeV", 1e9), ("MeV", 1e6), ("keV", 1e3), ("eV", 1.0),
               ("meV", 1e-3))


def format_ev(ev, digits=4):
    """An energy in eV with the largest SI prefix that keeps the number >= 1 ("50 MeV")."""
    if not math.isfinite(ev):
        return f"{ev} eV"
    for unit, scale in EV_PREFIXES:
        if abs(ev) >= scale:
            return f"{ev / scale:.{digits}g} {unit}"
    return f"{ev:.{digits}g} eV"


# ---------------------------------------------------------------------- reading text
def read_scenario_text(path):
    """The text of a scenario file (UTF-8); any problem becomes one ScenarioError line."""
    from pathlib import Path

    path = Path(path)
    try:
        with open(path, "rb") as fh:
            data = fh.read(MAX_SCENARIO_BYTES + 1)
    except OSError as exc:
        raise ScenarioError("", f"cannot read scenario file {brief(str(path), 200)}: "
                                f"{exc.strerror or exc}.") from None
    if len(data) > MAX_SCENARIO_BYTES:
        raise ScenarioError("", f"{brief(str(path), 200)} is larger than {MAX_SCENARIO_BYTES:,} bytes; "
                                "a scenario file is a short TOML text.")
    return decode_scenario_bytes(data, str(path))


def decode_scenario_bytes(data, name="the file"):
    """UTF-8 bytes -> str, naming the line and byte of the first invalid one."""
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = data[: exc.start].count(b"\n") + 1
        raise ScenarioError("", f"{brief(name, 200)} is not UTF-8 text: byte 0x{data[exc.start]:02x} on line "
                                f"{line} (save the file as UTF-8).") from None


def toml_table(text):
    """Parse TOML text into a dict; syntax errors and absurd nesting become ScenarioError."""
    if not isinstance(text, str):
        raise ScenarioError("", f"a scenario is TOML text, not {type(text).__name__}.")
    if len(text) > MAX_SCENARIO_BYTES:
        raise ScenarioError("", f"the scenario text is longer than {MAX_SCENARIO_BYTES:,} characters.")
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ScenarioError("", f"not valid TOML: {exc}") from None
    except RecursionError:
        data = None
    if data is None or nesting_depth(data) > MAX_NESTING:
        raise ScenarioError("", f"not a scenario: arrays or tables nested more than {MAX_NESTING} deep.")
    return data


def nesting_depth(value):
    """Deepest nesting of lists and dicts in ``value`` (counted without recursion)."""
    deepest = 0
    stack = [(value, 0)]
    while stack:
        item, depth = stack.pop()
        deepest = max(deepest, depth)
        if depth > MAX_NESTING:
            break
        if isinstance(item, dict):
            stack.extend((v, depth + 1) for v in item.values())
        elif isinstance(item, (list, tuple)):
            stack.extend((v, depth + 1) for v in item)
    return deepest


# ---------------------------------------------------------------------- fields_at times
def times_for_points(x, t):
    """(points (n, 3) float64, times (n,) or None for one shared time) for ``fields_at``."""
    try:
        points = np.ascontiguousarray(np.atleast_2d(np.asarray(x, dtype=np.float64)))
    except (TypeError, ValueError):
        raise ScenarioError("x", f"positions must be numbers of shape (n, 3) in m, not {brief(x)}.") from None
    if points.ndim != 2 or points.shape[1] != 3:
        raise ScenarioError("x", f"positions must have shape (n, 3) in m, not {points.shape}.")
    try:
        times = np.asarray(t, dtype=np.float64)
    except (TypeError, ValueError):
        raise ScenarioError("t", f"must be a time in s or one time per position, not {brief(t)}.") from None
    if times.ndim == 0 or times.size == 1:
        return points, None
    times = times.ravel()
    if times.shape != (points.shape[0],):
        raise ScenarioError("t", f"must be one time (s) or one per position ({points.shape[0]}), "
                                 f"not {times.size} times.")
    return points, times


# ---------------------------------------------------------------------- plausibility
def check_plausible(scenario, data):
    """Refuse values far outside any physical use (limits in the module docstring).

    ``data`` is the raw dict the scenario came from: a plain number there gets a
    suggestion of the unit that was probably meant.
    """
    raw_particle = {}
    if isinstance(data, dict):
        raw_particle = data.get("particle", data.get("beam", {}))
        raw_particle = raw_particle if isinstance(raw_particle, dict) else {}
    _check_particle(scenario, raw_particle)
    run = scenario.run
    if run.duration > MAX_TIME:
        raise ScenarioError("run.duration", f"= {run.duration:.3g} s is longer than any physical use "
                                            f"({MAX_TIME:.0e} s, twice the age of the universe).")
    for i, position in enumerate(scenario.particle.position):
        if abs(position) > MAX_LENGTH:
            raise ScenarioError(f"particle.position[{i}]", f"= {position:.3g} m is beyond any physical use "
                                                          f"({MAX_LENGTH:.0e} m).")
    raw_fields = data.get("field", []) if isinstance(data, dict) else []
    if isinstance(raw_fields, dict):
        raw_fields = [raw_fields]
    for i, f in enumerate(scenario.fields):
        raw = raw_fields[i] if i < len(raw_fields) and isinstance(raw_fields[i], dict) else {}
        _check_field(i, f, raw)


def _check_particle(scenario, raw):
    p = scenario.particle
    rest = p.mass * k.c**2
    with np.errstate(over="ignore", invalid="ignore"):
        gamma = p.gamma
    energy_ev = (gamma - 1.0) * rest / k.e
    limit = MAX_PARTICLE_ENERGY_EV
    if energy_ev <= limit:
        return
    key = p.momentum_key
    where = f"particle.{key}"
    given = raw.get(key)
    told = f"{key} = {brief(given)}"
    if key == "kinetic_energy" and _plain(given):
        told = f"kinetic_energy = {given:.3g} J"
        hint = f"; did you mean \"{format_ev(float(given))}\"? (plain numbers are SI: joules)"
    elif key == "momentum" and _plain(given):
        told = f"momentum = {given:.3g} kg m/s"
        hint = f"; did you mean \"{format_ev(float(given))}/c\"? (plain numbers are SI: kg m/s)"
    else:
        hint = "; give energies with units, e.g. \"50 MeV\""
    raise ScenarioError(where, f"{told} is a kinetic energy of {format_ev(energy_ev, 2)} (gamma = {gamma:.3g}), "
                               f"beyond any physical use (limit {format_ev(limit, 2)}){hint}.")


def _plain(value):
    return isinstance(value, (int, float)) and not isinstance(value, bool)


def _magnitude(value):
    """|value| of a number or a tuple of numbers; 0 for anything else (names, formulas)."""
    if isinstance(value, tuple) and value and all(_plain(v) for v in value):
        with np.errstate(over="ignore"):
            return float(np.linalg.norm(np.asarray(value, dtype=float)))
    return abs(value) if _plain(value) else 0.0


def _check_field(index, spec, raw):
    key = f"field[{index}]"
    values = spec.params
    for param in spec.model.params:
        value = values.get(param.name)
        if value is None or param.kind not in ("scalar", "vector"):
            continue   # choices, files, formulas and tables have no magnitude to check here
        size = _magnitude(value)
        where = f"{key}.{param.name}"
        given = raw.get(param.name)
        if param.dimension == "magnetic_field" and size > MAX_MAGNETIC_FIELD:
            hint = (f"; did you mean \"{given:g} G\" (gauss, = {given * 1e-4:.3g} T)?" if _plain(given)
                    else "")
            raise ScenarioError(where, f"|{param.name}| = {size:.3g} T is beyond any physical use "
                                       f"(limit {MAX_MAGNETIC_FIELD:.0e} T, above magnetar fields){hint}.")
        if param.dimension == "electric_field" and size > MAX_ELECTRIC_FIELD:
            raise ScenarioError(where, f"|{param.name}| = {size:.3g} V/m is beyond any physical use "
                                       f"(limit {MAX_ELECTRIC_FIELD:.0e} V/m, 1e3 times the critical field).")
        if param.dimension == "length" and size > MAX_LENGTH:
            raise ScenarioError(where, f"|{param.name}| = {size:.3g} m is beyond any physical use "
                                       f"(limit {MAX_LENGTH:.0e} m).")
        if param.dimension == "time" and size > MAX_TIME:
            raise ScenarioError(where, f"{param.name} = {size:.3g} s is beyond any physical use "
                                       f"(limit {MAX_TIME:.0e} s).")
    if spec.type == "plane-wave":
        from .fields.laser import a0_of

        a0 = a0_of(values)
        omega = 2.0 * math.pi * k.c / values["wavelength"]
        peak = a0 * k.m_e * k.c * omega / k.e
        if not peak <= MAX_ELECTRIC_FIELD:
            name = next(n for n in ("a0", "intensity", "E0") if values.get(n) is not None)
            raise ScenarioError(f"{key}.{name}", f"gives a peak field of {peak:.3g} V/m (a0 = {a0:.3g}), beyond "
                                                 f"any physical use (limit {MAX_ELECTRIC_FIELD:.0e} V/m, 1e3 "
                                                 "times the critical field).")
