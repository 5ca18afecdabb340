"""The integration loop: one compiled kernel for every field model, pusher and damping model.

Leapfrog layout: x at integer steps, u = gamma v/c at half steps. Step n:

1. E, B at (x^n, t^n) from the field table;
2. Lorentz push u^{n-1/2} -> u_L with the selected pusher;
3. synchronous state at t^n: gamma = (gamma^{n-1/2} + gamma_L)/2, u along
   (u^{n-1/2} + u_L) rescaled to that gamma (removes the theta^2/8 shortfall of a
   plain average of two rotated vectors);
4. diagnostics at t^n: Lienard power, chi, E.v; cumulative radiated energy
   and field work by the trapezoidal rule;
5. radiation reaction kick u_L -> u^{n+1/2} evaluated at the synchronous state
   (operator splitting, common practice; Tamburini et al. 2010, from memory);
6. x^{n+1} = x^n + c dt u^{n+1/2}/gamma^{n+1/2}.

State vector (float64, STATE_SIZE): x(3), u_half(3), t, radiated, work,
power_prev, work_rate_prev, E_prev(3), B_prev(3), step.
"""

import math

from numba import njit

from . import constants as k
from .config import KERNEL
from .fields.evaluate import field_at
from .pushers.dispatch import push
from .radiation.power import chi_parameter, lienard_power, transverse_force_squared
from .radiation.reaction import NONE, ll_kick

STATE_SIZE = 18
# species row
SP_QM, SP_TAU0, SP_POWER, SP_CHI, SP_CHARGE = range(5)
# status codes
RUNNING, FINISHED, NONFINITE = 0, 1, 2


@njit(**KERNEL)
def run_chunk(kinds, params, species, dt, last_step, save_every, pusher, damping, state, n_steps,
              out_t, out_x, out_u, out_gamma, out_power, out_radiated, out_work, out_chi, out_dt, saved):
    """Advance ``state`` by up to ``n_steps`` steps, writing saved states from index ``saved``.

    Returns (number of states saved so far, status). Units: SI, u dimensionless.
    """
    c = k.c
    qm = species[SP_QM]
    tau0 = species[SP_TAU0]
    pscale = species[SP_POWER]
    cscale = species[SP_CHI]
    charge = species[SP_CHARGE]
    half_qm_dt_c = 0.5 * qm * dt / c
    half_qm_dt = 0.5 * qm * dt
    inv_dt = 1.0 / dt

    x, y, z = state[0], state[1], state[2]
    ux, uy, uz = state[3], state[4], state[5]
    t = state[6]
    radiated = state[7]
    work = state[8]
    p_prev = state[9]
    w_prev = state[10]
    epx, epy, epz = state[11], state[12], state[13]
    bpx, bpy, bpz = state[14], state[15], state[16]
    step = int(state[17])
    status = RUNNING
    g_old = math.sqrt(1.0 + ux * ux + uy * uy + uz * uz)  # then carried from the position update
    countdown = (save_every - step % save_every) % save_every + 1

    for _ in range(n_steps):
        ex, ey, ez, bx, by, bz = field_at(kinds, params, x, y, z, t)
        lx, ly, lz = push(pusher, ux, uy, uz,
                          half_qm_dt_c * ex, half_qm_dt_c * ey, half_qm_dt_c * ez,
                          half_qm_dt * bx, half_qm_dt * by, half_qm_dt * bz)
        g_l = math.sqrt(1.0 + lx * lx + ly * ly + lz * lz)
        gs = 0.5 * (g_old + g_l)
        sx = ux + lx
        sy = uy + ly
        sz = uz + lz
        s2 = sx * sx + sy * sy + sz * sz
        # beta = u/gamma with |u| = sqrt(gs^2 - 1)
        scale = math.sqrt((gs * gs - 1.0) / (s2 * gs * gs)) if s2 > 0.0 else 0.0
        betax = sx * scale
        betay = sy * scale
        betaz = sz * scale
        f2 = transverse_force_squared(betax, betay, betaz, ex, ey, ez, bx, by, bz)
        power = lienard_power(pscale, gs, f2)
        work_rate = charge * c * (ex * betax + ey * betay + ez * betaz)
        if step > 0:
            radiated += 0.5 * dt * (power + p_prev)
            work += 0.5 * dt * (work_rate + w_prev)
        p_prev = power
        w_prev = work_rate

        countdown -= 1
        if countdown == 0 or step == last_step:
            countdown = save_every
            out_t[saved] = t
            out_x[saved, 0] = x
            out_x[saved, 1] = y
            out_x[saved, 2] = z
            out_u[saved, 0] = betax * gs
            out_u[saved, 1] = betay * gs
            out_u[saved, 2] = betaz * gs
            out_gamma[saved] = gs
            out_power[saved] = power
            out_radiated[saved] = radiated
            out_work[saved] = work
            out_chi[saved] = chi_parameter(cscale, gs, f2)
            out_dt[saved] = dt
            saved += 1
        if step == last_step:
            status = FINISHED
            break

        if damping != NONE:
            dux, duy, duz = ll_kick(dt, qm, tau0, gs, betax, betay, betaz, ex, ey, ez, bx, by, bz,
                                    (ex - epx) * inv_dt, (ey - epy) * inv_dt, (ez - epz) * inv_dt,
                                    (bx - bpx) * inv_dt, (by - bpy) * inv_dt, (bz - bpz) * inv_dt, f2)
            lx += dux
            ly += duy
            lz += duz
        g_new = math.sqrt(1.0 + lx * lx + ly * ly + lz * lz)
        step_len = c * dt / g_new
        nx = x + lx * step_len
        ny = y + ly * step_len
        nz = z + lz * step_len
        # one test catches NaN or Inf in any of them: both propagate through the sum
        if not math.isfinite(nx + ny + nz + lx + ly + lz + power):
            status = NONFINITE
            break
        x, y, z = nx, ny, nz
        ux, uy, uz = lx, ly, lz
        g_old = g_new
        epx, epy, epz = ex, ey, ez
        bpx, bpy, bpz = bx, by, bz
        t += dt
        step += 1

    state[0], state[1], state[2] = x, y, z
    state[3], state[4], state[5] = ux, uy, uz
    state[6] = t
    state[7] = radiated
    state[8] = work
    state[9] = p_prev
    state[10] = w_prev
    state[11], state[12], state[13] = epx, epy, epz
    state[14], state[15], state[16] = bpx, bpy, bpz
    state[17] = step
    return saved, status
