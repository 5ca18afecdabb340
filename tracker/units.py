"""Quantities at the edge: numbers are SI, strings carry units ("1.5 T", "0.8 um").

Everything returned here is a plain float (or a tuple of three floats) in SI.
"""

import math
from functools import lru_cache

from .errors import ScenarioError


@lru_cache(maxsize=1)
def registry():
    """The shared pint registry (built once; ~0.15 s)."""
    import pint

    return pint.UnitRegistry()


#: SI unit for each dimension name used by the schema.
SI_UNITS = {
    "dimensionless": "",
    "length": "m",
    "time": "s",
    "energy": "J",
    "velocity": "m/s",
    "momentum": "kg*m/s",
    "mass": "kg",
    "charge": "C",
    "magnetic_field": "T",
    "electric_field": "V/m",
    "voltage": "V",
    "magnetic_moment": "A*m**2",
    "angle": "rad",
    "frequency": "Hz",
}


def parse_scalar(value, dimension, key):
    """Convert a number (SI) or a unit string to an SI float.

    Parameters
    ----------
    value : float, int or str
        ``2.5`` (taken as SI) or ``"2.5 GeV"``.
    dimension : str
        A key of ``SI_UNITS``.
    key : str
        Key path used in error messages.
    """
    if isinstance(value, bool):
        raise ScenarioError(key, f"expected a number, not {value!r}.")
    if isinstance(value, (int, float)):
        number = float(value)
    elif isinstance(value, str):
        number = _parse_string(value, dimension, key)
    else:
        raise ScenarioError(key, f"expected a number or a string with units, not {value!r}.")
    if not math.isfinite(number):
        raise ScenarioError(key, f"must be finite, not {value!r}.")
    return number


def _parse_string(text, dimension, key):
    import pint

    ureg = registry()
    try:
        quantity = ureg.Quantity(text.strip())
    except Exception as exc:  # pint raises several unrelated types for bad text
        raise ScenarioError(key, f"cannot read {text!r} as a quantity ({exc}).") from None
    unit = SI_UNITS[dimension]
    try:
        if unit:
            return float(quantity.to(unit).magnitude)
        return float(quantity.to("dimensionless").magnitude)
    except pint.DimensionalityError:
        want = unit or "a plain number"
        raise ScenarioError(
            key, f"{text!r} has the wrong dimension; expected {dimension} ({want})."
        ) from None


def parse_vector(value, dimension, key):
    """Convert a list of three numbers (SI) or three unit strings to an SI 3-tuple."""
    if isinstance(value, str) or not hasattr(value, "__len__") or len(value) != 3:
        raise ScenarioError(key, f"expected a list of three values, not {value!r}.")
    return tuple(parse_scalar(v, dimension, f"{key}[{i}]") for i, v in enumerate(value))
