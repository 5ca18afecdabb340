"""The integration loop: one compiled kernel for every field model, pusher and damping model.

Leapfrog layout: x at integer steps, u = gamma v/c at half steps. Step n:

1. E, B at (x^n, t^n) from the field table;
2. (adaptive runs) dt^n from the fastest local time scale, see ``local_step``;
3. Lorentz push u^{n-1/2} -> u_L over (dt^{n-1} + dt^n)/2 with the selected pusher;
4. synchronous state at t^n: gamma = (gamma^{n-1/2} + gamma^{n+1/2})/2, u along
   (u^{n-1/2} + u^{n+1/2}) rescaled to that gamma (removes the theta^2/8 shortfall
   of a plain average of two rotated vectors). u^{n+1/2} is predicted as u_L plus
   the previous step's radiation kick: evaluating the damping at u_L alone would
   ignore the damping's own change over the step and make the scheme first order
   (measured: final gamma error halves with dt); the prediction restores second order;
5. diagnostics at t^n: Lienard power (times g(chi) for the quantum-corrected
   model), chi, q E.v; cumulative radiated energy and field work by the
   trapezoidal rule;
6. radiation-reaction kick u_L -> u^{n+1/2} (operator splitting, common practice;
   Tamburini et al. 2010, from memory), with gamma and the fields of the
   synchronous state but the velocity direction of the predicted u^{n+1/2}: the
   kick follows the push, so the friction of the whole step acts along the
   already rotated momentum. Evaluated along the mid-step direction instead, the
   energy loss falls short by cos(theta/2) (1.6 % error in the coth cooling test
   at 10 steps per gyration; with the rotated direction 3e-7);
7. x^{n+1} = x^n + c dt^n u^{n+1/2}/gamma^{n+1/2}.
"""

import math

from numba import njit

from . import constants as k
from .config import KERNEL
from .fields.evaluate import field_at
from .fields.expression import EXPRESSION, OMEGA_SLOT as EXPRESSION_OMEGA
from .fields.fieldmap import FIELD_MAP, OMEGA_SLOT as MAP_OMEGA
from .fields.gaussian_beam import GAUSSIAN_BEAM
from .fields.laser import PLANE_WAVE
from .fields.undulator import UNDULATOR
from .pushers.dispatch import push
from .radiation.power import chi_parameter, lienard_power, transverse_force_squared
from .radiation.quantum import gaunt_factor
from .radiation.reaction import LANDAU_LIFSHITZ_QUANTUM, NONE, ll_kick

# state vector slots
ST_X, ST_U, ST_T, ST_RAD, ST_WORK, ST_PPREV, ST_WPREV, ST_EPREV, ST_BPREV, ST_STEP, ST_DTPREV, ST_KICK = (
    0, 3, 6, 7, 8, 9, 10, 11, 14, 17, 18, 19)
STATE_SIZE = 22
# species row
SP_QM, SP_TAU0, SP_POWER, SP_CHI, SP_CHARGE = range(5)
# plan row
(PL_DT, PL_LAST, PL_SAVE, PL_PUSHER, PL_DAMPING, PL_ADAPTIVE, PL_SPP, PL_DTMIN, PL_DTMAX, PL_TEND) = range(10)
PLAN_SIZE = 10
# status codes
RUNNING, FINISHED, NONFINITE = 0, 1, 2


#: adaptive steps also resolve radiative cooling: the rate P/(gamma m c^2) counts as a
#: frequency this many times larger, i.e. at most ~2 pi/(10 spp) of the energy is lost per
#: step (common practice, no source: keeps the split radiation kick a small correction).
COOLING_RESOLUTION = 10.0


@njit(**KERNEL)
def local_step(kinds, params, data, qm, gamma, bx, by, bz, ex, ey, ez, fbx, fby, fbz, steps_per_period, dt_min, dt_max,
               cooling_rate):
    """dt (s) resolving the fastest local time scale by ``steps_per_period``, within [dt_min, dt_max].

    Scales: relativistic gyration |q| |B|/(gamma m), the electric rotation rate
    |q| |E|/(gamma m c), each laser's frequency seen by the particle w (1 - n.beta),
    each undulator's period transit k_u c |beta_z|, and the radiative cooling rate
    P/(gamma m c^2) (1/s) times COOLING_RESOLUTION.
    """
    omega = abs(qm) * math.sqrt(fbx * fbx + fby * fby + fbz * fbz) / gamma
    if COOLING_RESOLUTION * cooling_rate > omega:
        omega = COOLING_RESOLUTION * cooling_rate
    omega_e = abs(qm) * math.sqrt(ex * ex + ey * ey + ez * ez) / (gamma * k.c)
    if omega_e > omega:
        omega = omega_e
    for i in range(kinds.shape[0]):
        if kinds[i] == PLANE_WAVE or kinds[i] == GAUSSIAN_BEAM:  # both keep omega, n in slots 1..4
            w = params[i, 1] * (1.0 - (params[i, 2] * bx + params[i, 3] * by + params[i, 4] * bz))
        elif kinds[i] == FIELD_MAP:
            w = params[i, MAP_OMEGA]
        elif kinds[i] == EXPRESSION:
            w = params[i, EXPRESSION_OMEGA]
        elif kinds[i] == UNDULATOR:
            w = params[i, 1] * k.c * abs(bz)
        else:
            continue
        if w > omega:
            omega = w
    dt = dt_max
    if omega > 0.0:
        dt = 2.0 * math.pi / (omega * steps_per_period)
    if dt > dt_max:
        dt = dt_max
    if dt < dt_min:
        dt = dt_min
    return dt


@njit(**KERNEL)
def run_chunk(kinds, params, data, species, plan, state, n_steps,
              out_t, out_x, out_u, out_gamma, out_power, out_radiated, out_work, out_chi, out_dt):
    """Advance ``state`` by up to ``n_steps`` steps, writing saved states from index 0.

    Returns (number of states saved, status). Units: SI, u dimensionless.
    """
    c = k.c
    inv_c = 1.0 / k.c
    qm = species[SP_QM]
    tau0 = species[SP_TAU0]
    pscale = species[SP_POWER]
    cscale = species[SP_CHI]
    charge = species[SP_CHARGE]
    rest_energy = charge / qm * c * c
    last_step = int(plan[PL_LAST])
    save_every = int(plan[PL_SAVE])
    pusher = int(plan[PL_PUSHER])
    damping = int(plan[PL_DAMPING])
    adaptive = plan[PL_ADAPTIVE] != 0.0
    spp = plan[PL_SPP]
    dt_min = plan[PL_DTMIN]
    dt_max = plan[PL_DTMAX]
    t_end = plan[PL_TEND]

    x, y, z = state[0], state[1], state[2]
    ux, uy, uz = state[3], state[4], state[5]
    t = state[ST_T]
    radiated = state[ST_RAD]
    work = state[ST_WORK]
    p_prev = state[ST_PPREV]
    w_prev = state[ST_WPREV]
    epx, epy, epz = state[11], state[12], state[13]
    bpx, bpy, bpz = state[14], state[15], state[16]
    step = int(state[ST_STEP])
    dt_prev = state[ST_DTPREV]
    kx, ky, kz = state[19], state[20], state[21]
    dt = plan[PL_DT]
    status = RUNNING
    saved = 0
    countdown = (save_every - step % save_every) % save_every + 1
    g_old = math.sqrt(1.0 + ux * ux + uy * uy + uz * uz)  # then carried from the position update

    for _ in range(n_steps):
        ex, ey, ez, bx, by, bz = field_at(kinds, params, data, x, y, z, t)
        finished = step == last_step
        if adaptive:
            cooling = 0.0
            if damping != NONE:
                f2_old = transverse_force_squared(ux / g_old, uy / g_old, uz / g_old, ex, ey, ez, bx, by, bz)
                cooling = pscale * g_old * f2_old / rest_energy  # P/(gamma m c^2)
            dt = local_step(kinds, params, data, qm, g_old, ux / g_old, uy / g_old, uz / g_old,
                            ex, ey, ez, bx, by, bz, spp, dt_min, dt_max, cooling)
            if t + dt >= t_end:
                dt = t_end - t
            finished = finished or dt <= 1e-12 * t_end
        dt_push = 0.5 * (dt_prev + dt) if adaptive else dt
        hq = 0.5 * qm * dt_push
        hqc = hq * inv_c
        lx, ly, lz = push(pusher, ux, uy, uz, hqc * ex, hqc * ey, hqc * ez, hq * bx, hq * by, hq * bz)
        px = lx + kx
        py = ly + ky
        pz = lz + kz
        g_p = math.sqrt(1.0 + px * px + py * py + pz * pz)
        gs = 0.5 * (g_old + g_p)
        sx = ux + px
        sy = uy + py
        sz = uz + pz
        s2 = sx * sx + sy * sy + sz * sz
        # beta = u/gamma with |u| = sqrt(gs^2 - 1)
        scale = math.sqrt((gs * gs - 1.0) / (s2 * gs * gs)) if s2 > 0.0 else 0.0
        betax = sx * scale
        betay = sy * scale
        betaz = sz * scale
        f2 = transverse_force_squared(betax, betay, betaz, ex, ey, ez, bx, by, bz)
        power = lienard_power(pscale, gs, f2)
        gaunt = 1.0
        if damping == LANDAU_LIFSHITZ_QUANTUM:
            gaunt = gaunt_factor(chi_parameter(cscale, gs, f2))
            power *= gaunt
        if not math.isfinite(power + g_p):
            # NaN or Inf from the fields or the push: stop before saving, keep the last good state
            status = NONFINITE
            break
        work_rate = charge * c * (ex * betax + ey * betay + ez * betaz)
        if step > 0:
            radiated += 0.5 * dt_prev * (power + p_prev)
            work += 0.5 * dt_prev * (work_rate + w_prev)
        p_prev = power
        w_prev = work_rate

        countdown -= 1
        if countdown == 0 or finished:
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
        if finished:
            status = FINISHED
            break

        if damping != NONE:
            inv_dt = 1.0 / dt_prev
            # the kick follows the push, so its friction acts along the rotated momentum: direction of the
            # predicted u^{n+1/2}, magnitude of the synchronous beta (removes a cos(theta/2) loss deficit)
            to_end = math.sqrt((gs * gs - 1.0) / ((g_p * g_p - 1.0) * gs * gs)) if g_p > 1.0 else 0.0
            dux, duy, duz = ll_kick(dt_push, qm, tau0, gs, px * to_end, py * to_end, pz * to_end,
                                    ex, ey, ez, bx, by, bz,
                                    (ex - epx) * inv_dt, (ey - epy) * inv_dt, (ez - epz) * inv_dt,
                                    (bx - bpx) * inv_dt, (by - bpy) * inv_dt, (bz - bpz) * inv_dt, f2)
            kx = gaunt * dux
            ky = gaunt * duy
            kz = gaunt * duz
            lx += kx
            ly += ky
            lz += kz
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
        dt_prev = dt
        step += 1

    state[0], state[1], state[2] = x, y, z
    state[3], state[4], state[5] = ux, uy, uz
    state[ST_T] = t
    state[ST_RAD] = radiated
    state[ST_WORK] = work
    state[ST_PPREV] = p_prev
    state[ST_WPREV] = w_prev
    state[11], state[12], state[13] = epx, epy, epz
    state[14], state[15], state[16] = bpx, bpy, bpz
    state[ST_STEP] = step
    state[ST_DTPREV] = dt_prev
    state[19], state[20], state[21] = kx, ky, kz
    return saved, status
