"""Instantaneous radiated power (Lienard) and the quantum parameter chi, from the fields.

References
----------
.. [1] J. D. Jackson, "Classical Electrodynamics", 3rd ed. (1999), sec. 14.2:
   Lienard's generalisation of the Larmor formula (eq. numbers from memory).
.. [2] A. Di Piazza et al., Rev. Mod. Phys. 84, 1177 (2012): chi.

With the Lorentz-force acceleration the Lienard power becomes
P = (q^2 tau0/m) gamma^2 [ |E + v x B|^2 - (E.v)^2/c^2 ],  tau0 = q^2/(6 pi eps0 m c^3).
"""

import math

from numba import njit

from .. import constants as k
from ..config import LEAF


@njit(**LEAF)
def transverse_force_squared(bx, by, bz, ex, ey, ez, fbx, fby, fbz):
    """|E + c beta x B|^2 - (E.beta)^2 in (V/m)^2, beta = v/c; clipped at 0 against round-off."""
    c = k.c
    fx = ex + c * (by * fbz - bz * fby)
    fy = ey + c * (bz * fbx - bx * fbz)
    fz = ez + c * (bx * fby - by * fbx)
    eb = ex * bx + ey * by + ez * bz
    f2 = fx * fx + fy * fy + fz * fz - eb * eb
    return f2 if f2 > 0.0 else 0.0


@njit(**LEAF)
def momentum_force_squared(gamma, scale, sx, sy, sz, ex, ey, ez, fbx, fby, fbz):
    """gamma^2 (|E + c beta x B|^2 - (E.beta)^2) = |gamma E + c u x B|^2 - (E.u)^2 in (V/m)^2, and E.u in V/m,
    for the momentum u = gamma beta = scale * s (pass scale = 1 for u itself).

    ``transverse_force_squared`` times gamma^2, from u without dividing by gamma, clipped at 0.
    The step calls it where gamma and |u| come out of square roots: what needs only s and
    the fields is formed before them, so little is left to do after them.
    """
    c = k.c
    eu = scale * (ex * sx + ey * sy + ez * sz)
    fx = gamma * ex + scale * (c * (sy * fbz - sz * fby))
    fy = gamma * ey + scale * (c * (sz * fbx - sx * fbz))
    fz = gamma * ez + scale * (c * (sx * fby - sy * fbx))
    g2f2 = (fx * fx + fy * fy) + (fz * fz - eu * eu)
    return (g2f2 if g2f2 > 0.0 else 0.0), eu


@njit(**LEAF)
def lienard_power(power_scale, gamma, f2):
    """Lienard power in W: ``power_scale`` = q^2 tau0/m (W m^2/V^2), ``f2`` from transverse_force_squared."""
    return power_scale * gamma * gamma * f2


@njit(**LEAF)
def chi_parameter(chi_scale, gamma, f2):
    """Quantum parameter chi = |q| hbar gamma sqrt(f2)/(m^2 c^3); ``chi_scale`` = |q| hbar/(m^2 c^3)."""
    return chi_scale * gamma * math.sqrt(f2)


def power_scale(charge, mass):
    """q^2 tau0/m in W/(V/m)^2 for a species (charge C, mass kg)."""
    return charge**2 * k.tau0(charge, mass) / mass


def chi_scale(charge, mass):
    """|q| hbar/(m^2 c^3) in 1/(V/m) for a species (charge C, mass kg)."""
    return abs(charge) * k.hbar / (mass**2 * k.c**3)
