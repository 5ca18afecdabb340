"""Relativistic Boris push.

References
----------
.. [1] J. P. Boris, "Relativistic plasma simulation - optimization of a hybrid
   code", Proc. 4th Conf. Numerical Simulation of Plasmas, NRL, 3-67 (1970).
.. [2] C. K. Birdsall and A. B. Langdon, "Plasma Physics via Computer
   Simulation" (1991), ch. 15 (relativistic form; section from memory).
"""

import math

from numba import njit

from ..config import LEAF

CODE = 0


@njit(**LEAF)
def boris_push(ux, uy, uz, ex, ey, ez, tx, ty, tz):
    """Advance u = gamma v/c by one step.

    ``e = q dt E/(2 m c)`` and ``t = q dt B/(2 m)`` are the dimensionless half-step
    kicks. Half electric kick, magnetic rotation by the angle set by gamma(u-),
    half electric kick: u^{n+1} - u^n = 2e + (u- + u+) x t/gamma(u-).
    """
    umx = ux + ex
    umy = uy + ey
    umz = uz + ez
    inv_g = 1.0 / math.sqrt(1.0 + umx * umx + umy * umy + umz * umz)
    tx *= inv_g
    ty *= inv_g
    tz *= inv_g
    f = 2.0 / (1.0 + tx * tx + ty * ty + tz * tz)
    # u' = u- + u- x t
    upx = umx + (umy * tz - umz * ty)
    upy = umy + (umz * tx - umx * tz)
    upz = umz + (umx * ty - umy * tx)
    # u+ = u- + u' x s, s = f t
    return (umx + f * (upy * tz - upz * ty) + ex,
            umy + f * (upz * tx - upx * tz) + ey,
            umz + f * (upx * ty - upy * tx) + ez)
