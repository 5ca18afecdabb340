"""Run plan: the time step that resolves the fastest initial time scale, step count, memory.

Memory (``memory_estimate``): what a run keeps (the saved per-particle arrays with
``run.save = "all"``, or the statistics per saved time with ``"statistics"``, plus the
``run.snapshots`` dumps) and the kernel state of every particle; the peak adds the copy
made while the saved chunks are joined and one chunk's buffers. Plans whose peak exceeds
``memory_limit_bytes()`` (``MEMORY_FRACTION`` of the physical memory) are refused with a
message naming ``beam.count`` and ``run.save`` (``run.save_every`` for one particle).

A comparison (``tracker.compare``: one run per radiation-reaction model) keeps every
model's result until it returns, with ``COMPARE_WORKERS`` runs going at once:
``comparison_memory`` counts that, and ``refuse_if_comparison_too_large`` refuses before
any run starts, naming the same keys and the number of models.
"""

import math
import os
from dataclasses import dataclass

import numpy as np


from .config import BYTES_PER_SAVED_STATE, CHUNK_STEPS, DEFAULT_STEPS_PER_PERIOD
from .errors import ScenarioError
from .kernel import NSTAT
from .photons import BYTES_PER_PHOTON, MAX_PHOTONS
from .step import STATE_SIZE

#: default adaptive range: dt_min = dt0 / 1000, dt_max = 1000 dt0
ADAPTIVE_RANGE_DEFAULT = 1000.0
#: largest share of the physical memory one run may plan to use: leaves room for the
#: operating system, the lab or a second run of a comparison (common practice, no source).
MEMORY_FRACTION = 0.5
#: assumed physical memory where the operating system does not report it (os.sysconf)
FALLBACK_PHYSICAL_MEMORY = 8 * 1024**3
#: bytes per particle outside the saved arrays: the kernel state (STATE_SIZE floats) twice
#: (the compiled Bundle's and the running copy), x0, u0, weight in the Bundle and in the
#: scenario's cached initial particles (2 x 7 floats), the lost codes and times (2 floats).
STATE_FLOATS_PER_PARTICLE = 2 * STATE_SIZE + 2 * 7 + 2
#: bytes per saved time of a statistics-only run: the reduced moments (kernel.NSTAT)
#: and the nine statistics arrays made from them.
BYTES_PER_SAVED_STATISTICS = (NSTAT + 9) * 8
#: bytes per particle and snapshot: x and u (6 floats) in the engine's dump buffers
BYTES_PER_SNAPSHOT_PARTICLE = 6 * 8
#: runs of a comparison that go at once, each on its own thread (``tracker.engine.compare``)
COMPARE_WORKERS = 2
#: floats per particle a finished run of a comparison holds besides its saved arrays: its
#: scenario's cached initial particles (x0, u0, weight: 7) and the result's stop code, loss
#: time and weight (3); the kernel state is freed when the run ends.
RETAINED_FLOATS_PER_PARTICLE = 7 + 3

#: the most the recorded photons of one quantum-stochastic run take, bytes: the kept table at its
#: cap (``photons.MAX_PHOTONS`` rows) plus as many rows written into a chunk's buffers before they
#: are copied out. An upper bound: a run that emits fewer photons uses less.
PHOTON_TABLE_BYTES = MAX_PHOTONS * BYTES_PER_PHOTON
PHOTON_PEAK_BYTES = 2 * PHOTON_TABLE_BYTES


def physical_memory_bytes():
    """Physical memory of this machine in bytes (``FALLBACK_PHYSICAL_MEMORY`` if unknown)."""
    try:
        pages, size = os.sysconf("SC_PHYS_PAGES"), os.sysconf("SC_PAGE_SIZE")
    except (AttributeError, ValueError, OSError):
        return FALLBACK_PHYSICAL_MEMORY
    return pages * size if pages > 0 and size > 0 else FALLBACK_PHYSICAL_MEMORY


def memory_limit_bytes():
    """Largest peak memory (bytes) a plan may need: ``MEMORY_FRACTION`` of the physical memory."""
    return int(MEMORY_FRACTION * physical_memory_bytes())


def memory_estimate(scenario, steps, saved):
    """(kept bytes, state bytes, peak bytes) of a run of ``steps`` steps keeping ``saved`` states.

    kept: the result's saved arrays (or statistics) and snapshots; state: per-particle
    kernel state and initial particles; peak: kept + state + the copy made while joining
    the saved chunks + one chunk's buffers.
    """
    run = scenario.run
    n = scenario.particle_count
    save_all = getattr(run, "save", "all") == "all" or n == 1
    snapshots = len(getattr(run, "snapshots", ()) or ()) if n > 1 else 0
    state = STATE_FLOATS_PER_PARTICLE * 8 * n
    snaps = snapshots * n * BYTES_PER_SNAPSHOT_PARTICLE
    if save_all:
        arrays = saved * BYTES_PER_SAVED_STATE * n
        chunk_states = min(saved, max(1, CHUNK_STEPS // n) // run.save_every + 2)
        chunk = chunk_states * BYTES_PER_SAVED_STATE * n
        kept = arrays + (saved * BYTES_PER_SAVED_STATISTICS if n > 1 else 0) + snaps
        return kept, state, kept + state + arrays + chunk
    chunk_states = min(saved, max(1, CHUNK_STEPS // n) // run.save_every + 2)
    partials = ((n + 63) // 64) * chunk_states * NSTAT * 8
    kept = saved * BYTES_PER_SAVED_STATISTICS + snaps
    return kept, state, kept + state + saved * BYTES_PER_SAVED_STATISTICS + partials
#: steps per period of the fastest initial time scale below which a plan is refused: at
#: 4 steps (theta = pi/2 per step) the Boris rotation angle 2 arctan(theta/2) is already
#: 15 % short, and a laser period sampled fewer than ~2 times is not seen at all (a
#: 120 fs step across a 25 fs pulse radiated nothing). Common practice, no source.
MIN_PLAN_STEPS_PER_PERIOD = 4.0


@dataclass(frozen=True)
class RunPlan:
    """dt in s, counts of steps and saved states, memory in bytes.

    ``memory_bytes`` is what the run keeps plus the particles' state (``state_bytes``);
    ``peak_bytes`` the most it needs at once (module notes).

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
    state_bytes: int = 0
    peak_bytes: int = 0
    field_bytes: int = 0  #: the fields' bulk data (maps, programs), in state and peak; shared between runs
    photon_bytes: int = 0  #: at most this much for recorded photons (stochastic model), included in peak
    warnings: tuple = ()  #: validity-style records (kind, message, time s) the run carries


def human_bytes(n):
    """'1.2 GiB' style size."""
    for unit in ("B", "KiB", "MiB", "GiB", "TiB"):
        if n < 1024 or unit == "TiB":
            if unit == "B":
                return f"{n:.0f} B"
            return f"{n:.1f} {unit}" if n < 1e6 else f"{n:.3g} {unit}"
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
    steps_wanted = run.duration / dt_wanted
    if not (math.isfinite(steps_wanted) and steps_wanted <= run.max_steps):
        # counted in floating point: a step of 1e-320 s must not overflow the integer count
        memory = (steps_wanted / run.save_every + 1.0) * BYTES_PER_SAVED_STATE * scenario.particle_count
        raise ScenarioError(
            "run.max_steps",
            f"the plan needs {steps_wanted:.4g} steps (dt = {dt_wanted:.4g} s over {run.duration:.4g} s), more "
            f"than max_steps = {run.max_steps:,}; it would keep {human_bytes(memory)} of states. Raise "
            "run.max_steps, shorten run.duration or give a coarser resolution.",
        )
    steps = max(1, math.ceil(steps_wanted * (1.0 - 1e-12)))
    dt = run.duration / steps
    saved = steps // run.save_every + 1 + (1 if steps % run.save_every else 0)
    kept, state, peak = memory_estimate(scenario, steps, saved)
    # the fields' bulk data (maps, formula programs) is loaded for the whole run
    field_bytes = scenario.field_data_bytes
    state += field_bytes
    peak += field_bytes
    photon_bytes = PHOTON_PEAK_BYTES if run.radiation_reaction == "quantum-stochastic" else 0
    peak += photon_bytes
    memory = kept + state
    if steps > run.max_steps:
        raise ScenarioError(
            "run.max_steps",
            f"the plan needs {steps:,} steps (dt = {dt:.4g} s over {run.duration:.4g} s), more than "
            f"max_steps = {run.max_steps:,}; it would keep {saved:,} states ({human_bytes(memory)}). "
            "Raise run.max_steps, shorten run.duration or give a coarser resolution.",
        )
    refuse_if_too_large(scenario, saved, memory, peak)
    sizes = dict(state_bytes=state, peak_bytes=peak, field_bytes=field_bytes, photon_bytes=photon_bytes)
    if not run.adaptive:
        spp = period / dt if period else None
        return RunPlan(dt, steps, run.save_every, saved, memory, period, source, spp,
                       warnings=resolution_notes(run, spp, source), **sizes)
    if period is None:
        raise ScenarioError("run.adaptive", "needs a magnetic field or laser at the start to set the first step.")
    # defaults (common practice, no source): three decades either side of the first step
    dt_min = run.dt_min if run.dt_min is not None else dt_wanted * ADAPTIVE_RANGE_DEFAULT**-1
    dt_max = run.dt_max if run.dt_max is not None else min(dt_wanted * ADAPTIVE_RANGE_DEFAULT, run.duration)
    dt0 = min(max(dt_wanted, dt_min), dt_max)
    return RunPlan(dt0, steps, run.save_every, saved, memory, period, source, period / dt0, True, dt_min, dt_max,
                   warnings=resolution_notes(run, period / dt0, source), **sizes)


def refuse_if_too_large(scenario, saved, memory, peak):
    """ScenarioError naming beam.count and run.save (or run.save_every) when ``peak`` bytes exceed
    ``memory_limit_bytes()``."""
    limit = memory_limit_bytes()
    if peak <= limit:
        return
    run = scenario.run
    need = (f"it would keep {saved:,} saved states ({human_bytes(memory)}) and needs {human_bytes(peak)} at its "
            f"peak, more than {human_bytes(limit)} ({MEMORY_FRACTION:.0%} of this machine's memory)")
    if scenario.particle_count == 1:
        raise ScenarioError("run.save_every", f"the plan does not fit in memory: {need}. Raise run.save_every "
                                              f"(now {run.save_every}) or shorten run.duration.")
    save = getattr(run, "save", "all")
    advice = ("lower beam.count or raise run.save_every" if save == "statistics" else
              'set run.save = "statistics" (memory independent of beam.count), lower beam.count or raise '
              "run.save_every")
    raise ScenarioError("beam.count", f"the plan does not fit in memory with beam.count = {scenario.particle_count:,} "
                                      f"and run.save = {save!r}: {need}. Advice: {advice}.")


def comparison_memory(scenario, plan, runs, models=None):
    """(held bytes, peak bytes) of ``runs`` runs of ``plan`` side by side (``tracker.compare``).

    Every run keeps its result (the plan's kept part plus ``RETAINED_FLOATS_PER_PARTICLE``)
    until the comparison returns; ``COMPARE_WORKERS`` runs go at once, each at the plan's
    peak; the fields' bulk data is loaded once and shared. One run gives the plan's peak.
    The stochastic model's photons (``PHOTON_PEAK_BYTES`` at most, ``PHOTON_TABLE_BYTES`` kept)
    count once when ``models`` names it (or, without ``models``, when the scenario's own model is it).
    """
    runs = max(1, int(runs))
    at_once = min(runs, COMPARE_WORKERS)
    field = plan.field_bytes
    photons = plan.photon_bytes
    stochastic = (photons > 0) if models is None else "quantum-stochastic" in models
    finished = (plan.memory_bytes - plan.state_bytes) + RETAINED_FLOATS_PER_PARTICLE * 8 * scenario.particle_count
    held = field + runs * finished + (PHOTON_TABLE_BYTES if stochastic else 0)
    peak = (field + (runs - at_once) * finished + at_once * (plan.peak_bytes - field - photons)
            + (PHOTON_PEAK_BYTES if stochastic else 0))
    return held, peak


def comparison_text(scenario, plan, runs, models=None):
    """One line for people: what ``runs`` runs side by side hold and need at their peak, and the limit."""
    held, peak = comparison_memory(scenario, plan, runs, models)
    limit = memory_limit_bytes()
    at_once = min(max(1, int(runs)), COMPARE_WORKERS)
    fits = "" if peak <= limit else " -- too much: refused"
    return (f"{runs} run{'s' if runs != 1 else ''} side by side ({at_once} at once): {human_bytes(held)} held "
            f"when done, {human_bytes(peak)} at the peak, of at most {human_bytes(limit)} "
            f"({MEMORY_FRACTION:.0%} of this machine's memory){fits}")


def refuse_if_comparison_too_large(scenario, runs, plan=None, models=None):
    """ScenarioError naming beam.count and run.save (run.save_every for one particle) and the
    number of models when ``runs`` runs of the scenario side by side exceed ``memory_limit_bytes()``.

    One run is the plan's own check (``refuse_if_too_large``, already made by ``make_plan``).
    """
    runs = int(runs)
    if runs <= 1:
        return
    plan = plan if plan is not None else scenario.plan()
    held, peak = comparison_memory(scenario, plan, runs, models)
    limit = memory_limit_bytes()
    if peak <= limit:
        return
    at_once = min(runs, COMPARE_WORKERS)
    need = (f"{runs} runs (one per model) hold {human_bytes(held)} when done and need {human_bytes(peak)} at "
            f"their peak ({at_once} at once), more than {human_bytes(limit)} ({MEMORY_FRACTION:.0%} of this "
            f"machine's memory); one run alone needs {human_bytes(plan.peak_bytes)}")
    run = scenario.run
    if scenario.particle_count == 1:
        raise ScenarioError("run.save_every", f"comparing {runs} models does not fit in memory: {need}. Run "
                                              f"fewer models at once, raise run.save_every (now {run.save_every}) "
                                              "or shorten run.duration.")
    save = getattr(run, "save", "all")
    advice = ("run fewer models at once, lower beam.count or raise run.save_every" if save == "statistics" else
              'run fewer models at once, set run.save = "statistics" (memory independent of beam.count), lower '
              "beam.count or raise run.save_every")
    raise ScenarioError("beam.count", f"comparing {runs} models does not fit in memory with beam.count = "
                                      f"{scenario.particle_count:,} and run.save = {save!r}: {need}. "
                                      f"Advice: {advice}.")


def resolution_notes(run, steps_per_period, source):
    """Warnings of a plan whose step under-resolves the fastest initial time scale.

    Refuses (ScenarioError) below ``MIN_PLAN_STEPS_PER_PERIOD``; returns a tuple with one
    "resolution" record below ``validity.MIN_STEPS_PER_PERIOD`` (the bound the run's
    checks use), else an empty tuple.
    """
    from .validity import MIN_STEPS_PER_PERIOD, warning

    if steps_per_period is None or steps_per_period >= MIN_STEPS_PER_PERIOD:
        return ()
    key = "run.dt" if run.dt is not None else "run.steps_per_period"
    need = math.ceil(MIN_STEPS_PER_PERIOD)
    if run.dt is not None:
        advice = f"lower run.dt to <= {run.dt * steps_per_period / MIN_STEPS_PER_PERIOD:.3g} s"
    else:
        advice = f"raise run.steps_per_period to >= {need}"
    text = (f"the step resolves the {source} with only {steps_per_period:.3g} steps per period "
            f"(at least {MIN_STEPS_PER_PERIOD:.0f} keep the phase error below 1 % per period)")
    # the "rotation" by an electric field of a slow particle is the time to change u by ~1; its
    # rate falls as 1/gamma once the particle speeds up, so the estimate at the start is
    # pessimistic (a standing-wave antinode converges at second order from "1 step per period"):
    # warn only
    if steps_per_period < MIN_PLAN_STEPS_PER_PERIOD and "electric-field rotation" not in source:
        raise ScenarioError(key, f"{text}; below {MIN_PLAN_STEPS_PER_PERIOD:.0f} the orbit and its radiation are "
                                 f"meaningless. Advice: {advice}.")
    return (warning("resolution", f"planned {text}. Advice: {advice}.", 0.0),)
