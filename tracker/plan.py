"""Run plan: the time step that resolves the fastest initial time scale, step count, memory."""

import math
from dataclasses import dataclass

import numpy as np


from .config import BYTES_PER_SAVED_STATE, DEFAULT_STEPS_PER_PERIOD
from .errors import ScenarioError

#: default adaptive range: dt_min = dt0 / 1000, dt_max = 1000 dt0
ADAPTIVE_RANGE_DEFAULT = 1000.0


@dataclass(frozen=True)
class RunPlan:
    """dt in s, counts of steps and saved states, memory of the saved arrays in bytes.

    ``period`` (s) is the fastest initial time scale and ``period_source`` names it;
    ``steps_per_period`` is period/dt (None without a time scale). For adaptive
    runs ``dt`` is the initial step, ``steps`` an estimate at that step, and the
    step stays within [dt_min, dt_max] (s).
    """

    dt: float
    steps: int
    save_every: int
    saved_states: int
    memory_bytes: int
    period: float | None
    period_source: str
    steps_per_period: float | None
    adaptive: bool = False
    dt_min: float = 0.0
    dt_max: float = 0.0


def human_bytes(n):
    """'1.2 GiB' style size."""
    for unit in ("B", "KiB", "MiB", "GiB", "TiB"):
        if n < 1024 or unit == "TiB":
            return f"{n:.1f} {unit}" if unit != "B" else f"{n} B"
        n /= 1024.0


def initial_rates(scenario):
    """(rates rad/s (N,), source codes (N,)) of the fastest time scale of every particle at t = 0.

    The same compiled routine as adaptive steps and the validity checks
    (``tracker.timescales``), so the plan, the run and its warnings agree.
    """
    from .timescales import rates

    x0, u0, _ = scenario.initial_particles()
    q, m = scenario.species_charge, scenario.species_mass
    e, b = scenario.fields_at(x0, 0.0)
    if not (np.all(np.isfinite(e)) and np.all(np.isfinite(b))):
        bad = int(np.flatnonzero(~(np.isfinite(e).all(axis=1) & np.isfinite(b).all(axis=1)))[0])
        key = "particle.position" if scenario.particle_count == 1 else "beam.position"
        raise ScenarioError(key, f"the fields are not finite at the start {list(x0[bad])!r} "
                                 "(on a singularity of a field model, or outside a field map?).")
    # without the cooling rate: damped and undamped runs of a comparison get the same plan
    return rates(scenario.field_table, q / m, 0.0, 0.0, x0, u0)


def time_scales(scenario):
    """[(period in s, description)]: the fastest initial time scale over all particles (empty if none)."""
    from .timescales import describe

    omega, source = initial_rates(scenario)
    if not len(omega) or not np.nanmax(omega) > 0:
        return []
    i = int(np.nanargmax(omega))
    where = " at the start" if scenario.particle_count == 1 else f" at the start (fastest particle, #{i})"
    return [(2.0 * math.pi / float(omega[i]), describe(int(source[i]), scenario.fields) + where)]


def make_plan(scenario):
    """Resolve dt and the step count of a scenario; refuse plans above run.max_steps."""
    run = scenario.run
    scales = time_scales(scenario)
    period, source = min(scales) if scales else (None, "none")
    if run.dt is not None:
        dt_wanted = run.dt
    else:
        if period is None:
            raise ScenarioError(
                "run.steps_per_period",
                "there is no magnetic field or laser at the start to set the step from; give run.dt instead.",
            )
        dt_wanted = period / (run.steps_per_period or DEFAULT_STEPS_PER_PERIOD)
    if not (math.isfinite(dt_wanted) and dt_wanted > 0):
        raise ScenarioError("run.steps_per_period", f"the fastest time scale at the start ({source}) is "
                                                    f"{period!r} s: no usable step; give run.dt instead.")
    steps = max(1, math.ceil(run.duration / dt_wanted * (1.0 - 1e-12)))
    dt = run.duration / steps
    saved = steps // run.save_every + 1 + (1 if steps % run.save_every else 0)
    memory = saved * BYTES_PER_SAVED_STATE * scenario.particle_count
    if steps > run.max_steps:
        raise ScenarioError(
            "run.max_steps",
            f"the plan needs {steps:,} steps (dt = {dt:.4g} s over {run.duration:.4g} s), more than "
            f"max_steps = {run.max_steps:,}; it would keep {saved:,} states ({human_bytes(memory)}). "
            "Raise run.max_steps, shorten run.duration or give a coarser resolution.",
        )
    if not run.adaptive:
        return RunPlan(dt, steps, run.save_every, saved, memory, period, source, period / dt if period else None)
    if period is None:
        raise ScenarioError("run.adaptive", "needs a magnetic field or laser at the start to set the first step.")
    # defaults (common practice, no source): three decades either side of the first step
    dt_min = run.dt_min if run.dt_min is not None else dt_wanted * ADAPTIVE_RANGE_DEFAULT**-1
    dt_max = run.dt_max if run.dt_max is not None else min(dt_wanted * ADAPTIVE_RANGE_DEFAULT, run.duration)
    dt0 = min(max(dt_wanted, dt_min), dt_max)
    return RunPlan(dt0, steps, run.save_every, saved, memory, period, source, period / dt0, True, dt_min, dt_max)
