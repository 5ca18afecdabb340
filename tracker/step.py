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
   g(chi) for the quantum-corrected model), chi, q E.v; cumulative radiated energy
   and field work by the trapezoidal rule;
5. x^{n+1} = x^n + c dt^n u^{n+1/2}/gamma^{n+1/2}.

A particle stops (its status code says why) on a non-finite value, or when the
radiation kick of one step exceeds ``KICK_LIMIT`` of its momentum: the splitting
assumes a small change per step, and past that bound it can feed energy in instead
of removing it.
"""

import math

from numba import njit

from . import constants as k
from .config import LEAF
from .fields.evaluate import field_at
from .pushers.dispatch import push
from .radiation.power import chi_parameter, lienard_power, transverse_force_squared
from .radiation.quantum import gaunt_factor
from .radiation.reaction import LANDAU_LIFSHITZ_QUANTUM, NONE, radiation_kick
from .timescales import fastest_rate

# ---------------------------------------------------------------- state slots (rows of a (STATE_SIZE, N) array)
X, U, T, RAD, WORK, PPREV, WPREV, EPREV, BPREV = 0, 3, 6, 7, 8, 9, 10, 11, 14
STEP, DTPREV, STATUS, SAVED, NEXT_SAVE, GAMMA_HALF = 17, 18, 19, 20, 21, 22
STATE_SIZE = 23

# ---------------------------------------------------------------- species row
SP_QM, SP_TAU0, SP_POWER, SP_CHI, SP_CHARGE = range(5)
SPECIES_SIZE = 5

# ---------------------------------------------------------------- plan row
(PL_DT, PL_LAST, PL_SAVE, PL_PUSHER, PL_DAMPING, PL_ADAPTIVE, PL_SPP, PL_DTMIN, PL_DTMAX, PL_TEND,
 PL_GRID, PL_INTERVAL, PL_SEED) = range(13)
PLAN_SIZE = 13

# ---------------------------------------------------------------- particle status codes
RUNNING, FINISHED, NONFINITE, KICK_TOO_LARGE = 0, 1, 2, 3

#: largest radiation kick of one step as a fraction of |u| (common practice, no source: the
#: split kick is a first-order correction and must stay a small change per step).
KICK_LIMIT = 0.1


@njit(**LEAF)
def advance(kinds, params, data, sp, pl, state, j):
    """Advance particle ``j`` of ``state`` by one step (see the module docstring).

    Returns (saved, t, usx, usy, usz, gamma, power, chi, dt): ``saved`` is True when the
    synchronous state at t (s) was recorded (u = gamma beta, power W, chi, dt s). The
    recorded position is the one at t, ``state[X:X+3, j]`` before this step moved it.
    """
    qm = sp[SP_QM]
    x = state[X, j]
    y = state[X + 1, j]
    z = state[X + 2, j]
    ux = state[U, j]
    uy = state[U + 1, j]
    uz = state[U + 2, j]
    t = state[T, j]
    step = int(state[STEP, j])
    dt_prev = state[DTPREV, j]
    g_old = state[GAMMA_HALF, j]
    damping = int(pl[PL_DAMPING])
    adaptive = pl[PL_ADAPTIVE] != 0.0
    grid = pl[PL_GRID] != 0.0
    t_end = pl[PL_TEND]

    ex, ey, ez, bx, by, bz = field_at(kinds, params, data, x, y, z, t)

    finished = step == int(pl[PL_LAST])
    if grid:
        save = t >= state[NEXT_SAVE, j]
        finished = finished or (save and t >= t_end)
    else:
        save = step % int(pl[PL_SAVE]) == 0
    dt = pl[PL_DT]
    landing = False
    target = 0.0
    if adaptive:
        cooling_scale = 0.0
        if damping != NONE:
            cooling_scale = sp[SP_POWER] * qm / (sp[SP_CHARGE] * k.c * k.c)  # q^2 tau0/m / (m c^2)
        omega = fastest_rate(kinds, params, data, qm, cooling_scale, x, y, z, t, ux, uy, uz,
                             ex, ey, ez, bx, by, bz)[0]
        dt = pl[PL_DTMAX]
        if omega > 0.0:
            dt = 2.0 * math.pi / (omega * pl[PL_SPP])
        dt = min(max(dt, pl[PL_DTMIN]), pl[PL_DTMAX])
        if grid:
            saves = state[SAVED, j] + (1.0 if save else 0.0)
            target = min(saves * pl[PL_INTERVAL], t_end)
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
    inv_dtp = 1.0 / dt_prev
    dex = (ex - state[EPREV, j]) * inv_dtp
    dey = (ey - state[EPREV + 1, j]) * inv_dtp
    dez = (ez - state[EPREV + 2, j]) * inv_dtp
    dbx = (bx - state[BPREV, j]) * inv_dtp
    dby = (by - state[BPREV + 1, j]) * inv_dtp
    dbz = (bz - state[BPREV + 2, j]) * inv_dtp
    half = 0.5 * dt_push
    tau0 = sp[SP_TAU0]
    cscale = sp[SP_CHI]
    kax, kay, kaz = radiation_kick(damping, half, qm, tau0, cscale, ux, uy, uz, ex, ey, ez, bx, by, bz,
                                   dex, dey, dez, dbx, dby, dbz)
    hq = 0.5 * qm * dt_push
    hqc = hq / k.c
    lx, ly, lz = push(int(pl[PL_PUSHER]), ux + kax, uy + kay, uz + kaz,
                      hqc * ex, hqc * ey, hqc * ez, hq * bx, hq * by, hq * bz)
    kbx, kby, kbz = radiation_kick(damping, half, qm, tau0, cscale, lx + kax, ly + kay, lz + kaz,
                                   ex, ey, ez, bx, by, bz, dex, dey, dez, dbx, dby, dbz)
    nux = lx + kbx
    nuy = ly + kby
    nuz = lz + kbz
    if damping != NONE:
        kx = kax + kbx
        ky = kay + kby
        kz = kaz + kbz
        if kx * kx + ky * ky + kz * kz > KICK_LIMIT * KICK_LIMIT * (ux * ux + uy * uy + uz * uz):
            state[STATUS, j] = KICK_TOO_LARGE
            return False, t, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, dt

    # diagnostics at t^n
    g_new = math.sqrt(1.0 + nux * nux + nuy * nuy + nuz * nuz)
    gs = 0.5 * (g_old + g_new)
    sx = ux + nux
    sy = uy + nuy
    sz = uz + nuz
    s2 = sx * sx + sy * sy + sz * sz
    scale = math.sqrt((gs * gs - 1.0) / (s2 * gs * gs)) if s2 > 0.0 else 0.0  # beta = u/gamma, |u| = sqrt(gs^2-1)
    betax = sx * scale
    betay = sy * scale
    betaz = sz * scale
    f2 = transverse_force_squared(betax, betay, betaz, ex, ey, ez, bx, by, bz)
    power = lienard_power(sp[SP_POWER], gs, f2)
    chi = chi_parameter(cscale, gs, f2)
    if damping == LANDAU_LIFSHITZ_QUANTUM:
        power *= gaunt_factor(chi)
    if not math.isfinite(power + g_new):
        # NaN or Inf from the fields or the push: stop before saving, keep the last good state
        state[STATUS, j] = NONFINITE
        return False, t, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, dt
    work_rate = sp[SP_CHARGE] * k.c * (ex * betax + ey * betay + ez * betaz)
    if step > 0:
        state[RAD, j] += 0.5 * dt_prev * (power + state[PPREV, j])
        state[WORK, j] += 0.5 * dt_prev * (work_rate + state[WPREV, j])
    state[PPREV, j] = power
    state[WPREV, j] = work_rate

    recorded = save or finished
    if recorded:
        state[SAVED, j] += 1.0
        if grid:
            state[NEXT_SAVE, j] = min(state[SAVED, j] * pl[PL_INTERVAL], t_end)
    if finished:
        state[STATUS, j] = FINISHED
        return recorded, t, betax * gs, betay * gs, betaz * gs, gs, power, chi, dt

    step_len = k.c * dt / g_new
    nx = x + nux * step_len
    ny = y + nuy * step_len
    nz = z + nuz * step_len
    # one test catches NaN or Inf in any of them: both propagate through the sum
    if not math.isfinite(nx + ny + nz + nux + nuy + nuz):
        state[STATUS, j] = NONFINITE
        return recorded, t, betax * gs, betay * gs, betaz * gs, gs, power, chi, dt
    state[X, j] = nx
    state[X + 1, j] = ny
    state[X + 2, j] = nz
    state[U, j] = nux
    state[U + 1, j] = nuy
    state[U + 2, j] = nuz
    state[T, j] = target if landing else t + dt
    state[EPREV, j] = ex
    state[EPREV + 1, j] = ey
    state[EPREV + 2, j] = ez
    state[BPREV, j] = bx
    state[BPREV + 1, j] = by
    state[BPREV + 2, j] = bz
    state[STEP, j] = step + 1
    state[DTPREV, j] = dt
    state[GAMMA_HALF, j] = g_new
    return recorded, t, betax * gs, betay * gs, betaz * gs, gs, power, chi, dt
