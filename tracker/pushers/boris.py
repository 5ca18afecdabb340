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
    g2 = 1.0 + umx * umx + umy * umy + umz * umz
    inv_g = 1.0 / math.sqrt(g2)
    # s = 2 t/(1 + |t|^2) with t = tau/gamma equals 2 gamma^2/(gamma^2 + |tau|^2): no square root
    # on its path, so it overlaps with 1/gamma instead of waiting for it
    f = 2.0 * g2 / (g2 + tx * tx + ty * ty + tz * tz)
    tx *= inv_g
    ty *= inv_g
    tz *= inv_g
    # u' = u- + u- x t
    upx = umx + (umy * tz - umz * ty)
    upy = umy + (umz * tx - umx * tz)
    upz = umz + (umx * ty - umy * tx)
    # u+ = u- + u' x s, s = f t
    return (umx + f * (upy * tz - upz * ty) + ex,
            umy + f * (upz * tx - upx * tz) + ey,
            umz + f * (upx * ty - upy * tx) + ez)
