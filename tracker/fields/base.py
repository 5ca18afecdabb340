"""Declarative description of a field model: its parameters, validation and packing.

A field model is data plus one numba evaluator (see ``tracker.fields`` for the recipe).
"""

import math
from dataclasses import dataclass

from ..errors import ScenarioError
from ..units import SI_UNITS, parse_scalar, parse_vector

REQUIRED = object()   #: marker: the parameter has no default
ABSENT = None         #: marker default: the parameter may be left out


@dataclass(frozen=True)
class Param:
    """One input of a field model.

    ``kind`` is ``"scalar"``, ``"vector"`` (three values), ``"choice"`` (one of
    ``choices``), ``"path"`` (a file name, relative to the scenario file),
    ``"formula"`` (text checked by the model's ``resolve``) or ``"table"`` (names ->
    quantities of any dimension, stored in SI as a tuple of (name, value) pairs).
    ``default`` is an SI value, ``REQUIRED`` or ``ABSENT``.
    """

    name: str
    kind: str
    dimension: str = "dimensionless"
    default: object = REQUIRED
    choices: tuple = ()
    positive: bool = False
    doc: str = ""

    @property
    def unit(self):
        """SI unit label for forms and files ("" for pure numbers)."""
        return SI_UNITS[self.dimension] if self.kind in ("scalar", "vector", "formula") else ""

    def parse(self, raw, key):
        """Validate one user value and return it in SI (float, 3-tuple or str)."""
        if self.kind == "choice":
            if raw not in self.choices:
                raise ScenarioError(key, f"must be one of {', '.join(map(repr, self.choices))}, not {raw!r}.")
            return raw
        if self.kind == "vector":
            return parse_vector(raw, self.dimension, key)
        if self.kind in ("path", "formula"):
            if not isinstance(raw, str) or not raw.strip():
                what = "a file name" if self.kind == "path" else "a formula"
                raise ScenarioError(key, f"must be {what} (text), not {raw!r}.")
            return raw.strip() if self.kind == "path" else raw
        if self.kind == "table":
            return parse_table(raw, key)
        value = parse_scalar(raw, self.dimension, key)
        if self.positive and not value > 0:
            raise ScenarioError(key, f"must be positive, not {raw!r}.")
        return value


@dataclass(frozen=True)
class FieldModel:
    """A registered field type: name in files, kind code in kernels, inputs, packing."""

    name: str
    code: int
    label: str
    params: tuple
    pack: object          #: values dict (SI) -> list of floats for the field table row
    doc: str = ""
    check: object = None  #: optional values dict, key prefix -> None; raises ScenarioError
    domain: object = None  #: optional values dict -> (kind, description) of validity limits
    rate_label: str = ""   #: names the model's own time scale (``rate`` leaf in its module), "" if none
    #: optional (values, key, base_dir) -> None: validates what lies outside the scenario
    #: (map files, formulas); raises ScenarioError. base_dir resolves relative paths.
    resolve: object = None
    #: optional (values, base_dir) -> 1-D float64 ndarray: the model's bulk-data block
    #: (field maps, expression programs); its offset goes to params[i, DATA_OFFSET_SLOT].
    data: object = None
    #: optional (values, base_dir) -> int: bytes of the bulk-data block (for the plan's memory).
    data_bytes: object = None
    #: optional (values, x (3,) m, base_dir) -> str | None: why the model returns NaN there
    #: (the particle left its domain), so the engine can name the reason of a stop.
    outside: object = None
    #: optional (values, scenario) -> [(kind, message)]: advice known before a run (e.g. a
    #: beam waist below the paraxial limit, a formula field that is not divergence-free).
    advice: object = None

    def param(self, name):
        for p in self.params:
            if p.name == name:
                return p
        raise KeyError(name)


def parse_table(raw, key):
    """{name: number (SI) or "value unit"} -> ((name, SI float), ...) in the given order.

    Units are converted to SI base units (pint ``to_base_units``), so "2 T" -> 2.0 and
    "0.5 mm" -> 5e-4; a plain number is taken as SI.
    """
    if not isinstance(raw, dict):
        raise ScenarioError(key, f"must be a table of name = value, not {raw!r}.")
    out = []
    for name, value in raw.items():
        where = f"{key}.{name}"
        if not isinstance(name, str) or not name.isidentifier() or name.startswith("_"):
            raise ScenarioError(where, f"a parameter name is a plain identifier (letters, digits, _), not {name!r}.")
        out.append((name, parse_any_quantity(value, where)))
    return tuple(out)


def parse_any_quantity(value, key):
    """A number (SI) or a unit string of any dimension -> float in SI base units."""
    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        raise ScenarioError(key, f"expected a number or a string with units, not {value!r}.")
    if isinstance(value, str):
        from ..units import registry

        try:
            quantity = registry().Quantity(value.strip()).to_base_units()
        except Exception as exc:  # pint raises several unrelated types for bad text
            raise ScenarioError(key, f"cannot read {value!r} as a quantity ({exc}).") from None
        if any(power != int(power) for power in quantity.dimensionality.values()):
            # pint's gauss, statvolt, ... are Gaussian-CGS units with half-integer dimensions
            raise ScenarioError(key, f"{value!r} is in a Gaussian-CGS unit; give it in SI units (e.g. '0.2 T').")
        number = float(quantity.magnitude)
    else:
        number = float(value)
    if not math.isfinite(number):
        raise ScenarioError(key, f"must be finite, not {value!r}.")
    return number


#: lengths a direction may have: their squares stay normal doubles (1e-300 .. 1e300)
UNIT_VECTOR_NORMS = (1e-150, 1e150)


def unit_vector(vec, key):
    """Normalise a 3-vector, refusing a zero or near-zero one."""
    norm = math.sqrt(sum(v * v for v in vec))
    if not norm > 0:
        raise ScenarioError(key, f"must be a non-zero vector, not {list(vec)!r}.")
    if not UNIT_VECTOR_NORMS[0] <= norm <= UNIT_VECTOR_NORMS[1]:
        # the squares overflow to inf (or lose their digits below 1e-150): the vector would
        # normalise to zero or to garbage and silently start a particle at rest
        raise ScenarioError(key, f"has a length of {math.hypot(*vec):.3g}, outside what can be normalised "
                                 f"({UNIT_VECTOR_NORMS[0]:.0e} .. {UNIT_VECTOR_NORMS[1]:.0e}); give components "
                                 f"of order 1, not {list(vec)!r}.")
    if abs(norm - 1.0) < 4e-16:
        return tuple(float(v) for v in vec)  # already unit: keep it bit-exact (TOML round trip)
    return tuple(v / norm for v in vec)


def cross(a, b):
    return (a[1] * b[2] - a[2] * b[1], a[2] * b[0] - a[0] * b[2], a[0] * b[1] - a[1] * b[0])


def dot(a, b):
    return a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
