"""Turn a Scenario into a Result: compile to arrays, run the kernel in chunks, collect."""

import math
import time
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass

import numpy as np

from . import constants as k
from .config import CHUNK_STEPS
from .kernel import (FINISHED, NONFINITE, PL_ADAPTIVE, PL_DAMPING, PL_DT, PL_DTMAX, PL_DTMIN, PL_LAST,
                     PL_PUSHER, PL_SAVE, PL_SPP, PL_TEND, PLAN_SIZE, ST_BPREV, ST_DTPREV, ST_EPREV, ST_STEP,
                     ST_KICK, ST_T, ST_U, ST_X, STATE_SIZE, run_chunk)
from .pushers import PUSHERS
from .pushers.dispatch import push
from .radiation.power import chi_parameter, chi_scale, power_scale, transverse_force_squared
from .radiation.quantum import gaunt_factor
from .radiation.reaction import LANDAU_LIFSHITZ_QUANTUM, NONE, ll_kick
from .radiation.reaction import MODELS as RR_MODELS
from .result import Result

STOP_COMPLETED = "completed"
STOP_CANCELLED = "cancelled"
STOP_NONFINITE = "non-finite values (run stopped, last good state kept)"
STOP_MAX_STEPS = "max_steps reached before the end of the run"
STOP_OUTSIDE = "left a field's domain"


@dataclass
class Comparison:
    """The same scenario with (``damped``) and without (``undamped``) radiation reaction."""

    damped: Result
    undamped: Result


def _is_cancelled(cancel):
    if cancel is None:
        return False
    if hasattr(cancel, "is_set"):
        return cancel.is_set()
    return bool(cancel())


def species_row(scenario):
    """[q/m (C/kg), tau0 (s), q^2 tau0/m, |q| hbar/(m^2 c^3), q (C)] for the kernel."""
    q, m = scenario.particle.charge, scenario.particle.mass
    return np.array([q / m, k.tau0(q, m), power_scale(q, m), chi_scale(q, m), q], dtype=np.float64)


def initial_state(scenario, dt):
    """Kernel state at t = 0: u^{-1/2} (half a step back), fields one step back, the first kick.

    u is stepped back half a step with the Lorentz force and half a radiation-reaction
    kick; the kick at (x0, u0) also seeds the kernel's prediction of the next kick.
    Without the radiation half step the damping would start dt/2 late, a relative
    gamma error ~ gamma0 dt/(2 tau_B) that only first-order converges.
    """
    p = scenario.particle
    run = scenario.run
    x0 = np.array(p.position, dtype=float)
    u0 = p.u
    e0, b0 = scenario.fields_at(x0[None, :], 0.0)
    e0, b0 = e0[0], b0[0]
    qm = p.charge / p.mass
    h = -0.5 * dt
    u_half = np.array(push(PUSHERS[run.pusher], u0[0], u0[1], u0[2],
                           *(0.5 * qm * h / k.c * e0), *(0.5 * qm * h * b0)))
    gamma0 = math.sqrt(1.0 + float(u0 @ u0))
    kick = np.zeros(3)
    damping = RR_MODELS[run.radiation_reaction]
    if damping != NONE:
        beta = u0 / gamma0
        f2 = transverse_force_squared(*beta, *e0, *b0)
        kick = np.array(ll_kick(dt, qm, k.tau0(p.charge, p.mass), gamma0, *beta, *e0, *b0,
                                0.0, 0.0, 0.0, 0.0, 0.0, 0.0, f2))
        if damping == LANDAU_LIFSHITZ_QUANTUM:
            kick *= gaunt_factor(chi_parameter(chi_scale(p.charge, p.mass), gamma0, f2))
        u_half -= 0.5 * kick
    x_back = x0 - k.c * dt * u0 / gamma0
    e_back, b_back = scenario.fields_at(x_back[None, :], -dt)
    state = np.zeros(STATE_SIZE)
    state[ST_X:ST_X + 3] = x0
    state[ST_U:ST_U + 3] = u_half
    state[ST_EPREV:ST_EPREV + 3] = e_back[0]
    state[ST_BPREV:ST_BPREV + 3] = b_back[0]
    state[ST_DTPREV] = dt
    state[ST_KICK:ST_KICK + 3] = kick
    return state


def plan_row(scenario, plan):
    """The kernel's float64 plan row (see tracker.kernel PL_* slots)."""
    run = scenario.run
    row = np.zeros(PLAN_SIZE)
    row[PL_DT] = plan.dt
    row[PL_LAST] = plan.steps if not plan.adaptive else run.max_steps
    row[PL_SAVE] = plan.save_every
    row[PL_PUSHER] = PUSHERS[run.pusher]
    row[PL_DAMPING] = RR_MODELS[run.radiation_reaction]
    row[PL_ADAPTIVE] = 1.0 if plan.adaptive else 0.0
    row[PL_SPP] = plan.steps_per_period or 0.0
    row[PL_DTMIN] = plan.dt_min
    row[PL_DTMAX] = plan.dt_max
    row[PL_TEND] = run.duration
    return row


def track(scenario, progress=None, cancel=None):
    """Integrate one scenario and return its Result (SI units throughout).

    Parameters
    ----------
    scenario : Scenario
    progress : callable(fraction: float), optional
        Called between chunks of ``config.CHUNK_STEPS`` steps with the fraction done.
    cancel : threading.Event or callable() -> bool, optional
        Checked between chunks; a cancelled run returns the states computed so far
        with ``meta["complete"] = False`` and ``meta["stop_reason"] = "cancelled"``.
    """
    plan = scenario.plan()
    kinds, params = scenario.field_table
    data = scenario.field_data
    state = initial_state(scenario, plan.dt)
    species = species_row(scenario)
    row = plan_row(scenario, plan)
    chunk = max(plan.save_every, (CHUNK_STEPS // plan.save_every) * plan.save_every)
    capacity = chunk // plan.save_every + 2
    pieces = []
    stop = STOP_COMPLETED
    # a zero-step call loads (or compiles) the kernel, so wall_time measures the run alone
    load_start = time.perf_counter()
    run_chunk(kinds, params, data, species, row, state, 0, *_buffers(1).values())
    load_time = time.perf_counter() - load_start
    start = time.perf_counter()
    while True:
        buffers = _buffers(capacity)
        saved, status = run_chunk(kinds, params, data, species, row, state, chunk, *buffers.values())
        pieces.append({name: a[:saved] for name, a in buffers.items()})
        if progress is not None:
            progress(_fraction_done(state, plan, scenario))
        if status == FINISHED:
            if plan.adaptive and state[ST_T] < scenario.run.duration * (1.0 - 1e-9):
                stop = STOP_MAX_STEPS
            break
        if status == NONFINITE:
            stop = _outside_reason(scenario, state[ST_X:ST_X + 3]) or STOP_NONFINITE
            break
        if _is_cancelled(cancel):
            stop = STOP_CANCELLED
            break
    wall = time.perf_counter() - start
    arrays = {name: np.concatenate([p[name] for p in pieces]) for name in pieces[0]}
    if len(arrays["t"]) == 0:
        arrays = _initial_record(scenario, plan.dt)   # failed on the first step: keep the valid start
    steps = int(state[ST_STEP])
    meta = {
        "steps": steps,
        "planned_steps": plan.steps,
        "dt": plan.dt,
        "adaptive": plan.adaptive,
        "steps_per_period": plan.steps_per_period,
        "period_source": plan.period_source,
        "wall_time": wall,
        "kernel_load_time": load_time,
        "steps_per_second": steps / wall if wall > 0 else float("nan"),
        "stop_reason": stop,
        "complete": stop == STOP_COMPLETED,
        "pusher": scenario.run.pusher,
        "radiation_reaction": scenario.run.radiation_reaction,
    }
    result = Result(scenario=scenario, meta=meta, **arrays)
    _attach_warnings(result)
    return result


def _outside_reason(scenario, x):
    """'left a field's domain: field[i] ...' when a model with an ``outside`` hook says x (m) is
    outside its domain (its NaN stopped the run), else None."""
    for i, f in enumerate(scenario.fields):
        if f.model.outside is None:
            continue
        reason = f.model.outside(f.params, tuple(float(c) for c in x), scenario.base_dir)
        if reason:
            return f"{STOP_OUTSIDE}: field[{i}] ({f.type}) {reason}"
    return None


def _attach_warnings(result):
    """Validity checks after every run (tracker.validity), when that module is present."""
    try:
        from .validity import check_result
    except ImportError:
        return
    result.warnings = check_result(result)


def _initial_record(scenario, dt):
    """Saved-state arrays holding only the validated initial state (power from the fields there)."""
    p = scenario.particle
    u0 = p.u
    gamma0 = math.sqrt(1.0 + float(u0 @ u0))
    e0, b0 = scenario.fields_at([p.position], 0.0)
    f2 = transverse_force_squared(*(u0 / gamma0), *e0[0], *b0[0])
    return {"t": np.zeros(1), "x": np.array([p.position], dtype=float), "u": u0[None, :].copy(),
            "gamma": np.array([gamma0]), "power": np.array([power_scale(p.charge, p.mass) * gamma0**2 * f2]),
            "radiated_energy": np.zeros(1), "field_work": np.zeros(1),
            "chi": np.array([chi_parameter(chi_scale(p.charge, p.mass), gamma0, f2)]), "dt": np.array([dt])}


def _buffers(n):
    out = {name: np.empty(n) for name in ("t", "x", "u", "gamma", "power", "radiated_energy", "field_work",
                                         "chi", "dt")}
    out["x"] = np.empty((n, 3))
    out["u"] = np.empty((n, 3))
    return out


def _fraction_done(state, plan, scenario):
    if plan.adaptive:
        return min(1.0, state[ST_T] / scenario.run.duration)
    return min(1.0, state[ST_STEP] / plan.steps)


def damped_and_undamped(scenario):
    """(damped, undamped) scenarios: radiation reaction on (the scenario's model, or
    Landau-Lifshitz if it had none) and off."""
    model = scenario.run.radiation_reaction
    damped = scenario if model != "none" else scenario.with_run(radiation_reaction="landau-lifshitz")
    return damped, scenario.with_run(radiation_reaction="none")


def compare(scenario, progress=None, cancel=None):
    """Run the scenario with and without radiation reaction, side by side on two threads.

    ``progress`` receives the mean fraction done of the two runs; ``cancel`` stops both.
    """
    damped, undamped = damped_and_undamped(scenario)
    fractions = [0.0, 0.0]

    def reporter(i):
        if progress is None:
            return None

        def report(fraction):
            fractions[i] = fraction
            progress(0.5 * (fractions[0] + fractions[1]))

        return report

    with ThreadPoolExecutor(max_workers=2) as pool:
        jobs = [pool.submit(track, s, reporter(i), cancel) for i, s in enumerate((damped, undamped))]
        results = [job.result() for job in jobs]
    return Comparison(damped=results[0], undamped=results[1])
