"""What a scan varies: lists of values per key path, from Python, ``--vary`` text or a ``[sweep]`` table.

Value text (``--vary KEY=SPEC`` and string entries of a ``[sweep]`` table):

- ``"5:50:10"``: 10 values from 5 to 50, both ends included (evenly spaced);
  ``"1:100:5:log"`` spaces them geometrically. The ends may carry units
  (``"0.5 GeV:2 GeV:4"``); the values keep the unit of the first end.
- ``"0.5 GeV,1 GeV,2 GeV"``: a list; items are numbers (SI), ``true``/``false`` or text
  (unit strings, choices such as ``vay``).
- ``"[[0,0,1],[0,1,1]]"``: a JSON list, for vectors.
"""

import json
from dataclasses import dataclass

import numpy as np

from ..errors import ScenarioError

SWEEP_KEYS = ("grid", "vary")


@dataclass(frozen=True)
class SweepSpec:
    """The ``[sweep]`` table: ``vary`` = ((key path, (values, ...)), ...), ``grid`` outer product or zip."""

    vary: tuple
    grid: bool = True

    def as_dict(self):
        """{key path: [values]} in the given order."""
        return {key: list(values) for key, values in self.vary}

    def check_keys(self, scenario):
        """Refuse key paths the scenario cannot take (values are checked per point when the scan starts)."""
        from .keys import check_key

        for key, _ in self.vary:
            try:
                check_key(scenario, key)
            except ScenarioError as exc:
                raise ScenarioError(f"sweep.vary.{key}", str(exc)) from None

    def to_dict(self):
        """Plain data for TOML: {"grid": bool, "vary": {key: [values]}}."""
        return {"grid": self.grid, "vary": {key: [_plain(v) for v in values] for key, values in self.vary}}


def _plain(value):
    return list(value) if isinstance(value, tuple) else value


def _frozen(value):
    return tuple(_frozen(v) for v in value) if isinstance(value, list) else value


def parse_sweep_table(raw):
    """Validate a ``[sweep]`` table (as read from TOML) into a SweepSpec; raises ScenarioError.

    Key paths are checked against the rest of the scenario when the scan starts
    (``tracker.sweep``), where every point is built and validated.
    """
    if not isinstance(raw, dict):
        raise ScenarioError("sweep", f"must be a table, not {raw!r}.")
    for key in raw:
        if key not in SWEEP_KEYS:
            raise ScenarioError(f"sweep.{key}", f"unknown key; allowed here: {', '.join(SWEEP_KEYS)}.")
    grid = raw.get("grid", True)
    if not isinstance(grid, bool):
        raise ScenarioError("sweep.grid", f"must be true (outer product) or false (zip), not {grid!r}.")
    vary = raw.get("vary")
    if not isinstance(vary, dict) or not vary:
        raise ScenarioError("sweep.vary", "must be a table of key path = values, e.g. \"field[0].a0\" = [5, 10].")
    return SweepSpec(vary=normalise_vary(vary, grid, prefix="sweep.vary"), grid=grid)


def normalise_vary(vary, grid, prefix=""):
    """((key, (values...)), ...) from a {key: list or value text} mapping; zip lengths checked."""
    if not isinstance(vary, dict) or not vary:
        raise ScenarioError(prefix or "vary", "give at least one key path with its values.")
    out = []
    for key, values in vary.items():
        where = f'{prefix}."{key}"' if prefix else str(key)
        if not isinstance(key, str) or not key:
            raise ScenarioError(where, "a key path is text such as 'field[0].a0'.")
        if isinstance(values, str):
            values = parse_values(values, key)
        elif isinstance(values, (tuple, np.ndarray)):
            values = list(values)
        if not isinstance(values, list) or not values:
            raise ScenarioError(key, f"needs a non-empty list of values, not {values!r}.")
        out.append((key, tuple(_frozen(_scalar(v)) for v in values)))
    if not grid:
        lengths = {key: len(values) for key, values in out}
        if len(set(lengths.values())) > 1:
            raise ScenarioError(out[0][0], f"zipped lists must have equal lengths, not {lengths}.")
    return tuple(out)


def _scalar(value):
    """numpy scalars become Python numbers (TOML and JSON need them)."""
    if isinstance(value, np.generic):
        return value.item()
    return value


def parse_vary_option(text):
    """``"KEY=SPEC"`` (the ``--vary`` option) -> (key, [values])."""
    key, sep, spec = text.partition("=")
    key = key.strip()
    if not sep or not key:
        raise ScenarioError("--vary", f"expected KEY=VALUES, e.g. 'field[0].a0=5:50:10', not {text!r}.")
    return key, parse_values(spec, key)


def parse_values(spec, key):
    """Value text -> list of values (numbers, booleans or text); see the module docstring."""
    spec = spec.strip()
    if not spec:
        raise ScenarioError(key, "no values given.")
    if spec.startswith("["):
        try:
            values = json.loads(spec)
        except json.JSONDecodeError as exc:
            raise ScenarioError(key, f"cannot read {spec!r} as a JSON list ({exc}).") from None
        if not isinstance(values, list) or not values:
            raise ScenarioError(key, f"needs a non-empty list, not {spec!r}.")
        return values
    if ":" in spec and "," not in spec:
        return _range(spec, key)
    return [_item(part) for part in spec.split(",")]


def _item(text):
    text = text.strip()
    if text in ("true", "false"):
        return text == "true"
    try:
        return int(text)
    except ValueError:
        pass
    try:
        return float(text)
    except ValueError:
        return text


def _range(spec, key):
    parts = [p.strip() for p in spec.split(":")]
    if len(parts) not in (3, 4) or (len(parts) == 4 and parts[3] not in ("lin", "log")):
        raise ScenarioError(key, f"a range is START:STOP:COUNT[:log], not {spec!r}.")
    try:
        count = int(parts[2])
    except ValueError:
        count = 0
    if count < 1:
        raise ScenarioError(key, f"the count of a range is a whole number >= 1, not {parts[2]!r}.")
    (start, unit), (stop, stop_unit) = _quantity(parts[0], key), _quantity(parts[1], key)
    if unit != stop_unit:
        stop = _convert(parts[1], unit, key)
    log = len(parts) == 4 and parts[3] == "log"
    if log and not (start > 0 and stop > 0):
        raise ScenarioError(key, f"a log range needs positive ends, not {spec!r}.")
    numbers = np.geomspace(start, stop, count) if log else np.linspace(start, stop, count)
    if not unit:
        return [float(v) for v in numbers]
    return [f"{float(v)!r} {unit}" for v in numbers]


def _quantity(text, key):
    """(magnitude, unit text) of a number or a unit string."""
    try:
        return float(text), ""
    except ValueError:
        pass
    from ..units import registry

    try:
        q = registry().Quantity(text)
    except Exception as exc:  # pint raises several unrelated types for bad text
        raise ScenarioError(key, f"cannot read {text!r} as a quantity ({exc}).") from None
    return float(q.magnitude), f"{q.units:~}"


def _convert(text, unit, key):
    from ..units import registry

    try:
        q = registry().Quantity(text)
        return float(q.to(unit).magnitude) if unit else float(q.to("dimensionless").magnitude)
    except Exception:
        raise ScenarioError(key, f"the ends of a range must have the same dimension: {text!r} vs {unit!r}.") from None
