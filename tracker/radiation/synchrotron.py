"""Synchrotron (bending-magnet) spectrum accumulated along a tracked orbit.

Each saved state radiates, for the duration of its trapezoid weight, the
spectrum of a charge on a circle of the local curvature radius:

    dW/domega = sum_k w_k (P_k/omega_c,k) S(omega/omega_c,k)
    S(x) = (9 sqrt3/(8 pi)) F(x),   F(x) = x Int_x^inf K_{5/3}(t) dt,   Int_0^inf S dx = 1
    omega_c = (3/2) gamma^3 c/rho,  rho = c beta^2/|beta_dot_perp|   (local curvature radius)
    P = q^2 gamma^4 |beta_dot_perp|^2/(6 pi eps0 c)                    (Lienard, beta_dot normal to beta)

so the spectrum integrates over omega to sum_k w_k P_k, the energy radiated
by the transverse acceleration. The part of the Lienard power that comes from
acceleration along the velocity (smaller by ~1/gamma^2 at equal force) has no
synchrotron form and is left out.

Validity (common practice, no source): gamma >> 1 and the curvature changes
little over a formation length rho/gamma (bends, wigglers with K >> 1,
helical orbits, laser fields with a0 >> 1). For an undulator with K <~ 1 the
emission is an interference pattern; use ``tracker.radiation.spectrum``.

What is provided
----------------
- ``synchrotron_spectrum(result, omega)``: dW/domega in J s, summed over all
  directions (the angle-integrated spectrum).
- ``photon_spectrum(result, omega)``: the photon number per unit angular
  frequency dN/domega = (dW/domega)/(hbar omega), in s (multiply by
  0.001 omega for photons per 0.1 % bandwidth).
- Both take ``acceptance=(direction, half_angle)``: only the states whose
  velocity points inside that cone (a detector seeing the orbit's fan through
  a round aperture) are counted. This is right when the half-angle is large
  compared with the emission cone, ~(1/gamma)(omega_c/omega)^(1/3) at omega;
  for smaller apertures use the radiation integral in a grid of directions.

References
----------
.. [1] J. D. Jackson, "Classical Electrodynamics", 3rd ed. (1999), sec. 14.6
   (critical frequency and the K_{5/3} spectrum); eq. numbers from memory.
.. [2] G. B. Rybicki and A. P. Lightman, "Radiative Processes in
   Astrophysics" (1979), ch. 6 (F(x)); from memory.
.. [3] X-ray Data Booklet (LBNL), sec. 2.1 "Characteristics of synchrotron
   radiation" (K.-J. Kim): eps_c[keV] = 0.665 E^2[GeV] B[T]; from memory.
"""

import math
from functools import lru_cache

import numpy as np
from numba import njit, prange

from .. import constants as k
from ..config import KERNEL
from ..errors import ScenarioError
from .angular import orbit_kinematics
from .beam_spectrum import contributing_particles, incoherent_sum, is_beam, require_particles
from .spectrum import _omega, trapezoid_weights

#: normalisation of S(x) = NORM_S F(x): Int_0^inf F dx = 8 pi/(9 sqrt3).
NORM_S = 9.0 * math.sqrt(3.0) / (8.0 * math.pi)
#: table of ln F on a log grid of x (built once, ~0.2 s); spacing 1.1e-3 in ln x keeps
#: linear interpolation of ln F within ~1e-6 relative for x < 10. Above TABLE_X_MAX,
#: F < 1e-215 is taken as 0.
TABLE_X_MIN = 1e-10
TABLE_X_MAX = 500.0
TABLE_POINTS = 24001
#: small-x limit F(x) -> F_SMALL x^(1/3), F_SMALL = 4 pi/(sqrt3 Gamma(1/3) 2^(1/3)) (from K_{5/3}(t) ~
#: Gamma(5/3)/2 (2/t)^(5/3)); used below TABLE_X_MIN.
F_SMALL = 4.0 * math.pi / (math.sqrt(3.0) * math.gamma(1.0 / 3.0) * 2.0 ** (1.0 / 3.0))


@lru_cache(maxsize=1)
def _table():
    """(ln x grid, ln F) from scipy.special.kv: Int_x^inf K_{5/3} by cumulative Simpson in ln t."""
    from scipy.integrate import cumulative_simpson
    from scipy.special import kv

    lnx = np.linspace(math.log(TABLE_X_MIN), math.log(TABLE_X_MAX), TABLE_POINTS)
    x = np.exp(lnx)
    integrand = kv(5.0 / 3.0, x) * x          # dt = t d(ln t)
    # integral from each x up to TABLE_X_MAX, plus the tail beyond it: Int_X^inf K ~ K(X) (1 + O(1/X))
    from_top = cumulative_simpson(integrand[::-1], dx=lnx[1] - lnx[0], initial=0.0)[::-1]
    from_top += kv(5.0 / 3.0, TABLE_X_MAX)
    return lnx, np.log(x * from_top)


def universal_function(x):
    """Synchrotron function F(x) = x Int_x^inf K_{5/3}(t) dt (dimensionless).

    Parameters
    ----------
    x : array_like
        omega/omega_c (>= 0).

    Returns
    -------
    ndarray, same shape as x
        F(x); F(0) = 0, F -> 2.15 x^(1/3) for small x, ~ sqrt(pi x/2) e^-x for large x.

    Notes
    -----
    Tabulated once from ``scipy.special.kv`` (Simpson quadrature in ln t,
    24001 nodes over 1e-10 < x < 500) and interpolated linearly in
    (ln x, ln F). Rybicki & Lightman ch. 6 (from memory).
    """
    x = np.asarray(x, dtype=float)
    if np.any(~np.isfinite(x)) or np.any(x < 0):
        raise ScenarioError("x", "must be finite and non-negative.")
    lnx, lnf = _table()
    out = np.zeros_like(x)
    inside = (x >= TABLE_X_MIN) & (x < TABLE_X_MAX)
    out[inside] = np.exp(np.interp(np.log(x[inside]), lnx, lnf))
    small = (x > 0) & (x < TABLE_X_MIN)
    out[small] = F_SMALL * np.cbrt(x[small])
    return out


def spectral_shape(x):
    """S(x) = (9 sqrt3/(8 pi)) F(x), normalised so that Int_0^inf S dx = 1 (dimensionless)."""
    return NORM_S * universal_function(x)


def local_synchrotron(result):
    """Critical frequency and transverse-acceleration power of every saved state.

    Parameters
    ----------
    result : Result

    Returns
    -------
    omega_c : ndarray, shape (n,), rad/s
        (3/2) gamma^3 c/rho with rho = c beta^2/|beta_dot_perp| (0 where the
        velocity or the transverse acceleration vanishes).
    power : ndarray, shape (n,), W
        q^2 gamma^4 |beta_dot_perp|^2/(6 pi eps0 c).
    """
    beta, beta_dot = orbit_kinematics(result)
    b2 = np.einsum("ij,ij->i", beta, beta)
    along = np.einsum("ij,ij->i", beta, beta_dot) / np.where(b2 > 0, b2, 1.0)
    perp = beta_dot - along[:, None] * beta
    a_perp = np.sqrt(np.einsum("ij,ij->i", perp, perp))
    gamma = np.sqrt(1.0 + np.einsum("ij,ij->i", result.u, result.u))
    with np.errstate(divide="ignore", invalid="ignore"):
        omega_c = np.where(b2 > 0, 1.5 * gamma**3 * a_perp / np.where(b2 > 0, b2, 1.0), 0.0)
    q = result.scenario.particle.charge
    power = q * q * gamma**4 * a_perp**2 / (6.0 * math.pi * k.epsilon_0 * k.c)
    return omega_c, power


def critical_frequency(result):
    """Local critical angular frequency omega_c of every saved state, rad/s, shape (n,)."""
    return local_synchrotron(result)[0]


def largest_critical_frequency(result):
    """Largest local critical angular frequency over the saved states (and particles of a beam), rad/s."""
    if is_beam(result):
        require_particles(result)
        return max((float(np.max(critical_frequency(result.particle(int(i))), initial=0.0))
                    for i in contributing_particles(result)), default=0.0)
    return float(np.max(critical_frequency(result), initial=0.0))


def _acceptance_mask(result, acceptance):
    if acceptance is None:
        return np.ones(len(result.t), dtype=bool)
    try:
        direction, half_angle = acceptance
        d = np.asarray(direction, dtype=float).reshape(3)
        half_angle = float(half_angle)
    except (TypeError, ValueError):
        raise ScenarioError("acceptance", f"must be (direction 3-vector, half_angle rad), not {acceptance!r}.") \
            from None
    norm = np.linalg.norm(d)
    if not np.isfinite(norm) or norm == 0:
        raise ScenarioError("acceptance", f"direction must be a finite non-zero vector, not {direction!r}.")
    if not 0.0 < half_angle <= math.pi:
        raise ScenarioError("acceptance", f"half_angle must be in (0, pi] rad, not {half_angle!r}.")
    u = np.asarray(result.u, dtype=float)
    umag = np.linalg.norm(u, axis=1)
    cosang = (u @ d) / (norm * np.where(umag > 0, umag, 1.0))
    return (umag > 0) & (cosang >= math.cos(half_angle))


@njit(parallel=True, **KERNEL)
def _accumulate(omega, omega_c, energy, lnx, lnf, x_min, x_max, f_small, out):
    """out[j] = sum_k energy[k]/omega_c[k] F(omega[j]/omega_c[k]) (without the S normalisation)."""
    n_w = omega.shape[0]
    n_s = omega_c.shape[0]
    l0 = lnx[0]
    step = lnx[1] - lnx[0]
    last = lnx.shape[0] - 1
    for j in prange(n_w):
        total = 0.0
        for i in range(n_s):
            x = omega[j] / omega_c[i]
            if x >= x_max:
                continue
            if x < x_min:
                f = f_small * x ** (1.0 / 3.0)
            else:
                pos = (math.log(x) - l0) / step
                m = int(pos)
                if m >= last:
                    m = last - 1
                frac = pos - m
                f = math.exp(lnf[m] + frac * (lnf[m + 1] - lnf[m]))
            total += energy[i] / omega_c[i] * f
        out[j] = total


def synchrotron_spectrum(result, omega, acceptance=None):
    """Angle-integrated synchrotron spectrum dW/domega accumulated along the orbit, J s.

    Parameters
    ----------
    result : Result or BeamResult
        For a beam: the incoherent sum over its particles, weighted (``beam_spectrum``).
    omega : array_like, shape (n_omega,), rad/s
        Positive angular frequencies.
    acceptance : (array_like shape (3,), float rad), optional
        Count only states whose velocity lies within ``half_angle`` of
        ``direction`` (see module notes for when this is valid).

    Returns
    -------
    ndarray, shape (n_omega,), J s
        dW/domega = sum_k w_k (P_k/omega_c,k) S(omega/omega_c,k); integrated
        over 0 < omega < inf it gives the energy radiated by the transverse
        acceleration of the counted states (J).
    """
    if is_beam(result):
        return incoherent_sum(result, lambda one: synchrotron_spectrum(one, omega, acceptance))
    w = _omega(omega)
    omega_c, power = local_synchrotron(result)
    energy = trapezoid_weights(result.t) * power
    keep = _acceptance_mask(result, acceptance) & (omega_c > 0) & (energy > 0)
    out = np.zeros(len(w))
    if not keep.any():
        return out
    lnx, lnf = _table()
    _accumulate(w, np.ascontiguousarray(omega_c[keep]), np.ascontiguousarray(energy[keep]), lnx, lnf,
                TABLE_X_MIN, TABLE_X_MAX, F_SMALL, out)
    return NORM_S * out


def photon_spectrum(result, omega, acceptance=None):
    """Photon number per unit angular frequency dN/domega = (dW/domega)/(hbar omega), in s.

    Parameters
    ----------
    result : Result
    omega : array_like, shape (n_omega,), rad/s
    acceptance : (direction, half_angle rad), optional
        As in ``synchrotron_spectrum``.

    Returns
    -------
    ndarray, shape (n_omega,), s
        Photons per (rad/s); times 0.001 omega: photons per 0.1 % bandwidth.
    """
    w = _omega(omega)
    return synchrotron_spectrum(result, w, acceptance) / (k.hbar * w)


#: default synchrotron band, in units of the largest local critical frequency (common practice, no source)
DEFAULT_BAND = (1e-3, 20.0)


def default_synchrotron_omega(result, n=400):
    """Log-spaced grid (rad/s), shape (n,), over DEFAULT_BAND times the largest critical frequency.

    Raises ScenarioError("result") when the orbit never bends.
    """
    top = largest_critical_frequency(result)
    if not top > 0:
        raise ScenarioError("result", "the orbit never bends (no transverse acceleration): no synchrotron "
                                      "spectrum.")
    return np.geomspace(DEFAULT_BAND[0] * top, DEFAULT_BAND[1] * top, int(n))
