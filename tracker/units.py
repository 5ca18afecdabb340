"""Quantities at the edge: numbers are SI, strings carry units ("1.5 T", "0.8 um").

Everything returned here is a plain float (or a tuple of three floats) in SI.
"""

import math
import re
from functools import lru_cache

from .errors import ScenarioError, brief

#: longest unit string parsed: pint's parser time grows with the square of the length
#: (16k characters took seconds), and no quantity a person types needs more.
MAX_QUANTITY_LENGTH = 100

#: gauss and its multiples in tesla. pint reads "G" as the gravitational constant and
#: "gauss" as the Gaussian-system unit (another dimension), so magnetic fields in gauss
#: are read here: 1 G = 1e-4 T (BIPM SI Brochure, 9th ed. (2019), table 9).
GAUSS_IN_TESLA = {"G": 1e-4, "gauss": 1e-4, "Gs": 1e-4, "kG": 1e-1, "kilogauss": 1e-1, "mG": 1e-7,
                  "milligauss": 1e-7, "uG": 1e-10, "µG": 1e-10, "microgauss": 1e-10, "MG": 1e2,
                  "megagauss": 1e2}
_GAUSS = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(" +
                    "|".join(sorted(map(re.escape, GAUSS_IN_TESLA), key=len, reverse=True)) + r")\s*$")


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
    "intensity": "W/m**2",
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
        try:
            number = float(value)
        except OverflowError:
            raise ScenarioError(key, f"{brief(value)} is too large for a floating-point number.") from None
    elif isinstance(value, str):
        number = _parse_string(value, dimension, key)
    else:
        raise ScenarioError(key, f"expected a number or a string with units, not {brief(value)}.")
    if not math.isfinite(number):
        raise ScenarioError(key, f"must be finite, not {brief(value)}.")
    return number


def _parse_string(text, dimension, key):
    value, problem = _si_value(text, dimension)
    if problem:
        raise ScenarioError(key, problem)
    return value


@lru_cache(maxsize=4096)
def _si_value(text, dimension):
    """(SI float, None) or (None, problem text) for a unit string. Cached: pint takes ~3 ms
    per string, and the lab re-validates the whole scenario after every edit."""
    import pint

    if len(text) > MAX_QUANTITY_LENGTH:
        return None, (f"{brief(text)} is too long for a quantity (at most {MAX_QUANTITY_LENGTH} "
                      "characters, e.g. \"1.5 T\").")
    if dimension == "magnetic_field":
        gauss = _GAUSS.match(text)
        if gauss:
            return float(gauss.group(1)) * GAUSS_IN_TESLA[gauss.group(2)], None
    ureg = registry()
    try:
        quantity = ureg.Quantity(text.strip())
        if not hasattr(quantity, "to"):
            # a bare number in a string ("2.5") may come back as a plain number
            quantity = ureg.Quantity(float(quantity))
    except Exception as exc:  # pint raises several unrelated types for bad text
        return None, f"cannot read {brief(text)} as a quantity ({brief(str(exc), 80)})."
    unit = SI_UNITS[dimension]
    try:
        return float(quantity.to(unit or "dimensionless").magnitude), None
    except pint.DimensionalityError:
        want = unit or "a plain number"
        hint = " (gauss: \"1e4 G\", \"10 kG\")" if dimension == "magnetic_field" else ""
        return None, f"{brief(text)} has the wrong dimension; expected {dimension} ({want}){hint}."
    except (TypeError, ValueError, OverflowError, ArithmeticError) as exc:
        return None, f"cannot read {brief(text)} as a quantity ({brief(str(exc), 80)})."


def parse_vector(value, dimension, key):
    """Convert a list of three numbers (SI) or three unit strings to an SI 3-tuple."""
    if isinstance(value, (str, bytes, dict)) or not hasattr(value, "__len__") or len(value) != 3:
        raise ScenarioError(key, f"expected a list of three values, not {brief(value)}.")
    return tuple(parse_scalar(v, dimension, f"{key}[{i}]") for i, v in enumerate(value))
