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

    The rotation is written so that little waits for the square root (the step loop is
    latency bound): with tau = t gamma (the argument), a = u- x tau and b = a x tau,
    u' = u- + a/gamma and s = 2 (tau/gamma)/(1 + |tau|^2/gamma^2) give
    u+ = u- + u' x s = u- + d (b + gamma a),  d = 2/(gamma^2 + |tau|^2),
    the same update up to round-off; d and b do not need gamma, so after the square root
    only (d gamma) a is left.
    """
    umx = ux + ex
    umy = uy + ey
    umz = uz + ez
    g2 = (umx * umx + umy * umy) + (umz * umz + 1.0)
    ax = umy * tz - umz * ty
    ay = umz * tx - umx * tz
    az = umx * ty - umy * tx
    bx = ay * tz - az * ty
    by = az * tx - ax * tz
    bz = ax * ty - ay * tx
    d = 2.0 / (g2 + (tx * tx + ty * ty + tz * tz))
    dg = d * math.sqrt(g2)
    return ((umx + ex) + d * bx) + dg * ax, ((umy + ey) + d * by) + dg * ay, ((umz + ez) + d * bz) + dg * az
