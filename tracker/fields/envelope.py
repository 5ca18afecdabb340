"""Temporal envelopes of laser pulses, shared by ``plane-wave`` and ``gaussian-beam``.

The envelope g(s) multiplies the normalised vector potential, so the field
E = -dA/dt carries its derivative g'(s) too and the pulse has no DC part.
Both models pack the same two slots (envelope code, width) with ``pack_envelope``.
"""

import math

from numba import njit

from ..config import LEAF

ENVELOPE_SIN2 = 0.0
ENVELOPE_GAUSSIAN = 1.0
ENVELOPES = ("sin2", "gaussian")

#: intensity FWHM of a cos^2 amplitude envelope as a fraction of its full length:
#: cos^4(pi s/T) = 1/2  ->  FWHM = (2/pi) arccos(2^-1/4) T.
SIN2_FWHM_FRACTION = 2.0 / math.pi * math.acos(2.0 ** -0.25)


@njit(**LEAF)
def envelope(code, width, s):
    """(g, dg/ds) of the amplitude envelope at s (s) from the pulse peak.

    code ENVELOPE_SIN2: g = cos^2(pi s/width) for |s| < width/2, else 0 (width = full length);
    code ENVELOPE_GAUSSIAN: g = exp(-2 ln2 s^2/width^2), whose square has FWHM ``width``.
    """
    if code == ENVELOPE_SIN2:
        if abs(s) >= 0.5 * width:
            return 0.0, 0.0
        arg = math.pi * s / width
        return math.cos(arg) ** 2, -(math.pi / width) * math.sin(2.0 * arg)
    c4 = 4.0 * math.log(2.0) / (width * width)
    g = math.exp(-0.5 * c4 * s * s)
    return g, -c4 * s * g


def pack_envelope(name, duration):
    """(code, width in s) for the kernel from an envelope name and the intensity FWHM (s)."""
    if name == "sin2":
        return ENVELOPE_SIN2, duration / SIN2_FWHM_FRACTION
    return ENVELOPE_GAUSSIAN, duration
