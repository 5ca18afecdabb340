"""Far-field radiation spectrum d^2W/(domega dOmega) of a tracked orbit.

The Liénard–Wiechert radiation integral in its acceleration (beta-dot) form,
per unit angular frequency (omega > 0 only) and solid angle:

    d^2W/(domega dOmega) = q^2/(16 pi^3 eps0 c) |A(omega)|^2
    A(omega) = Int n x ((n - beta) x beta_dot)/(1 - n.beta)^2 exp(i omega tau(t)) dt,
    tau(t) = t - n.r(t)/c   (observer time up to a constant)

with beta and beta_dot of every saved state from
``tracker.radiation.angular.orbit_kinematics`` (Lorentz force, radiation
reaction neglected). Units: J s/sr.

Why this form and how the finite record is handled
--------------------------------------------------
1. The velocity form omega^2 |Int n x (n x beta) e^{i omega tau} dt|^2 needs a
   boundary term wherever the record ends with n x beta != 0; the beta-dot
   form obtained by integrating by parts (Jackson eq. 14.66 identity) is exact
   whenever the particle moves uniformly at both ends, and its integrand is
   zero there, so a trajectory that starts and ends outside the fields needs no
   window at all.
2. When the record starts or ends inside a field the integrand is cut off
   sharply, which leaks a sinc-like tail into the spectrum. ``window="auto"``
   (default) then tapers the integrand with a Tukey (cosine) window over
   ``taper/2`` of the duration at each end; radiation emitted inside the taper
   is attenuated accordingly. ``"none"`` and ``"tukey"`` force either choice.
3. The integral is sampled at the saved states with trapezoid weights. For an
   integrand that goes smoothly to zero at the ends the trapezoid sum is
   spectrally accurate as long as every step resolves the phase: the phase
   advance omega (1 - n.beta) dt per sample must stay below pi (Nyquist). This
   is checked on every sample whose integrand is at least ``ALIAS_LEVEL`` of
   the largest one; a request above the limit raises ``ScenarioError("omega")``
   naming the highest resolved frequency.
4. Samples with beta_dot = 0 contribute nothing and are dropped before the sum
   (exact); this keeps long field-free drifts from inflating the transform.

Two evaluators give the same sum: ``"direct"`` (numba, parallel over
directions x frequencies, O(N_t N_omega) complex exponentials) and ``"nufft"``
(finufft type 3, non-uniform points tau_k to non-uniform frequencies,
O(N_t + N_omega + band) per direction, relative accuracy ``eps``).

References
----------
.. [1] J. D. Jackson, "Classical Electrodynamics", 3rd ed. (1999), sec. 14.5,
   eqs. (14.65)-(14.67) (Gaussian prefactor e^2/(4 pi^2 c) ->
   q^2/(16 pi^3 eps0 c)); equation numbers from memory.
.. [2] A. H. Barnett, J. Magland, L. af Klinteberg, "A parallel non-uniform
   fast Fourier transform library based on an 'exponential of semicircle'
   kernel", SIAM J. Sci. Comput. 41, C479 (2019) (finufft; type 3 transform).
"""

import math
import os
from concurrent.futures import ThreadPoolExecutor

# finufft and numba's OpenMP layer spin-wait by default; on a busy two-core
# machine that costs 5-100x (measured with benchmarks/bench_spectrum.py). Must be set before OpenMP starts.
os.environ.setdefault("OMP_WAIT_POLICY", "PASSIVE")

import numpy as np  # noqa: E402
from numba import njit, prange  # noqa: E402

from .. import constants as k  # noqa: E402
from ..config import KERNEL  # noqa: E402
from ..errors import ScenarioError  # noqa: E402
from .angular import orbit_kinematics  # noqa: E402
from .beam_spectrum import beam_default_direction, beam_resolved_band, incoherent_sum, is_beam  # noqa: E402

METHODS = ("nufft", "direct")
WINDOWS = ("auto", "none", "tukey")

#: samples whose integrand is below this fraction of the largest one are not
#: held to the Nyquist condition: a fully aliased sample of relative size 1e-4
#: changes an intensity by at most ~1e-4 (common practice, no source).
ALIAS_LEVEL = 1e-4
#: "auto" windowing tapers when |beta_dot| at either end exceeds this fraction
#: of its maximum (below it the record already ends in uniform motion).
END_ACCELERATION_LEVEL = 1e-6
#: Tukey taper: total fraction of the record inside the two cosine ramps.
DEFAULT_TAPER = 0.1
#: finufft relative tolerance; 1e-9 keeps NUFFT and direct sums within ~1e-8.
DEFAULT_EPS = 1e-9
#: the default frequency grid stops at this fraction of the Nyquist limit (common practice, no source)
NYQUIST_FRACTION = 0.5
#: threads running single-threaded finufft plans over directions
NUFFT_WORKERS = min(2, os.cpu_count() or 1)
#: directions prepared at once (memory: 3 x 8 bytes x samples per direction).
DIRECTION_CHUNK = 16


def prefactor(charge):
    """q^2/(16 pi^3 eps0 c) in J s (charge in C)."""
    return charge**2 / (16.0 * math.pi**3 * k.epsilon_0 * k.c)


# ---------------------------------------------------------------------- kernels
@njit(parallel=True, **KERNEL)
def _prepare(t, x, beta, beta_hat, beta_mag, doppler_floor, beta_dot, weight, spacing, directions, basis,
             t_ref, x_ref, alias_level, tau, amp, phase_per_omega):
    """Per direction: observer times tau (s), the weighted integrand projected on the basis
    (dimensionless) and the largest phase advance per unit omega over samples that matter (s).

    doppler_floor = 1/(gamma^2 (1 + |beta|)) = 1 - |beta|, so that
    1 - n.beta = doppler_floor + |beta| |n - beta_hat|^2/2 without cancellation.
    """
    c = k.c
    n_dir = directions.shape[0]
    n_s = t.shape[0]
    for d in prange(n_dir):
        nx, ny, nz = directions[d, 0], directions[d, 1], directions[d, 2]
        e1x, e1y, e1z = basis[d, 0, 0], basis[d, 0, 1], basis[d, 0, 2]
        e2x, e2y, e2z = basis[d, 1, 0], basis[d, 1, 1], basis[d, 1, 2]
        size = np.empty(n_s)
        step = np.empty(n_s)
        big = 0.0
        for i in range(n_s):
            dx = nx - beta_hat[i, 0]
            dy = ny - beta_hat[i, 1]
            dz = nz - beta_hat[i, 2]
            omb = doppler_floor[i] + 0.5 * beta_mag[i] * (dx * dx + dy * dy + dz * dz)
            bx, by, bz = beta[i, 0], beta[i, 1], beta[i, 2]
            ax, ay, az = beta_dot[i, 0], beta_dot[i, 1], beta_dot[i, 2]
            n_a = nx * ax + ny * ay + nz * az
            inv = 1.0 / (omb * omb)
            # (n x ((n - b) x a)).e = -[(b.e)(n.a) + (a.e)(1 - n.b)] for e normal to n
            f1 = -((bx * e1x + by * e1y + bz * e1z) * n_a + (ax * e1x + ay * e1y + az * e1z) * omb) * inv
            f2 = -((bx * e2x + by * e2y + bz * e2z) * n_a + (ax * e2x + ay * e2y + az * e2z) * omb) * inv
            size[i] = f1 * f1 + f2 * f2
            step[i] = omb * spacing[i]
            if size[i] > big:
                big = size[i]
            amp[d, 0, i] = weight[i] * f1
            amp[d, 1, i] = weight[i] * f2
            tau[d, i] = (t[i] - t_ref) - (nx * (x[i, 0] - x_ref[0]) + ny * (x[i, 1] - x_ref[1])
                                          + nz * (x[i, 2] - x_ref[2])) / c
        threshold = alias_level * alias_level * big
        worst = 0.0
        for i in range(n_s):
            if size[i] >= threshold and step[i] > worst:
                worst = step[i]
        phase_per_omega[d] = worst


@njit(parallel=True, **KERNEL)
def _direct_sum(tau, amp, omega, out):
    """out[d, j, w] = sum_i amp[d, j, i] exp(i omega[w] tau[d, i]) (complex, both components)."""
    n_dir = tau.shape[0]
    n_s = tau.shape[1]
    n_w = omega.shape[0]
    for job in prange(n_dir * n_w):
        d = job // n_w
        w = job - d * n_w
        om = omega[w]
        r1 = 0.0
        i1 = 0.0
        r2 = 0.0
        i2 = 0.0
        for i in range(n_s):
            ph = om * tau[d, i]
            cs = math.cos(ph)
            sn = math.sin(ph)
            a1 = amp[d, 0, i]
            a2 = amp[d, 1, i]
            r1 += a1 * cs
            i1 += a1 * sn
            r2 += a2 * cs
            i2 += a2 * sn
        out[d, 0, w] = complex(r1, i1)
        out[d, 1, w] = complex(r2, i2)


# ---------------------------------------------------------------------- inputs
def _directions(directions):
    try:
        n = np.array(directions, dtype=float)
    except (TypeError, ValueError):
        raise ScenarioError("directions", f"must be unit vectors of shape (n, 3), not {directions!r}.") from None
    n = np.atleast_2d(n)
    if n.ndim != 2 or n.shape[1] != 3 or n.shape[0] == 0:
        raise ScenarioError("directions", f"must have shape (n, 3), not {np.shape(directions)}.")
    norm = np.linalg.norm(n, axis=1)
    if not np.all(np.isfinite(norm)) or np.any(norm == 0):
        raise ScenarioError("directions", f"must be finite non-zero vectors, not {n.tolist()!r}.")
    return np.ascontiguousarray(n / norm[:, None])


def _omega(omega):
    try:
        w = np.array(omega, dtype=float).reshape(-1)
    except (TypeError, ValueError):
        raise ScenarioError("omega", f"must be angular frequencies in rad/s, not {omega!r}.") from None
    if w.size == 0 or not np.all(np.isfinite(w)) or np.any(w <= 0):
        raise ScenarioError("omega", f"must be finite positive angular frequencies in rad/s, not {w[:8].tolist()!r}"
                            f"{'...' if w.size > 8 else ''}.")
    return np.ascontiguousarray(w)


def polarization_basis(directions):
    """Two unit vectors normal to each direction: e1 = y x n/|y x n| (x for n along z), e2 = n x e1.

    For a planar orbit in the x-z plane seen near +z, e1 is the in-plane (sigma) and
    e2 the out-of-plane (pi) polarization. When n is along y, e1 = n x x... uses z instead.

    Parameters
    ----------
    directions : ndarray, shape (n, 3), unit vectors

    Returns
    -------
    ndarray, shape (n, 2, 3)
    """
    n = np.atleast_2d(directions)
    ref = np.tile([0.0, 1.0, 0.0], (len(n), 1))
    e1 = np.cross(ref, n)
    small = np.linalg.norm(e1, axis=1) < 1e-8
    e1[small] = np.cross(np.array([0.0, 0.0, 1.0]), n[small])
    e1 /= np.linalg.norm(e1, axis=1)[:, None]
    e2 = np.cross(n, e1)
    return np.ascontiguousarray(np.stack([e1, e2], axis=1))


def trapezoid_weights(t):
    """Trapezoid-rule weights (s) for samples at times t (s), shape (n,)."""
    t = np.asarray(t, dtype=float)
    w = np.zeros_like(t)
    if len(t) < 2:
        return w
    h = np.diff(t)
    w[:-1] += 0.5 * h
    w[1:] += 0.5 * h
    return w


def tukey_window(t, taper):
    """Tukey window of the record t (s): cosine ramps over taper/2 of the duration at each end."""
    t = np.asarray(t, dtype=float)
    if taper <= 0:
        return np.ones_like(t)
    s = (t - t[0]) / (t[-1] - t[0])
    edge = 0.5 * taper
    w = np.ones_like(s)
    lo = s < edge
    hi = s > 1.0 - edge
    w[lo] = 0.5 * (1.0 - np.cos(np.pi * s[lo] / edge))
    w[hi] = 0.5 * (1.0 - np.cos(np.pi * (1.0 - s[hi]) / edge))
    return w


def record_window(result, beta_dot, window="auto", taper=DEFAULT_TAPER):
    """Window applied to the integrand: ones, or a Tukey taper (see module notes), shape (n,)."""
    if window not in WINDOWS:
        raise ScenarioError("window", f"must be one of {', '.join(map(repr, WINDOWS))}, not {window!r}.")
    if not 0.0 <= taper <= 1.0:
        raise ScenarioError("taper", f"must be between 0 and 1, not {taper!r}.")
    if window == "none":
        return np.ones(len(result.t))
    if window == "auto":
        size = np.linalg.norm(beta_dot, axis=1)
        peak = size.max() if len(size) else 0.0
        if not peak > 0 or max(size[0], size[-1]) <= END_ACCELERATION_LEVEL * peak:
            return np.ones(len(result.t))
    return tukey_window(result.t, taper)


class _Prepared:
    """Samples that contribute, with weights, in float64 C order."""

    def __init__(self, result, window, taper):
        if len(result.t) < 2:
            raise ScenarioError("result", f"needs at least 2 saved states for a spectrum, not {len(result.t)}.")
        beta, beta_dot = orbit_kinematics(result)
        weight = trapezoid_weights(result.t) * record_window(result, beta_dot, window, taper)
        t = np.asarray(result.t, dtype=float)
        gaps = np.diff(t)
        spacing = np.empty_like(t)
        spacing[0] = gaps[0]
        spacing[-1] = gaps[-1]
        spacing[1:-1] = np.maximum(gaps[:-1], gaps[1:])
        keep = (np.linalg.norm(beta_dot, axis=1) > 0) & (weight > 0)
        self.charge = result.scenario.particle.charge
        self.count = int(keep.sum())
        self.t = np.ascontiguousarray(t[keep])
        self.x = np.ascontiguousarray(np.asarray(result.x, dtype=float)[keep])
        u = np.asarray(result.u, dtype=float)[keep]
        u_mag = np.sqrt(np.einsum("ij,ij->i", u, u))
        gamma = np.sqrt(1.0 + u_mag * u_mag)
        self.beta = np.ascontiguousarray(u / gamma[:, None])
        self.beta_mag = np.ascontiguousarray(u_mag / gamma)
        # at rest beta_hat is irrelevant (its weight beta_mag is 0); keep it finite
        self.beta_hat = np.ascontiguousarray(u / np.where(u_mag > 0, u_mag, 1.0)[:, None])
        self.doppler_floor = np.ascontiguousarray(1.0 / (gamma * gamma * (1.0 + self.beta_mag)))
        self.beta_dot = np.ascontiguousarray(beta_dot[keep])
        self.weight = np.ascontiguousarray(weight[keep])
        self.spacing = np.ascontiguousarray(spacing[keep])
        mid = self.count // 2
        self.t_ref = float(self.t[mid]) if self.count else 0.0
        self.x_ref = np.ascontiguousarray(self.x[mid] if self.count else np.zeros(3))

    def chunk(self, directions, basis):
        nd = len(directions)
        tau = np.empty((nd, self.count))
        amp = np.empty((nd, 2, self.count))
        phase = np.zeros(nd)
        if self.count:
            _prepare(self.t, self.x, self.beta, self.beta_hat, self.beta_mag, self.doppler_floor, self.beta_dot,
                     self.weight, self.spacing, directions, basis, self.t_ref, self.x_ref, ALIAS_LEVEL,
                     tau, amp, phase)
        return tau, amp, phase


def _nyquist(phase_per_omega):
    with np.errstate(divide="ignore"):
        return np.where(phase_per_omega > 0, np.pi / np.where(phase_per_omega > 0, phase_per_omega, 1.0), np.inf)


def _check_sampling(omega_max, phase_per_omega, directions):
    limit = _nyquist(phase_per_omega)
    bad = np.flatnonzero(omega_max > limit)
    if bad.size:
        i = bad[np.argmin(limit[bad])]
        n = ", ".join(f"{v:.6g}" for v in directions[i])
        raise ScenarioError(
            "omega",
            f"the highest frequency {omega_max:.4g} rad/s is not resolved by the saved samples in direction "
            f"({n}): the phase advance omega (1 - n.beta) dt per sample must stay below pi, which holds up to "
            f"{limit[i]:.4g} rad/s there. Ask for omega <= {float(np.min(limit)):.4g} rad/s, or track with a "
            "smaller dt and save_every = 1.")


def _nufft_directions(tau, amp, s, scale, eps, out, rows):
    import finufft

    # one single-threaded plan per worker: for 1e5 points x 1e3 frequencies a plan's own
    # threads gain nothing on two cores (measured), directions in parallel do
    plan = finufft.Plan(3, 1, n_trans=2, eps=eps, isign=1, nthreads=1)
    for d in rows:
        plan.setpts(x=np.ascontiguousarray(tau[d] * scale), s=s)
        out[d] = plan.execute(np.ascontiguousarray(amp[d], dtype=np.complex128))


def _nufft_chunk(tau, amp, omega, eps, out):
    """out[d] = finufft type-3 transform of amp[d] (2 components) from points tau[d] to omega."""
    scale = float(np.max(omega))       # keeps x and s of order one; the product is what matters
    s = np.ascontiguousarray(omega / scale)
    workers = max(1, min(NUFFT_WORKERS, tau.shape[0]))
    if workers == 1:
        _nufft_directions(tau, amp, s, scale, eps, out, range(tau.shape[0]))
        return
    with ThreadPoolExecutor(max_workers=workers) as pool:   # finufft releases the GIL (ctypes)
        jobs = [pool.submit(_nufft_directions, tau, amp, s, scale, eps, out, range(i, tau.shape[0], workers))
                for i in range(workers)]
        for job in jobs:
            job.result()


def radiation_amplitudes(result, directions, omega, method="nufft", window="auto", taper=DEFAULT_TAPER,
                         eps=DEFAULT_EPS):
    """Complex radiation integral A(omega) on two polarization vectors per direction.

    Parameters
    ----------
    result : Result
    directions : array_like, shape (n_dir, 3)
        Observer directions (normalised here; zero vectors are refused).
    omega : array_like, shape (n_omega,), rad/s
        Positive angular frequencies, any spacing.
    method : {"nufft", "direct"}
    window : {"auto", "none", "tukey"}
        Integrand window (module notes, point 2).
    taper : float
        Tukey fraction of the record inside the two cosine ramps.
    eps : float
        finufft relative tolerance (``method="nufft"``).

    Returns
    -------
    amplitudes : ndarray, complex, shape (n_dir, 2, n_omega), dimensionless
        A.e1 and A.e2; d^2W/(domega dOmega) = prefactor(q) (|A.e1|^2 + |A.e2|^2).
    basis : ndarray, shape (n_dir, 2, 3)
        e1, e2 of ``polarization_basis``.

    Raises
    ------
    ScenarioError
        Bad arguments, or ``omega`` above what the saved samples resolve.
    """
    if is_beam(result):
        raise ScenarioError("result", "amplitudes are per particle: use result.particle(i) (a beam's spectrum is "
                                      "the incoherent sum of its particles' spectra, ``spectrum``).")
    if method not in METHODS:
        raise ScenarioError("method", f"must be one of {', '.join(map(repr, METHODS))}, not {method!r}.")
    if not (isinstance(eps, float) or isinstance(eps, int)) or not 1e-15 <= eps < 1e-1:
        raise ScenarioError("eps", f"must be a tolerance between 1e-15 and 0.1, not {eps!r}.")
    n = _directions(directions)
    w = _omega(omega)
    basis = polarization_basis(n)
    prepared = _Prepared(result, window, taper)
    out = np.zeros((len(n), 2, len(w)), dtype=np.complex128)
    if prepared.count == 0:
        return out, basis  # no acceleration anywhere: no radiation
    w_max = float(w.max())
    for start in range(0, len(n), DIRECTION_CHUNK):
        sl = slice(start, start + DIRECTION_CHUNK)
        tau, amp, phase = prepared.chunk(n[sl], basis[sl])
        _check_sampling(w_max, phase, n[sl])
        if method == "direct":
            _direct_sum(tau, amp, w, out[sl])
        else:
            _nufft_chunk(tau, amp, w, float(eps), out[sl])
    return out, basis


def spectrum(result, directions, omega, method="nufft", window="auto", taper=DEFAULT_TAPER, eps=DEFAULT_EPS,
             progress=None, cancel=None):
    """Energy radiated per unit angular frequency and solid angle, d^2W/(domega dOmega), J s/sr.

    Parameters
    ----------
    result : Result or BeamResult
        A tracked orbit; dense sampling (``run.save_every = 1``) resolves the
        highest frequencies. For a beam: the incoherent sum sum_i w_i S_i over its
        particles (intensities add; |sum_i A_i|^2 would be the coherent spectrum:
        ``tracker.radiation.beam_spectrum``); ``run.save = "statistics"`` is refused.
    directions : array_like, shape (n_dir, 3)
        Observer directions n (unit vectors; normalised here).
    omega : array_like, shape (n_omega,), rad/s
        Positive angular frequencies (omega > 0 convention: integrating over
        0 < omega < inf and the sphere gives the energy radiated, J).
    method : {"nufft", "direct"}
        finufft type-3 transform (default) or the direct numba sum; they agree
        to ~``eps`` relative to the spectrum's peak.
    window, taper, eps
        See ``radiation_amplitudes`` and the module notes.

    Returns
    -------
    ndarray, shape (n_dir, n_omega), J s/sr

    Raises
    ------
    ScenarioError
        Naming ``directions``, ``omega``, ``method``, ``window``, ``taper`` or
        ``eps``; for ``omega`` also when the sampling cannot resolve the highest
        requested frequency (phase advance omega (1 - n.beta) dt per sample
        above pi on a sample that matters).
    """
    if is_beam(result):
        return incoherent_sum(result, lambda one: spectrum(one, directions, omega, method, window, taper, eps),
                              progress, cancel)
    amps, _ = radiation_amplitudes(result, directions, omega, method=method, window=window, taper=taper, eps=eps)
    power = amps.real**2 + amps.imag**2
    return prefactor(result.scenario.particle.charge) * power.sum(axis=1)


def resolved_band(result, directions, window="auto", taper=DEFAULT_TAPER):
    """Frequency band the saved samples support in each direction, rad/s.

    Parameters
    ----------
    result : Result
    directions : array_like, shape (n_dir, 3)

    Returns
    -------
    low : ndarray, shape (n_dir,), rad/s
        2 pi over the observer-time span of the emitting part of the record:
        the frequency resolution.
    high : ndarray, shape (n_dir,), rad/s
        The Nyquist limit pi / max[(1 - n.beta) dt] over samples that matter
        (inf when nothing radiates).
    """
    n = _directions(directions)
    basis = polarization_basis(n)
    prepared = _Prepared(result, window, taper)
    low = np.full(len(n), np.inf)
    high = np.full(len(n), np.inf)
    if prepared.count < 2:
        return low, high
    for start in range(0, len(n), DIRECTION_CHUNK):
        sl = slice(start, start + DIRECTION_CHUNK)
        tau, _, phase = prepared.chunk(n[sl], basis[sl])
        span = tau.max(axis=1) - tau.min(axis=1)
        low[sl] = np.where(span > 0, 2.0 * np.pi / np.where(span > 0, span, 1.0), np.inf)
        high[sl] = _nyquist(phase)
    return low, high


def photon_energy_ev(omega):
    """Photon energy hbar omega in eV for angular frequencies omega (rad/s); same shape."""
    return k.hbar * np.asarray(omega, dtype=float) / k.e


def default_direction(result):
    """Unit vector (3,) along the mean velocity, or along the middle state's velocity when the
    mean is ~0 (closed orbits), for a first look at a spectrum."""
    if is_beam(result):
        return beam_default_direction(result)
    u = np.asarray(result.u, dtype=float)
    beta = u / np.sqrt(1.0 + np.einsum("ij,ij->i", u, u))[:, None]
    mean = beta.mean(axis=0)
    if np.linalg.norm(mean) > 1e-3 * max(np.linalg.norm(beta, axis=1).max(), 1e-300):
        return mean / np.linalg.norm(mean)
    mid = u[len(u) // 2]
    if not np.linalg.norm(mid) > 0:
        raise ScenarioError("directions", "the particle is at rest mid-way; give a direction.")
    return mid / np.linalg.norm(mid)


def default_omega(result, directions, n=2000):
    """Log-spaced grid (rad/s), shape (n,), from the frequency resolution up to half the Nyquist limit.

    Raises ScenarioError("omega") when nothing radiates towards ``directions``. For a beam, the band
    every particle resolves.
    """
    low, high = beam_resolved_band(result, directions) if is_beam(result) else resolved_band(result, directions)
    lo = float(np.max(low))
    hi = NYQUIST_FRACTION * float(np.min(high))
    if not (math.isfinite(lo) and math.isfinite(hi)) or hi <= lo:
        raise ScenarioError("omega", "the orbit does not radiate towards these directions, or is too short to "
                                     "resolve any frequency; give the frequencies explicitly.")
    return np.geomspace(lo, hi, int(n))
