"""A slow, plain-NumPy twin of one engine step, written from the published formulas.

Compared value by value with the compiled ``tracker.step.advance`` in test_step_twin.py.
Nothing here is imported from the engine's numerics: vectors are NumPy arrays and every
formula is written from its source.

Sources
-------
- Boris push: J. P. Boris (1970); C. K. Birdsall and A. B. Langdon, "Plasma Physics via
  Computer Simulation" (1991), ch. 15 (t = q B dt/(2 gamma m), s = 2 t/(1 + t^2)).
- Vay push: J.-L. Vay, Phys. Plasmas 15, 056701 (2008), the implicit relation
  u1 - u0 = 2e + (u0/g0 + u1/g1) x tau, solved here with scipy's root finder.
- Higuera-Cary push: A. V. Higuera and J. R. Cary, Phys. Plasmas 24, 052104 (2017),
  u+ - u- = (u+ + u-) x tau/gamma_bar, gamma_bar = gamma((u+ + u-)/2), solved the same way.
- Landau-Lifshitz force: L. D. Landau and E. M. Lifshitz, "The Classical Theory of Fields",
  sec. 76 (3-vector form; eq. number from memory), in SI.
- Quantum-corrected power: the Gaunt-factor fit g(chi) of Baier, Katkov and Strakhovenko
  (1998), as documented in tracker/radiation/quantum.py.
- The splitting and the synchronous diagnostics: as documented in tracker/step.py.
"""

import math

import numpy as np
from scipy import constants as sc
from scipy.optimize import fsolve

C = sc.c


def boris(u, e, tau):
    """u = gamma beta; e = q dt E/(2 m c); tau = q dt B/(2 m)."""
    um = u + e
    g = math.sqrt(1.0 + um @ um)
    t = tau / g
    s = 2.0 * t / (1.0 + t @ t)
    up = um + np.cross(um, t)
    return um + np.cross(up, s) + e


def vay(u, e, tau):
    g0 = math.sqrt(1.0 + u @ u)

    def residual(u1):
        g1 = math.sqrt(1.0 + u1 @ u1)
        return u1 - u - 2.0 * e - np.cross(u / g0 + u1 / g1, tau)

    return fsolve(residual, u + 2.0 * e, xtol=1e-13)


def higuera_cary(u, e, tau):
    um = u + e

    def residual(up):
        bar = 0.5 * (up + um)
        return up - um - np.cross(up + um, tau) / math.sqrt(1.0 + bar @ bar)

    return fsolve(residual, um, xtol=1e-13) + e


PUSHERS = {"boris": boris, "vay": vay, "higuera-cary": higuera_cary}


def gaunt(chi):
    return (1.0 + 4.8 * (1.0 + chi) * math.log1p(1.7 * chi) + 2.44 * chi**2) ** (-2.0 / 3.0)


def ll_force(u, q, m, E, B, dE, dB):
    """du/dt (1/s) from the Landau-Lifshitz force at momentum u = gamma beta (SI)."""
    tau0 = q * q / (6.0 * math.pi * sc.epsilon_0 * m * C**3)
    g = math.sqrt(1.0 + u @ u)
    beta = u / g
    lorentz = E + C * np.cross(beta, B)
    term1 = g * (dE + C * np.cross(beta, dB))
    term2 = (q / m) * (np.cross(E, B) + C * np.cross(B, np.cross(B, beta)) + (beta @ E) * E / C)
    term3 = -(q / m) * g * g * (lorentz @ lorentz - (E @ beta) ** 2) * beta / C
    return (q * tau0 / (m * C)) * (term1 + term2 + term3)


def chi_of(u, q, m, E, B):
    g = math.sqrt(1.0 + u @ u)
    beta = u / g
    f = E + C * np.cross(beta, B)
    f2 = max(f @ f - (E @ beta) ** 2, 0.0)
    return abs(q) * sc.hbar * g * math.sqrt(f2) / (m * m * C**3)


#: below this chi the stochastic model applies the g(chi)-scaled force; above it sampled photons
#: (after the step, in the kernels) carry the loss (value of tracker.radiation.stochastic)
CHI_STOCHASTIC_MIN = 1e-4


def rr_kick(model, h, u, q, m, E, B, dE, dB):
    if model == "none":
        return np.zeros(3)
    kick = h * ll_force(u, q, m, E, B, dE, dB)
    if model in ("landau-lifshitz-quantum", "quantum-stochastic"):
        chi = chi_of(u, q, m, E, B)
        if model == "quantum-stochastic" and chi >= CHI_STOCHASTIC_MIN:
            return np.zeros(3)
        kick *= gaunt(chi)
    return kick


def step(q, m, pusher, model, x, u_half, E, B, E_prev, B_prev, dt):
    """One fixed step: returns (u^{n+1/2}, x^{n+1}, synchronous u, gamma, Lienard power W, chi).

    x (3,) m at t^n, u_half = u^{n-1/2}; E, B at (x^n, t^n); E_prev, B_prev one step earlier.
    """
    dE = (E - E_prev) / dt
    dB = (B - B_prev) / dt
    h = dt
    ka = rr_kick(model, 0.5 * h, u_half, q, m, E, B, dE, dB)
    e = q * h * E / (2.0 * m * C)
    tau = q * h * B / (2.0 * m)
    ub = PUSHERS[pusher](u_half + ka, e, tau)
    kb = rr_kick(model, 0.5 * h, ub + ka, q, m, E, B, dE, dB)
    u_new = ub + kb
    g_old = math.sqrt(1.0 + u_half @ u_half)
    g_new = math.sqrt(1.0 + u_new @ u_new)
    gs = 0.5 * (g_old + g_new)
    direction = (u_half + u_new) / np.linalg.norm(u_half + u_new)
    us = math.sqrt(gs * gs - 1.0) * direction
    beta = us / gs
    # Lienard power with the Lorentz-force acceleration (Jackson sec. 14.2)
    f = E + C * np.cross(beta, B)
    f2 = max(f @ f - (E @ beta) ** 2, 0.0)
    tau0 = q * q / (6.0 * math.pi * sc.epsilon_0 * m * C**3)
    chi = abs(q) * sc.hbar * gs * math.sqrt(f2) / (m * m * C**3)
    power = q * q * tau0 / m * gs * gs * f2
    if model in ("landau-lifshitz-quantum", "quantum-stochastic"):
        power *= gaunt(chi)
    x_new = x + C * dt * u_new / g_new
    return u_new, x_new, us, gs, power, chi
