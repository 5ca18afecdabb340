"""The integration loops: one compiled kernel set for every field model, pusher, damping model and beam size.

- ``start_states``: the start-up physics (half step back, first kick, fields one step
  back) with the same leaf functions the loop uses;
- ``run_blocks``: particles in blocks of ``BLOCK`` (structure of arrays: ``state`` is
  (STATE_SIZE, N)), the step loop outside and the particle loop inside, ``prange`` over
  blocks; each block also reduces its saved states to moment partials
  (``block_partials``) so beam statistics never need the full arrays;
- ``run_single``: the same ``step.advance`` for one particle without the block
  machinery (the latency-bound case);
- ``reduce_partials``: combines block partials in block order (deterministic whatever
  the thread count) with the pairwise update of Chan, Golub and LeVeque.

Every block writes only its own particles' slots and its own partial row, so results are
bit-identical for any number of threads.
"""

import math

import numpy as np
from numba import njit, prange

from . import constants as k
from .config import KERNEL, LEAF
from .fields.evaluate import analytic_field_at, bulk_fields_at, field_at, has_bulk_rows
from .pushers.dispatch import push
from .radiation.reaction import QUANTUM_STOCHASTIC, radiation_kick
from .radiation.stochastic import CHI_STOCHASTIC_MIN, emit_step
from .step import (BPREV, DTPREV, EPREV, GAMMA_HALF, PL_ADAPTIVE, PL_DAMPING, PL_PHOTON_MIN, PL_PUSHER, PL_SEED,
                   RAD, RUNNING, SAVED, SP_CHARGE, SP_CHI, SP_QM, SP_RATE, SP_TAU0, STATE_SIZE, STATUS, STEP, T, U,
                   WORK, X, adaptive_rate, advance, load_state, plan_tuple, species_tuple, store_state,
                   with_emission)

#: particles per block: the particle loop inside the step loop works on this many (common practice)
BLOCK = 64

# quantities kept per particle and saved state for the block statistics
Q_T, Q_X, Q_UX, Q_Y, Q_UY, Q_G, Q_RAD, Q_CHI, Q_W = range(9)
NQ = 9
# block partial slots (per saved state)
(S_T, S_W, S_MG, S_MGG, S_MX, S_MUX, S_MXX, S_MXUX, S_MUXUX, S_MY, S_MUY, S_MYY, S_MYUY, S_MUYUY,
 S_RAD, S_CHI, S_MAXCHI, S_MISSING) = range(18)
NSTAT = 18


@njit(**KERNEL)
def start_states(kinds, params, data, sp, pl, x0, u0, dt, state):
    """Fill ``state`` (STATE_SIZE, N) from positions x0 (N, 3) m and momenta u0 (N, 3) at t = 0.

    u is taken half a step back, u^{-1/2}, with the Lorentz force and half a radiation
    kick; the fields one step back along the straight line seed the field-rate term of
    the Landau-Lifshitz force. Without the radiation half step the damping would start
    dt/2 late, a relative gamma error ~ gamma0 dt/(2 tau_B) that converges only at first order.
    """
    qm = sp[SP_QM]
    damping = int(pl[PL_DAMPING])
    pusher = int(pl[PL_PUSHER])
    for j in range(x0.shape[0]):
        x, y, z = x0[j, 0], x0[j, 1], x0[j, 2]
        ux, uy, uz = u0[j, 0], u0[j, 1], u0[j, 2]
        ex, ey, ez, bx, by, bz = field_at(kinds, params, data, x, y, z, 0.0)
        hq = -0.25 * qm * dt   # half of the push over -dt/2
        hqc = hq / k.c
        hx, hy, hz = push(pusher, ux, uy, uz, hqc * ex, hqc * ey, hqc * ez, hq * bx, hq * by, hq * bz)
        g0 = math.sqrt(1.0 + ux * ux + uy * uy + uz * uz)
        kx, ky, kz = radiation_kick(damping, 0.5 * dt, qm, sp[SP_TAU0], sp[SP_CHI], g0, ux, uy, uz,
                                    ex, ey, ez, bx, by, bz, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0)
        hx -= kx
        hy -= ky
        hz -= kz
        back = k.c * dt / g0
        f = field_at(kinds, params, data, x - ux * back, y - uy * back, z - uz * back, -dt)
        for s in range(STATE_SIZE):
            state[s, j] = 0.0
        state[X, j] = x
        state[X + 1, j] = y
        state[X + 2, j] = z
        state[U, j] = hx
        state[U + 1, j] = hy
        state[U + 2, j] = hz
        for c in range(3):
            state[EPREV + c, j] = f[c]
            state[BPREV + c, j] = f[3 + c]
        state[DTPREV, j] = dt
        state[GAMMA_HALF, j] = math.sqrt(1.0 + hx * hx + hy * hy + hz * hz)
        if not math.isfinite(hx + hy + hz + f[0] + f[1] + f[2] + f[3] + f[4] + f[5]):
            state[STATUS, j] = 2.0  # NONFINITE: the start itself is unusable


@njit(**KERNEL)
def block_partials(scratch, n_used, out):
    """Moment partials (NSTAT,) per saved state of one block from ``scratch`` (slots, n, NQ).

    Two passes over the block (means, then centred second moments) keep the moments
    accurate for beams far from the origin. Particles with weight 0 did not save.
    """
    for s in range(n_used):
        w = 0.0
        mg = mx = mux = my = muy = 0.0
        missing = 0.0
        t = math.nan
        rad = chi_sum = 0.0
        max_chi = 0.0
        for j in range(scratch.shape[1]):
            q = scratch[s, j]
            wj = q[Q_W]
            if wj == 0.0:
                missing += 1.0
                continue
            t = q[Q_T]
            w += wj
            mg += wj * q[Q_G]
            mx += wj * q[Q_X]
            mux += wj * q[Q_UX]
            my += wj * q[Q_Y]
            muy += wj * q[Q_UY]
            rad += wj * q[Q_RAD]
            chi_sum += wj * q[Q_CHI]
            if q[Q_CHI] > max_chi:
                max_chi = q[Q_CHI]
        o = out[s]
        o[S_T] = t
        o[S_W] = w
        o[S_RAD] = rad
        o[S_CHI] = chi_sum
        o[S_MAXCHI] = max_chi
        o[S_MISSING] = missing
        if w == 0.0:
            for c in (S_MG, S_MGG, S_MX, S_MUX, S_MXX, S_MXUX, S_MUXUX, S_MY, S_MUY, S_MYY, S_MYUY, S_MUYUY):
                o[c] = 0.0
            continue
        mg /= w
        mx /= w
        mux /= w
        my /= w
        muy /= w
        gg = xx = xux = uxux = yy = yuy = uyuy = 0.0
        for j in range(scratch.shape[1]):
            q = scratch[s, j]
            wj = q[Q_W]
            if wj == 0.0:
                continue
            dg = q[Q_G] - mg
            dx = q[Q_X] - mx
            dux = q[Q_UX] - mux
            dy = q[Q_Y] - my
            duy = q[Q_UY] - muy
            gg += wj * dg * dg
            xx += wj * dx * dx
            xux += wj * dx * dux
            uxux += wj * dux * dux
            yy += wj * dy * dy
            yuy += wj * dy * duy
            uyuy += wj * duy * duy
        o[S_MG] = mg
        o[S_MGG] = gg
        o[S_MX] = mx
        o[S_MUX] = mux
        o[S_MXX] = xx
        o[S_MXUX] = xux
        o[S_MUXUX] = uxux
        o[S_MY] = my
        o[S_MUY] = muy
        o[S_MYY] = yy
        o[S_MYUY] = yuy
        o[S_MUYUY] = uyuy


@njit(**KERNEL)
def reduce_partials(partials, n_used, out):
    """Combine block partials (blocks, slots, NSTAT) into out (slots, NSTAT), block by block.

    Pairwise update of means and centred (co)moments: T. F. Chan, G. H. Golub and
    R. J. LeVeque, "Updating formulae and a pairwise algorithm for computing sample
    variances", Stanford report STAN-CS-79-773 (1979).
    """
    for s in range(n_used):
        acc = out[s]
        for c in range(NSTAT):
            acc[c] = 0.0
        acc[S_T] = math.nan
        for b in range(partials.shape[0]):
            p = partials[b, s]
            acc[S_MISSING] += p[S_MISSING]
            wb = p[S_W]
            if wb == 0.0:
                continue
            if math.isnan(acc[S_T]):
                acc[S_T] = p[S_T]
            acc[S_RAD] += p[S_RAD]
            acc[S_CHI] += p[S_CHI]
            if p[S_MAXCHI] > acc[S_MAXCHI]:
                acc[S_MAXCHI] = p[S_MAXCHI]
            wa = acc[S_W]
            w = wa + wb
            f = wa * wb / w
            dg = p[S_MG] - acc[S_MG]
            dx = p[S_MX] - acc[S_MX]
            dux = p[S_MUX] - acc[S_MUX]
            dy = p[S_MY] - acc[S_MY]
            duy = p[S_MUY] - acc[S_MUY]
            acc[S_MGG] += p[S_MGG] + dg * dg * f
            acc[S_MXX] += p[S_MXX] + dx * dx * f
            acc[S_MXUX] += p[S_MXUX] + dx * dux * f
            acc[S_MUXUX] += p[S_MUXUX] + dux * dux * f
            acc[S_MYY] += p[S_MYY] + dy * dy * f
            acc[S_MYUY] += p[S_MYUY] + dy * duy * f
            acc[S_MUYUY] += p[S_MUYUY] + duy * duy * f
            acc[S_MG] += dg * wb / w
            acc[S_MX] += dx * wb / w
            acc[S_MUX] += dux * wb / w
            acc[S_MY] += dy * wb / w
            acc[S_MUY] += duy * wb / w
            acc[S_W] = w


@njit(**LEAF)
def emit_photons(qtab, sp, pl, j, s, s_new, gamma, chi, t, dt, photons, counters, block):
    """Photon emission of particle j's step (stochastic model): the state tuple after it.

    ``s`` is the state before ``advance``, ``s_new`` after; gamma, chi, t (s) and dt (s) are
    the synchronous state's values that ``advance`` returned. The emission interval is the
    push interval centred on t (dt for fixed steps, the mean of two steps for adaptive ones).
    """
    dt_push = 0.5 * (s[DTPREV] + dt) if pl[PL_ADAPTIVE] != 0.0 else dt
    rest_energy = sp[SP_CHARGE] / sp[SP_QM] * k.c * k.c
    eps, ux, uy, uz = emit_step(qtab, int(pl[PL_SEED]), j, int(s[STEP]), gamma, chi, s[U], s[U + 1], s[U + 2],
                                s_new[U], s_new[U + 1], s_new[U + 2], dt_push, sp[SP_RATE], t,
                                s[X], s[X + 1], s[X + 2], rest_energy, pl[PL_PHOTON_MIN], True,
                                photons, counters, block)
    if eps > 0.0:
        return with_emission(s_new, ux, uy, uz, eps * rest_energy)
    return s_new


@njit(parallel=True, **KERNEL)
def run_blocks(kinds, params, data, sp, pl, state, weight, n_steps, t_stop, slot_base, store_all,
               out_t, out_dt, out_x, out_u, out_gamma, out_power, out_rad, out_work, out_chi, partials,
               snap_slots, snap_x, snap_u, qtab, photons, counters):
    """Advance every running particle by up to ``n_steps`` steps, or until its time reaches ``t_stop`` (s).

    Saved states go to slot ``saved - 1 - slot_base`` of the chunk: the full arrays
    (``out_*``, shapes (slots, N) and (slots, N, 3)) when ``store_all``, and always the
    block partials (blocks, slots, NSTAT). A saved state whose overall index is
    ``snap_slots[k]`` is also copied to the snapshot ``snap_x[k]``, ``snap_u[k]`` (N, 3).
    Photons of the stochastic model go to ``photons[block]`` (blocks, capacity,
    PHOTON_FIELDS), counted in ``counters[block]`` (``emit_photons``); the particles of a
    block run in a fixed order, so the photon list is the same for any thread count.
    Units: SI; u = gamma beta.
    """
    n = state.shape[1]
    n_blocks = (n + BLOCK - 1) // BLOCK
    n_slots = partials.shape[1]
    spt = species_tuple(sp)
    plt = plan_tuple(pl)
    adaptive = pl[PL_ADAPTIVE] != 0.0
    bulk = has_bulk_rows(kinds)
    stochastic = int(pl[PL_DAMPING]) == QUANTUM_STOCHASTIC
    for b in prange(n_blocks):
        b0 = b * BLOCK
        b1 = min(n, b0 + BLOCK)
        scratch = np.zeros((n_slots, b1 - b0, NQ))
        # particle by particle, its state held in registers across the chunk (as in run_single): the
        # step is latency bound, and per-step loads and stores of the state only lengthen it
        for j in range(b0, b1):
            s = load_state(state, j)
            for _ in range(n_steps):
                if s[STATUS] != RUNNING or s[T] >= t_stop:
                    break
                f = analytic_field_at(kinds, params, data, s[X], s[X + 1], s[X + 2], s[T])
                if bulk:
                    g = bulk_fields_at(kinds, params, data, s[X], s[X + 1], s[X + 2], s[T])
                    f = (f[0] + g[0], f[1] + g[1], f[2] + g[2], f[3] + g[3], f[4] + g[4], f[5] + g[5])
                omega = adaptive_rate(kinds, params, data, spt, plt, s, f) if adaptive else 0.0
                s_new, recorded, t_s, usx, usy, usz, g_s, power, chi, dt_s = advance(spt, plt, s, f, omega)
                if stochastic and chi >= CHI_STOCHASTIC_MIN and s_new[STATUS] == RUNNING:
                    s_new = emit_photons(qtab, spt, plt, j, s, s_new, g_s, chi, t_s, dt_s, photons, counters, b)
                if recorded:
                    slot = int(s_new[SAVED]) - 1 - slot_base
                    q = scratch[slot, j - b0]
                    q[Q_T] = t_s
                    q[Q_X] = s[X]
                    q[Q_UX] = usx
                    q[Q_Y] = s[X + 1]
                    q[Q_UY] = usy
                    q[Q_G] = g_s
                    q[Q_RAD] = s_new[RAD]
                    q[Q_CHI] = chi
                    q[Q_W] = weight[j]
                    for m in range(snap_slots.shape[0]):
                        if snap_slots[m] == slot + slot_base:
                            for c in range(3):
                                snap_x[m, j, c] = s[X + c]
                            snap_u[m, j, 0] = usx
                            snap_u[m, j, 1] = usy
                            snap_u[m, j, 2] = usz
                    if store_all:
                        out_t[slot, j] = t_s
                        out_dt[slot, j] = dt_s
                        out_x[slot, j, 0] = s[X]
                        out_x[slot, j, 1] = s[X + 1]
                        out_x[slot, j, 2] = s[X + 2]
                        out_u[slot, j, 0] = usx
                        out_u[slot, j, 1] = usy
                        out_u[slot, j, 2] = usz
                        out_gamma[slot, j] = g_s
                        out_power[slot, j] = power
                        out_rad[slot, j] = s_new[RAD]
                        out_work[slot, j] = s_new[WORK]
                        out_chi[slot, j] = chi
                s = s_new
            store_state(state, j, s)
        block_partials(scratch, n_slots, partials[b])


@njit(**KERNEL)
def run_single(kinds, params, data, sp, pl, state, n_steps, slot_base,
               out_t, out_dt, out_x, out_u, out_gamma, out_power, out_rad, out_work, out_chi,
               qtab, photons, counters):
    """``run_blocks`` for one particle (column 0 of ``state``), without blocks or statistics."""
    spt = species_tuple(sp)
    plt = plan_tuple(pl)
    adaptive = pl[PL_ADAPTIVE] != 0.0
    bulk = has_bulk_rows(kinds)
    stochastic = int(pl[PL_DAMPING]) == QUANTUM_STOCHASTIC
    s = load_state(state, 0)
    for _ in range(n_steps):
        if s[STATUS] != RUNNING:
            break
        f = analytic_field_at(kinds, params, data, s[X], s[X + 1], s[X + 2], s[T])
        if bulk:
            g = bulk_fields_at(kinds, params, data, s[X], s[X + 1], s[X + 2], s[T])
            f = (f[0] + g[0], f[1] + g[1], f[2] + g[2], f[3] + g[3], f[4] + g[4], f[5] + g[5])
        omega = adaptive_rate(kinds, params, data, spt, plt, s, f) if adaptive else 0.0
        s_new, recorded, t_s, usx, usy, usz, g_s, power, chi, dt_s = advance(spt, plt, s, f, omega)
        if stochastic and chi >= CHI_STOCHASTIC_MIN and s_new[STATUS] == RUNNING:
            s_new = emit_photons(qtab, spt, plt, 0, s, s_new, g_s, chi, t_s, dt_s, photons, counters, 0)
        if recorded:
            slot = int(s_new[SAVED]) - 1 - slot_base
            out_t[slot, 0] = t_s
            out_dt[slot, 0] = dt_s
            out_x[slot, 0, 0] = s[X]
            out_x[slot, 0, 1] = s[X + 1]
            out_x[slot, 0, 2] = s[X + 2]
            out_u[slot, 0, 0] = usx
            out_u[slot, 0, 1] = usy
            out_u[slot, 0, 2] = usz
            out_gamma[slot, 0] = g_s
            out_power[slot, 0] = power
            out_rad[slot, 0] = s_new[RAD]
            out_work[slot, 0] = s_new[WORK]
            out_chi[slot, 0] = chi
        s = s_new
    store_state(state, 0, s)
