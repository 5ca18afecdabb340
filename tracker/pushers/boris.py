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

    The rotation is written without dividing by gamma: with tau = t gamma (the argument),
    u' = u- + u- x tau/gamma and s = 2 (tau/gamma)/(1 + |tau|^2/gamma^2) give
    u+ = u- + u' x s = u- + 2 (w x tau)/(gamma^2 + |tau|^2), w = gamma u- + u- x tau,
    the same update up to round-off. Its one division does not wait for the square root,
    which shortens the step's chain of dependent operations (the loop is latency bound).
    """
    umx = ux + ex
    umy = uy + ey
    umz = uz + ez
    g2 = 1.0 + umx * umx + umy * umy + umz * umz
    d = 2.0 / (g2 + tx * tx + ty * ty + tz * tz)
    g = math.sqrt(g2)
    # w = gamma u- + u- x tau
    wx = g * umx + (umy * tz - umz * ty)
    wy = g * umy + (umz * tx - umx * tz)
    wz = g * umz + (umx * ty - umy * tx)
    return (umx + d * (wy * tz - wz * ty) + ex,
            umy + d * (wz * tx - wx * tz) + ey,
            umz + d * (wx * ty - wy * tx) + ez)
