"""Landau-Lifshitz radiation reaction, all three terms, as a momentum kick.

References
----------
.. [1] L. D. Landau and E. M. Lifshitz, "The Classical Theory of Fields",
   4th ed., sec. 76 "Radiation damping" (3-vector form; eq. numbers from memory).
.. [2] M. Tamburini et al., New J. Phys. 12, 123005 (2010): LL next to a
   Boris push by operator splitting (from memory).

In SI, with u = gamma beta and tau0 = q^2/(6 pi eps0 m c^3):

du/dt|RR = (q tau0/(m c)) { gamma (DE/Dt + c beta x DB/Dt)
           + (q/m) [E x B + c B x (B x beta) + (beta.E) E/c]
           - (q/m) gamma^2 [|E + c beta x B|^2 - (E.beta)^2] beta/c }

The convective derivatives D/Dt along the orbit are taken as the backward
difference of the fields seen at the last two steps: no extra field
evaluation, valid for any field model, first order in dt in a term that is
itself ~1/(gamma a0) of the damping (and leaves the final momentum after a
plane-wave pulse unchanged).
"""

import math

from numba import njit

from .. import constants as k
from ..config import LEAF
from .power import momentum_force_squared
from .quantum import gaunt_factor
from .stochastic import CHI_STOCHASTIC_MIN

NONE = 0
LANDAU_LIFSHITZ = 1
LANDAU_LIFSHITZ_QUANTUM = 2  #: LL force and power scaled by the Gaunt factor g(chi), see quantum.py
#: photons sampled one by one (stochastic.py); below CHI_STOCHASTIC_MIN the g(chi)-scaled LL force
QUANTUM_STOCHASTIC = 3

#: scenario name -> kernel code
MODELS = {"none": NONE, "landau-lifshitz": LANDAU_LIFSHITZ, "landau-lifshitz-quantum": LANDAU_LIFSHITZ_QUANTUM,
          "quantum-stochastic": QUANTUM_STOCHASTIC}


@njit(**LEAF)
def ll_kick(dt, qm, tau0, gamma, inv_gamma, ux, uy, uz, ex, ey, ez, fbx, fby, fbz, dex, dey, dez, dbx, dby, dbz,
            g2f2):
    """Change of u over dt from the Landau-Lifshitz force (dimensionless).

    dt s; qm = q/m C/kg; tau0 s; u = gamma beta, inv_gamma = 1/gamma; E V/m, B T at the
    particle; dE V/(m s), dB T/s their rates along the orbit; g2f2 = gamma^2 f2 from
    ``power.momentum_force_squared``. The terms of the module docstring written with u:

        gamma (dE + c beta x dB) = gamma dE + c u x dB
        (q/m) [... - gamma^2 f2 beta/c] = (q/m) {E x B + [c B x (B x u) + (u.E) E/c - gamma^2 f2 u/c]/gamma}

    and summed so that gamma^2 f2 and 1/gamma, the last inputs to arrive, enter last
    (the step is latency bound: this shortens its chain of dependent operations).
    """
    c = k.c
    inv_c = 1.0 / k.c  # folded at compile time: multiplications, not divisions, in the loop
    scale = dt * qm * tau0 * inv_c
    sq = scale * qm
    sqc = sq * inv_c
    # without gamma: c u x dB and E x B
    ax = scale * (c * (uy * dbz - uz * dby)) + sq * (ey * fbz - ez * fby)
    ay = scale * (c * (uz * dbx - ux * dbz)) + sq * (ez * fbx - ex * fbz)
    az = scale * (c * (ux * dby - uy * dbx)) + sq * (ex * fby - ey * fbx)
    # times 1/gamma: c B x (B x u) + (u.E) E/c ;  B x (B x u) = B (B.u) - u B^2
    bu = fbx * ux + fby * uy + fbz * uz
    b2 = fbx * fbx + fby * fby + fbz * fbz
    eu = (ex * ux + ey * uy + ez * uz) * inv_c
    rx = c * (fbx * bu - ux * b2) + eu * ex
    ry = c * (fby * bu - uy * b2) + eu * ey
    rz = c * (fbz * bu - uz * b2) + eu * ez
    # the radiation term: -(q/m) gamma^2 f2 u/(c gamma)
    return (((ax + (scale * dex) * gamma) + inv_gamma * (sq * rx)) - (inv_gamma * (sqc * ux)) * g2f2,
            ((ay + (scale * dey) * gamma) + inv_gamma * (sq * ry)) - (inv_gamma * (sqc * uy)) * g2f2,
            ((az + (scale * dez) * gamma) + inv_gamma * (sq * rz)) - (inv_gamma * (sqc * uz)) * g2f2)


@njit(**LEAF)
def radiation_kick(model, dt, qm, tau0, chi_scale, gamma, ux, uy, uz, ex, ey, ez, fbx, fby, fbz,
                   dex, dey, dez, dbx, dby, dbz):
    """Change of u = gamma beta over dt (s) from the damping ``model`` at the momentum u.

    ``gamma`` must be sqrt(1 + |u|^2) (the caller often knows it already).
    Evaluates the force at (u, E, B): Landau-Lifshitz, or Landau-Lifshitz scaled by the
    Gaunt factor g(chi) of that state (quantum-corrected, see quantum.py), or for the
    stochastic model that same corrected force below ``CHI_STOCHASTIC_MIN`` and zero above
    (the photons sampled in ``step.advance`` carry the loss there). ``NONE``
    gives zero; an unknown code gives NaN (the particle stops) rather than a silent
    zero. Units as ``ll_kick``; chi_scale = |q| hbar/(m^2 c^3) in m/V.
    """
    if model == NONE:
        return 0.0, 0.0, 0.0
    if model != LANDAU_LIFSHITZ and model != LANDAU_LIFSHITZ_QUANTUM and model != QUANTUM_STOCHASTIC:
        return math.nan, math.nan, math.nan
    g2f2, _ = momentum_force_squared(gamma, 1.0, ux, uy, uz, ex, ey, ez, fbx, fby, fbz)
    kx, ky, kz = ll_kick(dt, qm, tau0, gamma, 1.0 / gamma, ux, uy, uz, ex, ey, ez, fbx, fby, fbz,
                         dex, dey, dez, dbx, dby, dbz, g2f2)
    if model == LANDAU_LIFSHITZ_QUANTUM:
        g = gaunt_factor(chi_scale * math.sqrt(g2f2))   # chi = chi_scale gamma sqrt(f2)
        return g * kx, g * ky, g * kz
    if model == QUANTUM_STOCHASTIC:
        # continuous only below the stochastic threshold; above it photons carry the loss
        chi = chi_scale * math.sqrt(g2f2)
        if chi >= CHI_STOCHASTIC_MIN:
            return 0.0, 0.0, 0.0
        g = gaunt_factor(chi)
        return g * kx, g * ky, g * kz
    return kx, ky, kz
