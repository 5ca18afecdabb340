"""Numbers and units for display: energies in eV multiples, axis units, unit labels.

Display only. Exports and the engine keep SI values untouched.
"""

import math

from tracker import constants

#: significant digits of energies in the summary (the browser test compares to these)
ENERGY_DIGITS = 6

ENERGY_UNITS = (("TeV", 1e12), ("GeV", 1e9), ("MeV", 1e6), ("keV", 1e3), ("eV", 1.0),
                ("meV", 1e-3), ("µeV", 1e-6), ("neV", 1e-9))
LENGTH_UNITS = (("km", 1e3), ("m", 1.0), ("mm", 1e-3), ("µm", 1e-6), ("nm", 1e-9), ("pm", 1e-12))
TIME_UNITS = (("s", 1.0), ("ms", 1e-3), ("µs", 1e-6), ("ns", 1e-9), ("ps", 1e-12), ("fs", 1e-15),
              ("as", 1e-18))


def pick_unit(magnitude, units):
    """(label, scale in SI) of the largest unit not bigger than ``magnitude``.

    Parameters
    ----------
    magnitude : float
        Typical absolute size of the values, SI.
    units : sequence of (label, scale)
        Largest first, e.g. ``LENGTH_UNITS``.
    """
    magnitude = abs(magnitude)
    if not math.isfinite(magnitude) or magnitude == 0.0:
        for label, scale in units:
            if scale == 1.0:
                return label, scale
        return units[0]
    for label, scale in units:
        if magnitude >= scale:
            return label, scale
    return units[-1]


def energy_unit(joules):
    """(label, joules per unit) of the eV multiple suited to an energy in J."""
    label, scale = pick_unit(joules / constants.e, ENERGY_UNITS)
    return label, scale * constants.e


def energy_text(joules, digits=ENERGY_DIGITS):
    """An energy in J as text in eV multiples, e.g. ``'1.02318 MeV'``."""
    if not math.isfinite(joules):
        return "–"
    if joules == 0.0:
        return "0 eV"
    label, scale = energy_unit(joules)
    return f"{joules / scale:.{digits}g} {label}"


def quantity_text(value, units, digits=4):
    """A value in SI as text in the best unit of ``units``, e.g. ``'73.35 ps'``."""
    if value is None or not math.isfinite(value):
        return "–"
    label, scale = pick_unit(value, units)
    return f"{value / scale:.{digits}g} {label}"


def number_text(value, digits=4):
    """A plain number with ``digits`` significant digits ('–' when not finite)."""
    if value is None or not math.isfinite(value):
        return "–"
    return f"{value:.{digits}g}"


def unit_label(unit):
    """An SI unit label as people write it: 'A*m**2' -> 'A·m²', 'kg*m/s' -> 'kg·m/s'."""
    return unit.replace("**2", "²").replace("**3", "³").replace("*", "·")
