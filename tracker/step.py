"""One step of one particle, composed of the inlined leaf functions of each family.

Leapfrog layout: x at integer steps, u = gamma v/c at half steps. Step n of particle j:

1. fields: E, B at (x^n, t^n) from the field table (``fields.evaluate.field_at``);
2. time scale: with adaptive steps, dt^n resolves the fastest local rate
   (``timescales.fastest_rate``) by ``steps_per_period``;
3. push: a symmetric splitting of the Lorentz push and the radiation reaction over
   the push interval h = (dt^{n-1} + dt^n)/2 (``radiation.reaction.radiation_kick``,
   ``pushers.dispatch.push``), all with the fields at x^n:

       u_a       = u^{n-1/2} + (h/2) F(u^{n-1/2})           explicit half kick
       u_b       = Lorentz push of u_a over h
       u^{n+1/2} = u_b + (h/2) F(u_b + (h/2) F(u^{n-1/2}))   end half kick at a predicted end state

   The end half kick approximates the implicit Euler half step, the adjoint of the
   explicit one, so the composition is symmetric (time-reversible up to O(h^3)) and
   therefore second order for any force that turns the momentum, electric or magnetic
   (Strang splitting; E. Hairer, C. Lubich and G. Wanner, "Geometric Numerical
   Integration", 2nd ed., sec. II.5 and II.3: the adjoint method and symmetric
   composition, from memory). Each half kick acts along the momentum it is evaluated
   at, so a magnetic rotation does not shorten the friction by cos(theta/2);
4. diagnostics at t^n: the synchronous state gamma = (gamma^{n-1/2} + gamma^{n+1/2})/2
   with u along u^{n-1/2} + u^{n+1/2} (rescaled to that gamma), Lienard power (times
   g(chi) for the quantum-corrected and stochastic models: the mean power), chi, q E.v;
   cumulative radiated energy and field work by the trapezoidal rule;
5. x^{n+1} = x^n + c dt^n u^{n+1/2}/gamma^{n+1/2}.

Stochastic model (``quantum-stochastic``): the kicks act only below CHI_STOCHASTIC_MIN; at or
above it the kernels sample photons after ``advance`` (``radiation.stochastic.emit_step``, not
inlined: it needs the photon arrays) over the push interval centred on t^n at the synchronous
chi, take them from u^{n+1/2} (``with_emission``) and their energy enters the radiated energy
at the next step, whose synchronous gamma is the first to see it all gone: the energy balance
closes to round-off and the recorded photons add up to the radiated energy.

A particle stops (its status code says why) on a non-finite value, or when the
radiation kick of one step exceeds ``KICK_LIMIT`` of its momentum: the splitting
assumes a small change per step, and past that bound it can feed energy in instead
of removing it.
"""

import math

from numba import njit

from . import constants as k
from .config import LEAF
from .pushers.dispatch import push
from .radiation.power import momentum_force_squared
from .radiation.quantum import gaunt_factor
from .radiation.reaction import LANDAU_LIFSHITZ_QUANTUM, NONE, QUANTUM_STOCHASTIC, radiation_kick
from .radiation.stochastic import CHI_STOCHASTIC_MIN
from .timescales import fastest_rate

# ---------------------------------------------------------------- state slots (rows of a (STATE_SIZE, N) array)
X, U, T, RAD, WORK, PPREV, WPREV, EPREV, BPREV = 0, 3, 6, 7, 8, 9, 10, 11, 14
STEP, DTPREV, STATUS, SAVED, NEXT_SAVE, GAMMA_HALF = 17, 18, 19, 20, 21, 22  # NEXT_SAVE: step (fixed dt) or time (s, adaptive beams)
PHPREV = 23   # energy (J) of the photons emitted after the previous step's diagnostics (stochastic model)
STATE_SIZE = 24

# ---------------------------------------------------------------- species row
SP_QM, SP_TAU0, SP_POWER, SP_CHI, SP_CHARGE, SP_RATE = range(6)
SPECIES_SIZE = 6

# ---------------------------------------------------------------- plan row
(PL_DT, PL_LAST, PL_SAVE, PL_PUSHER, PL_DAMPING, PL_ADAPTIVE, PL_SPP, PL_DTMIN, PL_DTMAX, PL_TEND,
 PL_GRID, PL_INTERVAL, PL_SEED, PL_PHOTON_MIN) = range(14)
PLAN_SIZE = 14

# ---------------------------------------------------------------- particle status codes
RUNNING, FINISHED, NONFINITE, KICK_TOO_LARGE = 0, 1, 2, 3

#: largest radiation kick of one step as a fraction of |u| (common practice, no source: the
#: split kick is a first-order correction and must stay a small change per step).
KICK_LIMIT = 0.1


@njit(**LEAF)
def species_tuple(sp):
    """The species row (SPECIES_SIZE,) as a tuple."""
    return (sp[0], sp[1], sp[2], sp[3], sp[4], sp[5])


@njit(**LEAF)
def plan_tuple(pl):
    """The plan row (PLAN_SIZE,) as a tuple."""
    return (pl[0], pl[1], pl[2], pl[3], pl[4], pl[5], pl[6], pl[7], pl[8], pl[9], pl[10], pl[11], pl[12], pl[13])


@njit(**LEAF)
def load_state(state, j):
    """Particle j's state as a tuple (STATE_SIZE floats) from the (STATE_SIZE, N) array."""
    return (state[0, j], state[1, j], state[2, j], state[3, j], state[4, j], state[5, j], state[6, j],
            state[7, j], state[8, j], state[9, j], state[10, j], state[11, j], state[12, j], state[13, j],
            state[14, j], state[15, j], state[16, j], state[17, j], state[18, j], state[19, j], state[20, j],
            state[21, j], state[22, j], state[23, j])


@njit(**LEAF)
def store_state(state, j, s):
    """Write the tuple ``s`` back to column j of the state array.

    Written out: a loop ``state[i, j] = s[i]`` indexes the tuple at run time, which numba
    compiles to a jump table per element (measured: ~15 % of a beam step)."""
    state[0, j] = s[0]
    state[1, j] = s[1]
    state[2, j] = s[2]
    state[3, j] = s[3]
    state[4, j] = s[4]
    state[5, j] = s[5]
    state[6, j] = s[6]
    state[7, j] = s[7]
    state[8, j] = s[8]
    state[9, j] = s[9]
    state[10, j] = s[10]
    state[11, j] = s[11]
    state[12, j] = s[12]
    state[13, j] = s[13]
    state[14, j] = s[14]
    state[15, j] = s[15]
    state[16, j] = s[16]
    state[17, j] = s[17]
    state[18, j] = s[18]
    state[19, j] = s[19]
    state[20, j] = s[20]
    state[21, j] = s[21]
    state[22, j] = s[22]
    state[23, j] = s[23]


@njit(**LEAF)
def adaptive_rate(kinds, params, data, sp, pl, s, f):
    """Fastest local rate (rad/s) at state ``s`` with fields ``f`` = (E, B) for an adaptive step (step 2)."""
    qm = sp[SP_QM]
    cooling_scale = 0.0
    if pl[PL_DAMPING] != NONE:
        cooling_scale = sp[SP_POWER] * qm / (sp[SP_CHARGE] * k.c * k.c)  # q^2 tau0/m / (m c^2)
    return fastest_rate(kinds, params, data, qm, cooling_scale, s[X], s[X + 1], s[X + 2], s[T],
                        s[U], s[U + 1], s[U + 2], f[0], f[1], f[2], f[3], f[4], f[5])[0]


@njit(**LEAF)
def advance(sp, pl, s, f, omega):
    """Advance one particle by one step (see the module docstring) with its local fields
    ``f`` = (Ex, Ey, Ez, Bx, By, Bz) in V/m and T and, for adaptive runs, the fastest
    local rate ``omega`` (rad/s, from ``adaptive_rate``).

    ``sp``, ``pl`` and ``s`` are tuples (species row, plan row, state; SP_*, PL_* and
    state slots): tuples live in registers, where
    arrays passed to an inlined function cost atomic reference counting on every call.
    Returns (new state tuple, saved, t, usx, usy, usz, gamma,
    power, chi, dt): ``saved`` is True when the synchronous state at t (s) was recorded
    (u = gamma beta, power W, chi, dt s) at the position of ``s`` (before this step).
    chi is computed on recorded steps and, for the models it enters (quantum-corrected and
    stochastic), on every step; 0 otherwise.
    """
    qm = sp[SP_QM]
    x = s[X]
    y = s[X + 1]
    z = s[X + 2]
    ux = s[U]
    uy = s[U + 1]
    uz = s[U + 2]
    t = s[T]
    radiated = s[RAD]
    work = s[WORK]
    p_prev = s[PPREV]
    w_prev = s[WPREV]
    step = s[STEP]
    dt_prev = s[DTPREV]
    saved = s[SAVED]
    next_save = s[NEXT_SAVE]
    g_old = s[GAMMA_HALF]
    photons_prev = s[PHPREV]
    damping = int(pl[PL_DAMPING])
    quantum = damping == LANDAU_LIFSHITZ_QUANTUM or damping == QUANTUM_STOCHASTIC   # chi enters the step
    adaptive = pl[PL_ADAPTIVE] != 0.0
    grid = pl[PL_GRID] != 0.0
    t_end = pl[PL_TEND]

    ex, ey, ez, bx, by, bz = f

    finished = step == pl[PL_LAST]
    if grid:
        save = t >= next_save
        finished = finished or (save and t >= t_end)
    else:
        save = step == next_save   # the next saving step (no division in the loop)
    dt = pl[PL_DT]
    landing = False
    target = 0.0
    if adaptive:
        dt = pl[PL_DTMAX]
        if omega > 0.0:
            dt = 2.0 * math.pi / (omega * pl[PL_SPP])
        dt = min(max(dt, pl[PL_DTMIN]), pl[PL_DTMAX])
        if grid:
            target = min((saved + (1.0 if save else 0.0)) * pl[PL_INTERVAL], t_end)
            if t + dt >= target:
                dt = target - t
                landing = True
        else:
            if t + dt >= t_end:
                dt = t_end - t
            finished = finished or dt <= 1e-12 * t_end
        dt_push = 0.5 * (dt_prev + dt)
    else:
        dt_push = dt

    # push: explicit half kick, Lorentz, half kick at the predicted end state
    hq = 0.5 * qm * dt_push
    hqc = hq * (1.0 / k.c)
    tau0 = sp[SP_TAU0]
    cscale = sp[SP_CHI]
    if damping == NONE:
        kax = kay = kaz = kbx = kby = kbz = 0.0
        lx, ly, lz = push(int(pl[PL_PUSHER]), ux, uy, uz, hqc * ex, hqc * ey, hqc * ez, hq * bx, hq * by, hq * bz)
    else:
        # fixed steps: dt_prev is the plan's dt, whose inverse the compiler takes out of the loop
        inv_dtp = 1.0 / dt_prev if adaptive else 1.0 / pl[PL_DT]
        dex = (ex - s[EPREV]) * inv_dtp
        dey = (ey - s[EPREV + 1]) * inv_dtp
        dez = (ez - s[EPREV + 2]) * inv_dtp
        dbx = (bx - s[BPREV]) * inv_dtp
        dby = (by - s[BPREV + 1]) * inv_dtp
        dbz = (bz - s[BPREV + 2]) * inv_dtp
        half = 0.5 * dt_push
        kax, kay, kaz = radiation_kick(damping, half, qm, tau0, cscale, g_old, ux, uy, uz, ex, ey, ez, bx, by, bz,
                                       dex, dey, dez, dbx, dby, dbz)
        lx, ly, lz = push(int(pl[PL_PUSHER]), ux + kax, uy + kay, uz + kaz,
                          hqc * ex, hqc * ey, hqc * ez, hq * bx, hq * by, hq * bz)
        px = lx + kax
        py = ly + kay
        pz = lz + kaz
        kbx, kby, kbz = radiation_kick(damping, half, qm, tau0, cscale, math.sqrt((px * px + py * py) + (pz * pz + 1.0)),
                                       px, py, pz, ex, ey, ez, bx, by, bz, dex, dey, dez, dbx, dby, dbz)
    nux = lx + kbx
    nuy = ly + kby
    nuz = lz + kbz
    # the next position first: the next step needs it and u^{n+1/2}, while nothing of the diagnostics
    # feeds back; placed after them it would hold back the next step behind their chain of square roots
    g_new = math.sqrt((nux * nux + nuy * nuy) + (nuz * nuz + 1.0))
    step_len = k.c * dt / g_new
    nx = x + nux * step_len
    ny = y + nuy * step_len
    nz = z + nuz * step_len
    # one test catches NaN or Inf in any of them: both propagate through the sum
    moved = math.isfinite(((nx + ny) + (nz + nux)) + (nuy + nuz))
    status = RUNNING
    recorded = False
    usx = usy = usz = gs = power = chi = 0.0
    eu = inv_gs = g2f2 = 0.0
    if damping != NONE:
        kx = kax + kbx
        ky = kay + kby
        kz = kaz + kbz
        if kx * kx + ky * ky + kz * kz > KICK_LIMIT * KICK_LIMIT * (ux * ux + uy * uy + uz * uz):
            status = KICK_TOO_LARGE
    if status == RUNNING:
        # diagnostics at t^n: u_s = sqrt(gs^2 - 1) s/|s|, s = u^{n-1/2} + u^{n+1/2}
        sx = ux + nux
        sy = uy + nuy
        sz = uz + nuz
        s2 = sx * sx + sy * sy + sz * sz
        inv_s2 = 0.25 / s2 if s2 > 0.0 else 0.0   # beside g_new's square root, not after it
        a = g_old + g_new
        gs = 0.5 * a
        scale = math.sqrt((a - 2.0) * (a + 2.0) * inv_s2)   # gs^2 - 1 = (a - 2)(a + 2)/4
        usx = sx * scale
        usy = sy * scale
        usz = sz * scale
        g2f2, eu = momentum_force_squared(gs, scale, sx, sy, sz, ex, ey, ez, bx, by, bz)
        inv_gs = 1.0 / gs
        power = sp[SP_POWER] * g2f2   # Lienard: power_scale gamma^2 f2
        if quantum:
            chi = cscale * math.sqrt(g2f2)   # chi_scale gamma sqrt(f2)
            power *= gaunt_factor(chi)   # the mean power, for the stochastic model too
        if not math.isfinite(power + g_new):
            # NaN or Inf from the fields or the push: stop before saving, keep the last good state
            status = NONFINITE
    if status == RUNNING:
        work_rate = sp[SP_CHARGE] * k.c * (eu * inv_gs)   # q E.v
        # the power the radiated-energy integral counts: none where sampled photons carry the loss
        counted = 0.0 if (damping == QUANTUM_STOCHASTIC and chi >= CHI_STOCHASTIC_MIN) else power
        if step > 0.0:
            radiated += 0.5 * dt_prev * (counted + p_prev)
            work += 0.5 * dt_prev * (work_rate + w_prev)
        # photons emitted after the last step's diagnostics: the synchronous gamma of this step is
        # the first to see all of their energy gone
        radiated += photons_prev
        photons_prev = 0.0
        p_prev = counted
        w_prev = work_rate
        recorded = save or finished
        if recorded:
            if not quantum:
                chi = cscale * math.sqrt(g2f2)   # only saved: one square root less on the other steps
            saved += 1.0
            if grid:
                next_save = min(saved * pl[PL_INTERVAL], t_end)
        if save and not grid:
            next_save += pl[PL_SAVE]
        if finished:
            status = FINISHED
    if status == RUNNING:
        if not moved:
            status = NONFINITE
        else:
            s = (nx, ny, nz, nux, nuy, nuz, target if landing else t + dt, radiated, work, p_prev, w_prev,
                 ex, ey, ez, bx, by, bz, step + 1.0, dt, float(status), saved, next_save, g_new, photons_prev)
    if status != RUNNING:
        # the position and momentum stay at the last good state; the sums include this step if it was good
        s = (x, y, z, ux, uy, uz, t, radiated, work, p_prev, w_prev, s[EPREV], s[EPREV + 1], s[EPREV + 2],
             s[BPREV], s[BPREV + 1], s[BPREV + 2], step, dt_prev, float(status), saved, next_save, g_old,
             photons_prev)
    return s, recorded, t, usx, usy, usz, gs, power, chi, dt


@njit(**LEAF)
def with_emission(s, ux, uy, uz, photon_energy):
    """State tuple ``s`` (after ``advance``) with u^{n+1/2} = (ux, uy, uz) after photon emission and the
    photons' energy (J) kept in PHPREV for the next step's radiated-energy sum."""
    return (s[0], s[1], s[2], ux, uy, uz, s[6], s[7], s[8], s[9], s[10], s[11], s[12], s[13], s[14], s[15], s[16],
            s[17], s[18], s[19], s[20], s[21], math.sqrt(1.0 + ux * ux + uy * uy + uz * uz), photon_energy)
