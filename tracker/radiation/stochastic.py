"""Stochastic photon emission in the locally-constant-field approximation (model ``quantum-stochastic``).

Physics
-------
A particle of energy gamma m c^2 and quantum parameter chi emits photons of
energy fraction delta = eps_gamma/(gamma m c^2) in (0, 1) at the rate
(quantum synchrotron spectrum of a spin-1/2 particle in a constant crossed
field, Baier-Katkov form):

    d^2N/(dt d delta) = (alpha_q m c^2/(sqrt3 pi hbar gamma))
                        [ (1 - delta + 1/(1 - delta)) K_{2/3}(y) - Int_y^inf K_{1/3}(s) ds ],
    y = 2 delta/(3 chi (1 - delta)),        alpha_q = q^2/(4 pi eps0 hbar c)

V. N. Baier and V. M. Katkov, Sov. Phys. JETP 26, 854 (1968); V. B. Berestetskii,
E. M. Lifshitz and L. P. Pitaevskii, "Quantum Electrodynamics", sec. 90, eq. (90.24)
(reference details and equation number from memory); the same spectrum as
tests/test_quantum.py integrates for g(chi). As chi -> 0 it becomes the classical
synchrotron spectrum (rate -> (alpha_q m c^2/(sqrt3 pi hbar gamma)) Int_y K_{5/3},
with y = 2 delta/(3 chi) = omega/omega_c), whose integrals are the classical photon
number rate (5/(2 sqrt3)) alpha_q m c^2 chi/(hbar gamma) and the Lienard power
(2/3) alpha_q m^2 c^4 chi^2/hbar (both checked in tests/test_stochastic.py).
For species other than e-/e+ the spin-1/2 formula is kept (the classical limit
does not depend on spin).

Tables (built once per process with scipy.special.kv on first use, ~0.1 s; never
edited by hand): on a log grid of chi,

- the total rate as ln(h(chi)/chi), h(chi) = (1/(sqrt3 pi)) Int_0^1 [...] d delta,
  so that W = (alpha_q m c^2/hbar) h(chi)/gamma  (1/s);
- the cumulative distribution of y (ln C and ln(1 - C) on a log grid of y): the
  inverse-CDF sampler searches it, interpolates ln y linearly in ln C (lower half)
  or ln(1 - C) (upper half), then linearly in ln chi between the two rows, and
  converts with the particle's own chi: delta = 3 chi y/(2 + 3 chi y). Below the first
  node C ~ y^(1/3) (K_{2/3} ~ y^(-2/3)) is inverted exactly; above the last,
  1 - C ~ exp(-y).

All tables live in one flat float64 array (``table()``) so a kernel receives
them as a single argument (layout: the HDR_* slots).

Monte Carlo
-----------
Each step the remaining interval is cut into n = ceil(W t / EMISSION_PROBABILITY_MAX)
sub-steps, each a Bernoulli trial with probability p = W t/n <= EMISSION_PROBABILITY_MAX
(at most one photon per sub-step); the first success among them is drawn at once
from the geometric distribution (one random pair per emission event, not one per
sub-step). After an emission the rate is re-evaluated with the new energy and the
rest of the interval is cut again. The expected photon number equals W t exactly;
the variance of the number is low by the fraction p (Bernoulli instead of Poisson
counts), hence the small bound. Random numbers: tracker.rng with
counter (seed, particle, step, EMISSION_STREAM + k) for the k-th event of a step.

Kinematics: the photon leaves along the particle's momentum; the particle loses
exactly the photon energy (its momentum is shortened along its own direction to
the new energy). With the photon massless, momentum is then conserved to
O(delta/gamma^2) relative, the LCFA's own accuracy (common practice, no source).

Below CHI_STOCHASTIC_MIN the engine uses the continuous quantum-corrected force
(Landau-Lifshitz times g(chi), tracker.radiation.quantum) instead.
"""

import math
from functools import lru_cache

import numpy as np
from numba import njit, prange

from .. import constants as k
from ..config import KERNEL, LEAF
from ..rng import EMISSION_STREAM, uniform4

#: largest emission probability of one sub-step. The photon-number variance is low by this
#: fraction (Bernoulli instead of Poisson counts); the mean is exact. 1 % keeps it below the
#: statistical error of any ensemble smaller than ~1e4 photons per cell (common practice, no source).
EMISSION_PROBABILITY_MAX = 0.01

#: below this chi the engine applies the continuous Landau-Lifshitz force times g(chi) instead of
#: sampling photons. Justification (moments of the spectrum above in its classical limit, derived in
#: tests/test_stochastic.py): the mean loss is the same in both models (g(chi) is the spectrum's
#: power); what the continuous model leaves out is the spread. The variance of gamma grows
#: SPREAD_COEFFICIENT gamma chi = 1.98 gamma chi times faster than the mean loss, so while a particle
#: radiates a fraction D of its energy, discrete emission adds a relative spread sqrt(1.98 chi D):
#: at chi = 1e-4 below 1.4 % for D = 1 and 0.14 % for D = 1 %; each photon carries on average
#: (4/(5 sqrt3)) chi < 5e-5 of the energy. The stochastic model's cost per unit time, by contrast,
#: does not fall with chi (the photon rate (5/(2 sqrt3)) alpha_q gamma omega_B does not depend on chi).
CHI_STOCHASTIC_MIN = 1e-4

#: classical-limit ratio of the rate of <(delta gamma)^2> to the rate of <delta gamma>, per gamma chi:
#: (55/(24 sqrt3)) / (2/3) = 55/(16 sqrt3) = 1.98 (moments of the synchrotron spectrum, see tests)
SPREAD_COEFFICIENT = 55.0 / (16.0 * math.sqrt(3.0))

#: table ranges: chi rows log-spaced over [CHI_TABLE_MIN, CHI_TABLE_MAX] (CHI_ROWS_PER_DECADE a decade);
#: y nodes log-spaced over [Y_MIN, Y_MAX]. Below CHI_TABLE_MIN the rate is continued linearly in chi
#: (relative error ~chi) and the y-distribution is chi-independent (classical limit); above
#: CHI_TABLE_MAX the last row is used (pair creation dominates there; tracker.validity warns from chi ~ 1).
CHI_TABLE_MIN = 1e-6
CHI_TABLE_MAX = 1e3
CHI_ROWS_PER_DECADE = 24
Y_MIN = 1e-9
Y_MAX = 80.0
Y_NODES = 1200

# flat-table header slots
HDR_N_CHI, HDR_LNCHI0, HDR_DLNCHI, HDR_N_Y, HDR_LNY0, HDR_DLNY, HDR_RATE, HDR_LNC, HDR_LNS = range(9)
HEADER = 16

#: classical photon-number rate coefficient: W -> RATE_CLASSICAL alpha_q m c^2 chi/(hbar gamma)
RATE_CLASSICAL = 5.0 / (2.0 * math.sqrt(3.0))


def _y_grid():
    return np.linspace(math.log(Y_MIN), math.log(Y_MAX), Y_NODES)


def _chi_grid():
    decades = math.log10(CHI_TABLE_MAX / CHI_TABLE_MIN)
    n = int(round(decades * CHI_ROWS_PER_DECADE)) + 1
    return np.linspace(math.log(CHI_TABLE_MIN), math.log(CHI_TABLE_MAX), n)


def spectrum_in_y(chi, y, k23, int_k13):
    """(1/(sqrt3 pi)) [...] d delta/dy: photon density per unit y in units alpha_q m c^2/(hbar gamma)."""
    delta = 3.0 * chi * y / (2.0 + 3.0 * chi * y)
    bracket = (1.0 - delta + 1.0 / (1.0 - delta)) * k23 - int_k13
    jacobian = 6.0 * chi / (2.0 + 3.0 * chi * y) ** 2
    return bracket * jacobian / (math.sqrt(3.0) * math.pi)


@lru_cache(maxsize=1)
def table():
    """The flat float64 table of rates and inverse CDFs (see module docstring); built once."""
    from scipy.integrate import cumulative_simpson
    from scipy.special import kv

    lny = _y_grid()
    h = lny[1] - lny[0]
    y = np.exp(lny)
    k23 = kv(2.0 / 3.0, y)
    # Int_y^inf K_{1/3}: Simpson in ln s from the top node down, plus the tail beyond Y_MAX
    # (Int_Y^inf K_nu ~ K_nu(Y) for large Y: relative error ~1/Y, on a term ~e^-80)
    int_k13 = cumulative_simpson((kv(1.0 / 3.0, y) * y)[::-1], dx=h, initial=0.0)[::-1] + kv(1.0 / 3.0, Y_MAX)
    lnchi = _chi_grid()
    n_chi = len(lnchi)
    rate = np.empty(n_chi)
    lnc = np.empty((n_chi, Y_NODES))
    lns = np.empty((n_chi, Y_NODES))
    for i, lc in enumerate(lnchi):
        chi = math.exp(lc)
        density = spectrum_in_y(chi, y, k23, int_k13)
        below = 3.0 * Y_MIN * density[0]          # Int_0^Y_MIN of a ~y^(-2/3) density
        above = density[-1]                       # Int_Y_MAX^inf of a ~e^-y density
        inside = cumulative_simpson(density * y, dx=h, initial=0.0)
        from_top = cumulative_simpson((density * y)[::-1], dx=h, initial=0.0)[::-1]
        total = below + inside[-1] + above
        rate[i] = math.log(total / chi)
        lnc[i] = np.log((below + inside) / total)
        lns[i] = np.log((from_top + above) / total)
    out = np.zeros(HEADER + n_chi + 2 * n_chi * Y_NODES)
    out[HDR_N_CHI] = n_chi
    out[HDR_LNCHI0] = lnchi[0]
    out[HDR_DLNCHI] = lnchi[1] - lnchi[0]
    out[HDR_N_Y] = Y_NODES
    out[HDR_LNY0] = lny[0]
    out[HDR_DLNY] = h
    out[HDR_RATE] = HEADER
    out[HDR_LNC] = HEADER + n_chi
    out[HDR_LNS] = HEADER + n_chi + n_chi * Y_NODES
    out[HEADER:HEADER + n_chi] = rate
    out[int(out[HDR_LNC]):int(out[HDR_LNS])] = lnc.ravel()
    out[int(out[HDR_LNS]):] = lns.ravel()
    out.setflags(write=False)
    return out


def rate_unit(charge, mass):
    """alpha_q m c^2/hbar in 1/s for a species (charge C, mass kg); alpha_q = q^2/(4 pi eps0 hbar c)."""
    alpha_q = charge**2 / (4.0 * math.pi * k.epsilon_0 * k.hbar * k.c)
    return alpha_q * mass * k.c**2 / k.hbar


@njit(**LEAF)
def _chi_position(tab, chi):
    """Row index and fraction of ln chi between rows, clamped to the table."""
    n_chi = int(tab[HDR_N_CHI])
    pos = (math.log(chi) - tab[HDR_LNCHI0]) / tab[HDR_DLNCHI]
    if pos <= 0.0:
        return 0, 0.0
    if pos >= n_chi - 1:
        return n_chi - 2, 1.0
    i = int(pos)
    return i, pos - i


@njit(**LEAF)
def rate_shape(tab, chi):
    """h(chi) (dimensionless): the total emission rate is rate_unit * h(chi)/gamma (1/s).

    Linear in ln(h/chi) vs ln chi between rows; below the table h/chi is held (classical
    limit, relative error ~chi); above it the last segment's slope continues (-> -1/3).
    """
    if chi <= 0.0:
        return 0.0
    n_chi = int(tab[HDR_N_CHI])
    base = int(tab[HDR_RATE])
    pos = (math.log(chi) - tab[HDR_LNCHI0]) / tab[HDR_DLNCHI]
    if pos <= 0.0:
        return chi * math.exp(tab[base])
    i = int(pos)
    if i > n_chi - 2:
        i = n_chi - 2
    f = pos - i
    return chi * math.exp(tab[base + i] + f * (tab[base + i + 1] - tab[base + i]))


@njit(**LEAF)
def emission_rate(tab, chi, gamma, unit):
    """Photon emission rate in 1/s at quantum parameter chi and Lorentz factor gamma; unit = rate_unit()."""
    return unit * rate_shape(tab, chi) / gamma


@njit(**LEAF)
def _row_ln_y(tab, row, r):
    """ln y at cumulative probability r in (0, 1) on one chi row."""
    n_y = int(tab[HDR_N_Y])
    lny0 = tab[HDR_LNY0]
    h = tab[HDR_DLNY]
    if r < 0.5:
        base = int(tab[HDR_LNC]) + row * n_y
        target = math.log(r)
        if target <= tab[base]:
            # C ~ y^(1/3) below the first node
            return lny0 + 3.0 * (target - tab[base])
        lo = 0
        hi = n_y - 1
        while hi - lo > 1:
            mid = (lo + hi) >> 1
            if tab[base + mid] <= target:
                lo = mid
            else:
                hi = mid
        a = tab[base + lo]
        b = tab[base + hi]
        return lny0 + h * (lo + (target - a) / (b - a))
    base = int(tab[HDR_LNS]) + row * n_y
    target = math.log1p(-r)
    if target <= tab[base + n_y - 1]:
        # 1 - C ~ exp(-y) beyond the last node
        y_last = math.exp(lny0 + h * (n_y - 1))
        return math.log(y_last + (tab[base + n_y - 1] - target))
    lo = 0
    hi = n_y - 1
    while hi - lo > 1:
        mid = (lo + hi) >> 1
        if tab[base + mid] >= target:
            lo = mid
        else:
            hi = mid
    a = tab[base + lo]
    b = tab[base + hi]
    return lny0 + h * (lo + (target - a) / (b - a))


@njit(**KERNEL)
def sample_fraction(tab, chi, r):
    """Photon energy fraction delta in (0, 1) for a uniform r in (0, 1) (inverse CDF of the spectrum).

    Not inlined (KERNEL options): it runs once per photon, and inlining its two table
    searches into every kernel that steps particles would multiply their compile time.
    """
    i, f = _chi_position(tab, chi)
    lny = _row_ln_y(tab, i, r)
    if f > 0.0:
        lny += f * (_row_ln_y(tab, i + 1, r) - lny)
    y3 = 3.0 * chi * math.exp(lny)
    return y3 / (2.0 + y3)


@njit(**LEAF)
def substeps(expected):
    """Number of sub-steps (float) so that each has emission probability <= EMISSION_PROBABILITY_MAX."""
    n = math.ceil(expected / EMISSION_PROBABILITY_MAX)
    return n if n > 1.0 else 1.0


@njit(**LEAF)
def emit(tab, seed, particle, step, event, gamma, chi, ux, uy, uz, t_left, unit):
    """Next photon emission (if any) in the remaining interval t_left (s) of a step.

    Parameters
    ----------
    tab : the flat table from ``table()``
    seed, particle, step, event : int
        Random-number counter: seed, particle index, step number, and the number of
        emission events already drawn in this step (0 for the first call).
    gamma, chi : float
        Lorentz factor and quantum parameter that set the rate and the spectrum.
    ux, uy, uz : float
        gamma beta of the momentum the photon is taken from.
    t_left : float, s
    unit : float, 1/s -- ``rate_unit(charge, mass)``

    Returns
    -------
    emitted : bool
    t_emit : float, s -- time of the emission from the start of the interval (t_left if none)
    t_used : float, s -- interval consumed (to the end of the emitting sub-step; t_left if none)
    ux, uy, uz : float -- momentum after the emission (unchanged if none)
    eps : float -- photon energy in units of m c^2 (0 if none); the particle's gamma
        (from ux, uy, uz) fell by exactly this much.
    """
    expected = emission_rate(tab, chi, gamma, unit) * t_left
    if not expected > 0.0:
        return False, t_left, t_left, ux, uy, uz, 0.0
    n_sub = substeps(expected)
    p = expected / n_sub
    r_when, r_energy, r_within, _ = uniform4(seed, particle, step, EMISSION_STREAM + event)
    if n_sub == 1.0:
        if r_when >= p:
            return False, t_left, t_left, ux, uy, uz, 0.0
        failures = 0.0
    else:
        # first success of n_sub Bernoulli(p) trials: geometric distribution
        failures = math.floor(math.log(r_when) / math.log1p(-p))
        if failures >= n_sub:
            return False, t_left, t_left, ux, uy, uz, 0.0
    dt_sub = t_left / n_sub
    delta = sample_fraction(tab, chi, r_energy)
    eps = delta * gamma
    u2 = ux * ux + uy * uy + uz * uz
    g_u = math.sqrt(1.0 + u2)
    g_new = g_u - eps
    if g_new <= 1.0:
        # the LCFA spectrum allows delta -> 1; a massive particle can give at most its kinetic energy
        eps = g_u - 1.0
        g_new = 1.0
    scale = math.sqrt((g_new - 1.0) * (g_new + 1.0) / u2) if u2 > 0.0 else 0.0
    return True, (failures + r_within) * dt_sub, (failures + 1.0) * dt_sub, ux * scale, uy * scale, uz * scale, eps


@njit(**LEAF)
def photon_direction(ax, ay, az, bx, by, bz, frac):
    """Unit vector along (1 - frac) a + frac b: the momentum direction at a fraction of the step."""
    dx = ax + frac * (bx - ax)
    dy = ay + frac * (by - ay)
    dz = az + frac * (bz - az)
    n = math.sqrt(dx * dx + dy * dy + dz * dz)
    if n > 0.0:
        return dx / n, dy / n, dz / n
    return 0.0, 0.0, 0.0


@njit(cache=True, nogil=True, error_model="numpy", parallel=True)
def constant_field_ensemble(tab, seed, gamma0, chi_per_gamma, dt, n_steps, unit, out_gamma, out_energy, out_count):
    """Particles moving along x in a constant field with a fixed chi/gamma, emitting photons.

    A standalone harness for the emission leaves (used by the tests and benchmarks):
    every particle starts with Lorentz factor gamma0, its chi is chi_per_gamma * gamma
    (a constant crossed field seen at fixed direction), and each step of dt (s) runs
    the same emission loop as the engine. Fills, per particle, the final gamma, the
    emitted energy (units of m c^2) and the photon count. Parallel over particles;
    the result does not depend on the thread count (counter-based random numbers).
    """
    for i in prange(out_gamma.shape[0]):
        ux = math.sqrt(gamma0 * gamma0 - 1.0)
        uy = 0.0
        uz = 0.0
        energy = 0.0
        count = 0
        for step in range(n_steps):
            t_left = dt
            event = 0
            while t_left > 0.0:
                gamma = math.sqrt(1.0 + ux * ux + uy * uy + uz * uz)
                hit, t_emit, t_used, ux, uy, uz, eps = emit(tab, seed, i, step, event, gamma,
                                                             chi_per_gamma * gamma, ux, uy, uz, t_left, unit)
                if not hit:
                    break
                energy += eps
                count += 1
                event += 1
                t_left -= t_used
        out_gamma[i] = math.sqrt(1.0 + ux * ux + uy * uy + uz * uz)
        out_energy[i] = energy
        out_count[i] = count


@njit(cache=True)
def sample_fractions(tab, chi, r):
    """``sample_fraction`` over an array of uniforms r (for analyses and tests)."""
    out = np.empty(r.shape[0])
    for i in range(r.shape[0]):
        out[i] = sample_fraction(tab, chi, r[i])
    return out


# photon record layout: one row of PHOTON_FIELDS float64 per photon (see tracker.photons)
PH_T, PH_X, PH_P, PH_ENERGY, PH_PARTICLE = 0, 1, 4, 7, 8
PHOTON_FIELDS = 9
# per-block photon counters: recorded, not recorded for lack of room, and their energy (J)
PC_RECORDED, PC_DROPPED, PC_DROPPED_ENERGY = 0, 1, 2
PHOTON_COUNTERS = 3


@njit(**KERNEL)
def emit_step(tab, seed, particle, step, gamma, chi, ax, ay, az, ux, uy, uz, dt, unit,
              t_mid, x, y, z, rest_energy, min_energy, record, photons, counters, block):
    """All emission events of one step of one particle; returns (total photon energy / m c^2, ux, uy, uz).

    The step's emission interval is dt (s) centred on t_mid (s), where the particle is at
    (x, y, z) (m) with Lorentz factor gamma and quantum parameter chi; (ax, ay, az) and
    (ux, uy, uz) are gamma beta at the start and end of the interval, the end one being the
    momentum the photons are taken from. Each photon leaves along the momentum direction
    interpolated to its emission time. With ``record``, photons of energy >= min_energy (J)
    go to ``photons[block, n]`` (PH_* columns: t s, x m, p kg m/s, energy J, particle index)
    while there is room, else they are counted in ``counters[block]`` (PC_* slots).
    After each emission gamma falls by the photon energy and chi with it (chi ~ gamma at
    fixed fields and direction).

    Not inlined (KERNEL options): the step kernels call it only for this model above
    CHI_STOCHASTIC_MIN, and keeping its body out of them keeps their compile time (measured:
    +45 % CPU time for a cold compile of ``run_single`` when inlined).
    """
    total = 0.0
    elapsed = 0.0
    t_left = dt
    g = gamma
    c_now = chi
    event = 0
    while t_left > 0.0:
        hit, t_emit, t_used, ux, uy, uz, eps = emit(tab, seed, particle, step, event, g, c_now, ux, uy, uz,
                                                     t_left, unit)
        if not hit:
            break
        if record:
            energy = eps * rest_energy
            if energy >= min_energy:
                n = int(counters[block, PC_RECORDED])
                if n < photons.shape[1]:
                    when = elapsed + t_emit
                    nx, ny, nz = photon_direction(ax, ay, az, ux, uy, uz, when / dt)
                    speed = k.c * math.sqrt(1.0 - 1.0 / (g * g)) if g > 1.0 else 0.0
                    shift = (when - 0.5 * dt) * speed
                    momentum = energy / k.c
                    row = photons[block, n]
                    row[PH_T] = t_mid - 0.5 * dt + when
                    row[PH_X] = x + nx * shift
                    row[PH_X + 1] = y + ny * shift
                    row[PH_X + 2] = z + nz * shift
                    row[PH_P] = momentum * nx
                    row[PH_P + 1] = momentum * ny
                    row[PH_P + 2] = momentum * nz
                    row[PH_ENERGY] = energy
                    row[PH_PARTICLE] = particle
                    counters[block, PC_RECORDED] = n + 1
                else:
                    counters[block, PC_DROPPED] += 1.0
                    counters[block, PC_DROPPED_ENERGY] += energy
        total += eps
        c_now = c_now * (g - eps) / g
        g -= eps
        event += 1
        t_left -= t_used
        elapsed += t_used
        if g <= 1.0:
            break
    return total, ux, uy, uz
