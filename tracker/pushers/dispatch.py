"""Select a pusher by kernel code (one compiled loop serves all pushers)."""

from numba import njit

from ..config import KERNEL
from .boris import boris_push


@njit(**KERNEL)
def push(code, ux, uy, uz, ex, ey, ez, tx, ty, tz):
    """Advance u = gamma v/c one step with the pusher ``code`` (see ``PUSHERS``)."""
    return boris_push(ux, uy, uz, ex, ey, ez, tx, ty, tz)
