"""Relativistic Higuera-Cary push: momentum-averaged, volume-preserving, exact for E + v x B = 0.

References
----------
.. [1] A. V. Higuera and J. R. Cary, "Structure-preserving second-order
   integration of relativistic charged particle trajectories in
   electromagnetic fields", Phys. Plasmas 24, 052104 (2017).

Half electric kick, a magnetic rotation whose angle is set by the Lorentz
factor of the *average* momentum u_bar = (u- + u+)/2, half electric kick:

.. math:: u^{n+1} - u^n = 2 e + 2 \\bar u \\times t / \\gamma(\\bar u)

(u = gamma v/c, e = q dt E/(2 m c), t = q dt B/(2 m)). gamma(u_bar) solves
the same quartic as in Vay's scheme with u- in place of u'. Like Boris the
map is volume-preserving; like Vay it keeps the E x B velocity and moves a
force-free particle straight [1]_ (abstract; the closed form here was
re-derived from the implicit relation and checked against it in
tests/test_pushers.py).
"""

from numba import njit

from ..config import LEAF
from .vay import gamma_from_quartic

CODE = 2


@njit(**LEAF)
def higuera_cary_push(ux, uy, uz, ex, ey, ez, tx, ty, tz):
    """Advance u = gamma v/c by one step with the Higuera-Cary scheme.

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
    mx = ux + ex
    my = uy + ey
    mz = uz + ez
    inv_g = 1.0 / gamma_from_quartic(mx, my, mz, tx, ty, tz)
    sx = tx * inv_g
    sy = ty * inv_g
    sz = tz * inv_g
    f = 1.0 / (1.0 + sx * sx + sy * sy + sz * sz)
    ms = mx * sx + my * sy + mz * sz
    # u_bar = f [u- + (u-.s) s + u- x s]
    bx = f * (mx + ms * sx + (my * sz - mz * sy))
    by = f * (my + ms * sy + (mz * sx - mx * sz))
    bz = f * (mz + ms * sz + (mx * sy - my * sx))
    # u+ = 2 u_bar - u- (= u_bar + u_bar x s; this form avoids the cancellation of
    # u_bar x s against u_bar when |s| >> 1), then the second half kick
    return 2.0 * bx - mx + ex, 2.0 * by - my + ey, 2.0 * bz - mz + ez
