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
from .power import chi_parameter, transverse_force_squared
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
def ll_kick(dt, qm, tau0, gamma, bx, by, bz, ex, ey, ez, fbx, fby, fbz, dex, dey, dez, dbx, dby, dbz, f2):
    """Change of u over dt from the Landau-Lifshitz force (dimensionless).

    dt s; qm = q/m C/kg; tau0 s; (bx, by, bz) = beta; E V/m, B T at the particle;
    dE V/(m s), dB T/s their rates along the orbit; f2 from transverse_force_squared.
    """
    c = k.c
    inv_c = 1.0 / k.c  # folded at compile time: multiplications, not divisions, in the loop
    # term 1: gamma (dE + c beta x dB)
    t1x = gamma * (dex + c * (by * dbz - bz * dby))
    t1y = gamma * (dey + c * (bz * dbx - bx * dbz))
    t1z = gamma * (dez + c * (bx * dby - by * dbx))
    # term 2: E x B + c B x (B x beta) + (beta.E) E/c ;  B x (B x b) = B (B.b) - b B^2
    bb = fbx * bx + fby * by + fbz * bz
    b2 = fbx * fbx + fby * fby + fbz * fbz
    eb = (ex * bx + ey * by + ez * bz) * inv_c
    t2x = (ey * fbz - ez * fby) + c * (fbx * bb - bx * b2) + eb * ex
    t2y = (ez * fbx - ex * fbz) + c * (fby * bb - by * b2) + eb * ey
    t2z = (ex * fby - ey * fbx) + c * (fbz * bb - bz * b2) + eb * ez
    # term 3: -gamma^2 f2 beta/c
    s3 = gamma * gamma * f2 * inv_c
    scale = dt * qm * tau0 * inv_c
    return (scale * (t1x + qm * (t2x - s3 * bx)),
            scale * (t1y + qm * (t2y - s3 * by)),
            scale * (t1z + qm * (t2z - s3 * bz)))


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
    inv_g = 1.0 / gamma
    bx = ux * inv_g
    by = uy * inv_g
    bz = uz * inv_g
    f2 = transverse_force_squared(bx, by, bz, ex, ey, ez, fbx, fby, fbz)
    kx, ky, kz = ll_kick(dt, qm, tau0, gamma, bx, by, bz, ex, ey, ez, fbx, fby, fbz, dex, dey, dez, dbx, dby, dbz, f2)
    if model == LANDAU_LIFSHITZ_QUANTUM:
        g = gaunt_factor(chi_parameter(chi_scale, gamma, f2))
        return g * kx, g * ky, g * kz
    if model == QUANTUM_STOCHASTIC:
        # continuous only below the stochastic threshold; above it photons carry the loss
        chi = chi_parameter(chi_scale, gamma, f2)
        if chi >= CHI_STOCHASTIC_MIN:
            return 0.0, 0.0, 0.0
        g = gaunt_factor(chi)
        return g * kx, g * ky, g * kz
    return kx, ky, kz
