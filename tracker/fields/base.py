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

    ``kind`` is ``"scalar"``, ``"vector"`` (three values) or ``"choice"`` (one of
    ``choices``). ``default`` is an SI value, ``REQUIRED`` or ``ABSENT``.
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
        return SI_UNITS[self.dimension] if self.kind != "choice" else ""

    def parse(self, raw, key):
        """Validate one user value and return it in SI (float, 3-tuple or str)."""
        if self.kind == "choice":
            if raw not in self.choices:
                raise ScenarioError(key, f"must be one of {', '.join(map(repr, self.choices))}, not {raw!r}.")
            return raw
        if self.kind == "vector":
            return parse_vector(raw, self.dimension, key)
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
    data: object = None    #: optional (values, base_dir) -> 1-D float64 bulk data (maps, programs)
    outside: object = None  #: optional (values, x (3,) m) -> reason text when x is outside the model's domain


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
