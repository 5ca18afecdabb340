"""Select a pusher by kernel code (one compiled loop serves all pushers)."""

from numba import njit

from ..config import LEAF
from .boris import boris_push
from .higuera_cary import CODE as HIGUERA_CARY
from .higuera_cary import higuera_cary_push
from .vay import CODE as VAY
from .vay import vay_push


@njit(**LEAF)
def push(code, ux, uy, uz, ex, ey, ez, tx, ty, tz):
    """Advance u = gamma v/c one step with the pusher ``code`` (see ``PUSHERS``).

    ``e = q dt E/(2 m c)`` and ``t = q dt B/(2 m)`` (dimensionless); an unknown
    code falls back to Boris (codes are validated when the Scenario is built).
    """
    if code == VAY:
        return vay_push(ux, uy, uz, ex, ey, ez, tx, ty, tz)
    if code == HIGUERA_CARY:
        return higuera_cary_push(ux, uy, uz, ex, ey, ez, tx, ty, tz)
    return boris_push(ux, uy, uz, ex, ey, ez, tx, ty, tz)
