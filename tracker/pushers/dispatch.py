"""Select a pusher by kernel code (one compiled loop serves all pushers)."""

import math

from numba import njit

from ..config import LEAF
from .boris import CODE as BORIS
from .boris import boris_push
from .higuera_cary import CODE as HIGUERA_CARY
from .higuera_cary import higuera_cary_push
from .vay import CODE as VAY
from .vay import vay_push

#: kernel code -> pusher function name, for the registry test (every code reachable, none twice)
DISPATCHED = {BORIS: "boris_push", VAY: "vay_push", HIGUERA_CARY: "higuera_cary_push"}


@njit(**LEAF)
def push(code, ux, uy, uz, ex, ey, ez, tx, ty, tz):
    """Advance u = gamma v/c one step with the pusher ``code`` (see ``PUSHERS``).

    ``e = q dt E/(2 m c)`` and ``t = q dt B/(2 m)`` (dimensionless). An unknown code
    returns NaN, so the particle stops as non-finite instead of running another method
    (``tracker.compile`` refuses unknown codes before a kernel sees them).
    """
    if code == BORIS:
        return boris_push(ux, uy, uz, ex, ey, ez, tx, ty, tz)
    if code == VAY:
        return vay_push(ux, uy, uz, ex, ey, ez, tx, ty, tz)
    if code == HIGUERA_CARY:
        return higuera_cary_push(ux, uy, uz, ex, ey, ez, tx, ty, tz)
    return math.nan, math.nan, math.nan
