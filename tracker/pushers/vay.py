"""Relativistic Vay push: velocity-averaged magnetic force, exact for E + v x B = 0.

References
----------
.. [1] J.-L. Vay, "Simulation of beams or plasmas crossing at relativistic
   velocity", Phys. Plasmas 15, 056701 (2008).

The scheme is defined by the implicit relation (dimensionless, u = gamma v/c,
e = q dt E/(2 m c), t = q dt B/(2 m))

.. math:: u^{n+1} - u^n = 2 e + (u^n/\\gamma^n + u^{n+1}/\\gamma^{n+1}) \\times t

so the magnetic force uses the average *velocity*; a particle for which
E + v x B = 0 then keeps its velocity exactly, which Boris does not [1]_. The
update solves the relation in closed form: with u' = u^n + 2 e + u^n/gamma^n x t
the new gamma is the positive root of gamma^4 - sigma gamma^2 - (|t|^2 + (u'.t)^2)
= 0, sigma = 1 + |u'|^2 - |t|^2, and u^{n+1} is u' rotated back about t. The
algebra follows the paper's Sec. II (equation numbers not checked against the
printed text; the closed form is checked in tests/test_pushers.py). The map conserves |u| when
E = 0 but is not volume-preserving (Higuera & Cary 2017).
"""

import math

from numba import njit

from ..config import LEAF

CODE = 1


@njit(**LEAF)
def gamma_from_quartic(wx, wy, wz, tx, ty, tz):
    """Positive root gamma of gamma^4 - sigma gamma^2 - (|t|^2 + (w.t)^2) = 0 (dimensionless).

    sigma = 1 + |w|^2 - |t|^2. Shared by the Vay and Higuera-Cary updates. When
    sigma < 0 (|t| > gamma(w), very coarse steps) the root is taken from the
    product of the roots so that no cancellation occurs.
    """
    t2 = tx * tx + ty * ty + tz * tz
    wt = wx * tx + wy * ty + wz * tz
    sigma = 1.0 + wx * wx + wy * wy + wz * wz - t2
    extra = t2 + wt * wt
    root = math.sqrt(sigma * sigma + 4.0 * extra)
    if sigma >= 0.0:
        g2 = 0.5 * (sigma + root)
    else:
        g2 = 2.0 * extra / (root - sigma)
    return math.sqrt(g2)


@njit(**LEAF)
def vay_push(ux, uy, uz, ex, ey, ez, tx, ty, tz):
    """Advance u = gamma v/c by one step with Vay's velocity-averaged scheme.

    Parameters
    ----------
    ux, uy, uz : float
        u = gamma v/c before the step (dimensionless).
    ex, ey, ez : float
        q dt E/(2 m c) (dimensionless).
    tx, ty, tz : float
        q dt B/(2 m) (dimensionless).

    Returns
    -------
    (float, float, float)
        u after the step.
    """
    inv_g = 1.0 / math.sqrt(1.0 + ux * ux + uy * uy + uz * uz)
    # u' = u + 2e + (u/gamma) x t
    wx = ux + 2.0 * ex + (uy * tz - uz * ty) * inv_g
    wy = uy + 2.0 * ey + (uz * tx - ux * tz) * inv_g
    wz = uz + 2.0 * ez + (ux * ty - uy * tx) * inv_g
    inv_gn = 1.0 / gamma_from_quartic(wx, wy, wz, tx, ty, tz)
    sx = tx * inv_gn
    sy = ty * inv_gn
    sz = tz * inv_gn
    f = 1.0 / (1.0 + sx * sx + sy * sy + sz * sz)
    ws = wx * sx + wy * sy + wz * sz
    # u_new = f [u' + (u'.s) s + u' x s]
    return (f * (wx + ws * sx + (wy * sz - wz * sy)),
            f * (wy + ws * sy + (wz * sx - wx * sz)),
            f * (wz + ws * sz + (wx * sy - wy * sx)))
