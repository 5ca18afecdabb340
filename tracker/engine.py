"""Turn a Scenario into a Result: compile to a Bundle, run the kernels in chunks, collect.

One particle ([particle]) gives a ``Result``; a beam gives a ``BeamResult``. Both run
the same compiled step (``tracker.step.advance``): one particle through
``kernel.run_single``, a beam through ``kernel.run_blocks`` (blocks of particles over
all cores). Between chunks the engine reports progress and checks for cancellation.
"""

import math
import time
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass

import numpy as np

from .compile import compile_scenario
from .config import CHUNK_STEPS
from .kernel import NSTAT, reduce_partials, run_blocks, run_single
from .photons import MAX_PHOTONS, PhotonTable
from .plan import COMPARE_WORKERS
from .radiation.reaction import MODELS as RR_MODELS
from .radiation.reaction import QUANTUM_STOCHASTIC
from .radiation.stochastic import HEADER, PC_DROPPED, PC_DROPPED_ENERGY, PC_RECORDED, PHOTON_COUNTERS, PHOTON_FIELDS
from .result import Result
from .step import (FINISHED, KICK_TOO_LARGE, NONFINITE, PL_DAMPING, PL_GRID, PL_INTERVAL, PL_LAST, PL_PHOTON_MIN,
                   RUNNING, SAVED, STATUS, STEP, T, X)
from .stops import StopReason

STOP_COMPLETED = StopReason.COMPLETED
STOP_CANCELLED = StopReason.CANCELLED
STOP_NONFINITE = StopReason.NONFINITE
STOP_MAX_STEPS = StopReason.MAX_STEPS
STOP_KICK = StopReason.RADIATION_KICK_TOO_LARGE
STOP_LEFT_DOMAIN = StopReason.LEFT_DOMAIN

#: per-particle stop codes of a BeamResult (``lost``); 0 = ran to the end
LOST_NONE, LOST_NONFINITE, LOST_KICK, LOST_MAX_STEPS, LOST_DOMAIN = 0, 1, 2, 3, 4
LOST_REASONS = {LOST_NONFINITE: STOP_NONFINITE, LOST_KICK: STOP_KICK, LOST_MAX_STEPS: STOP_MAX_STEPS,
                LOST_DOMAIN: STOP_LEFT_DOMAIN}

ARRAY_NAMES = ("t", "dt", "x", "u", "gamma", "power", "radiated_energy", "field_work", "chi")


#: every radiation-reaction model, in the order comparisons list them
MODEL_ORDER = ("none", "landau-lifshitz", "landau-lifshitz-quantum", "quantum-stochastic")


@dataclass
class Comparison:
    """The same scenario run with several radiation-reaction models.

    ``results`` maps model name -> Result (or BeamResult), in ``MODEL_ORDER``;
    ``damped`` is the damped run of the classic pair (the scenario's model, or
    Landau-Lifshitz when it had none) and ``undamped`` the run without radiation reaction,
    when those models were run (None otherwise).
    """

    damped: object = None
    undamped: object = None
    results: dict = None

    def __post_init__(self):
        if self.results is None:
            self.results = {}
            for result in (self.undamped, self.damped):
                if result is not None:
                    self.results[result.scenario.run.radiation_reaction] = result
        if self.undamped is None:
            self.undamped = self.results.get("none")

    @property
    def models(self):
        """Model names run, in ``MODEL_ORDER``."""
        return list(self.results)

    def __getitem__(self, model):
        return self.results[model]

    def energy_radiated(self):
        """Energy radiated per model (J, weighted sum for a beam): {model: J}."""
        out = {}
        for model, result in self.results.items():
            if hasattr(result, "radiated_energy") and getattr(result, "stats", None) is None:
                out[model] = float(result.radiated_energy[-1])
            else:
                out[model] = float(result.stats["radiated_energy"][-1])
        return out


def _is_cancelled(cancel):
    if cancel is None:
        return False
    if hasattr(cancel, "is_set"):
        return cancel.is_set()
    return bool(cancel())


def _buffers(slots, n):
    """Saved-state buffers of ``slots`` states for ``n`` particles, NaN where a particle saved nothing."""
    out = {name: np.full((slots, n), np.nan) for name in ARRAY_NAMES}
    out["x"] = np.full((slots, n, 3), np.nan)
    out["u"] = np.full((slots, n, 3), np.nan)
    return out


def _chunk_plan(bundle):
    """(steps per kernel call, saved-state capacity per call) for a fixed-step run."""
    n = bundle.count
    save_every = bundle.plan.save_every
    steps = max(1, CHUNK_STEPS // n)
    steps = max(save_every, (steps // save_every) * save_every)
    return steps, steps // save_every + 2


def _fraction_done(state, bundle, duration):
    alive = state[STATUS] == RUNNING
    if bundle.plan.adaptive:
        t = np.where(alive, state[T], duration)
        return float(min(1.0, np.min(t) / duration))
    steps = np.where(alive, state[STEP], bundle.plan.steps)
    return float(min(1.0, np.min(steps) / bundle.plan.steps))


def _stop_reason(scenario, bundle, state):
    """(run stop reason, per-particle lost codes (N,) int8) from the kernel's status codes."""
    status = state[STATUS]
    lost = np.zeros(bundle.count, dtype=np.int8)
    lost[status == NONFINITE] = LOST_NONFINITE
    lost[status == KICK_TOO_LARGE] = LOST_KICK
    short = (status == FINISHED) & (state[T] < scenario.run.duration * (1.0 - 1e-9))
    lost[short] = LOST_MAX_STEPS
    for j in np.flatnonzero(lost == LOST_NONFINITE):
        if outside_reason(scenario, state[X:X + 3, j]) is not None:
            lost[j] = LOST_DOMAIN
    if np.any(status == RUNNING):
        return STOP_CANCELLED, lost
    if lost.size and np.all(lost != LOST_NONE):
        return LOST_REASONS[int(lost[0])], lost
    if bundle.count == 1 or np.all(lost == LOST_NONE):
        return STOP_COMPLETED, lost
    return STOP_COMPLETED, lost


def outside_reason(scenario, x):
    """Text naming the field model whose domain the position x (3,) m is outside of, or None."""
    for i, f in enumerate(scenario.fields):
        if f.model.outside is not None:
            # base_dir: a model's domain may live in a file named relative to the scenario (field maps)
            reason = f.model.outside(f.params, np.asarray(x, dtype=float), scenario.base_dir)
            if reason:
                return f"field[{i}]: {reason}"
    return None


def snapshot_slots(scenario, bundle):
    """Overall saved-state indices nearest the requested ``run.snapshots`` times (s), int64 (k,)."""
    times = np.asarray(getattr(scenario.run, "snapshots", ()) or (), dtype=float)
    if times.size == 0 or bundle.count == 1:
        return np.zeros(0, dtype=np.int64)
    plan = bundle.plan
    interval = bundle.plan_row[PL_INTERVAL]
    if interval > 0:     # adaptive beam: saved on a common time grid
        slots = np.rint(times / interval)
    else:                # fixed steps: every save_every steps, and the last step
        steps = np.minimum(np.rint(times / plan.dt), plan.steps)
        slots = np.rint(steps / plan.save_every)
        slots = np.where(steps >= plan.steps, (plan.steps + plan.save_every - 1) // plan.save_every, slots)
    return slots.astype(np.int64)


_NO_TABLE = np.zeros(HEADER)
_NO_TABLE.setflags(write=False)


def _emission_table(bundle):
    """The stochastic model's table, or a stand-in of the same type for the other models."""
    if int(bundle.plan_row[PL_DAMPING]) != QUANTUM_STOCHASTIC:
        return _NO_TABLE
    from .radiation.stochastic import table

    return table()


class _PhotonSink:
    """Photon buffers for one kernel call per chunk, and the rows collected so far (block order)."""

    def __init__(self, bundle, limit=None):
        self.active = int(bundle.plan_row[PL_DAMPING]) == QUANTUM_STOCHASTIC
        self.blocks = max(1, (bundle.count + 63) // 64)
        self.remaining = MAX_PHOTONS if limit is None else int(limit)
        self.rows = []
        self.dropped = 0
        self.dropped_energy = 0.0

    def buffers(self):
        """(photons (blocks, capacity, PHOTON_FIELDS), counters (blocks, PHOTON_COUNTERS)) for one call.

        Each block gets twice its share of the photons still allowed (all of them for one
        block): blocks fill at similar rates, so the cap is what limits, not the split.
        """
        capacity = 0
        if self.active and self.remaining > 0:
            capacity = self.remaining if self.blocks == 1 else min(self.remaining,
                                                                   -(-2 * self.remaining // self.blocks))
        return np.empty((self.blocks, capacity, PHOTON_FIELDS)), np.zeros((self.blocks, PHOTON_COUNTERS))

    def collect(self, photons, counters):
        for b in range(self.blocks):
            n = int(counters[b, PC_RECORDED])
            take = min(n, self.remaining)
            if take:
                self.rows.append(photons[b, :take].copy())
            self.remaining -= take
            self.dropped += int(counters[b, PC_DROPPED]) + (n - take)
            self.dropped_energy += float(counters[b, PC_DROPPED_ENERGY])
            if n > take:
                self.dropped_energy += float(photons[b, take:n, 7].sum())

    def table(self, bundle):
        if not self.active:
            return None
        rows = np.concatenate(self.rows) if self.rows else np.zeros((0, PHOTON_FIELDS))
        return PhotonTable.from_rows(rows, bundle.weight, min_energy=bundle.plan_row[PL_PHOTON_MIN],
                                     dropped=self.dropped, dropped_energy=self.dropped_energy)


def run_bundle(bundle, scenario, progress=None, cancel=None, store_all=True, photon_sink=None):
    """Run a compiled Bundle to the end (or until cancelled); photons of the stochastic
    model go to ``photon_sink`` (a ``_PhotonSink``) when given.

    Returns (arrays dict of (n_saved, N[, 3]) or None, statistics array (n_saved, NSTAT),
    final state (STATE_SIZE, N), wall time s, kernel load time s, snapshots list of
    (saved-state index, x (N, 3) m, u (N, 3))).
    """
    state = np.array(bundle.state)  # writable copy; the Bundle stays read-only
    sink = photon_sink or _PhotonSink(bundle)
    qtab = _emission_table(bundle)
    n = bundle.count
    single = n == 1
    table = bundle.table
    sp, pl = bundle.species, bundle.plan_row
    grid = pl[PL_GRID] != 0.0
    interval = pl[PL_INTERVAL]
    duration = scenario.run.duration
    pieces, stat_pieces = [], []
    load_start = time.perf_counter()
    if single:
        run_single(*table, sp, pl, state.copy(), 0, 0, *_buffers(1, 1).values(), qtab,
                   *_PhotonSink(bundle, 0).buffers())
    else:
        run_blocks(*table, sp, pl, state.copy(), bundle.weight, 0, math.inf, 0, True,
                   *_buffers(1, n).values(), np.zeros((max(1, (n + 63) // 64), 1, NSTAT)),
                   np.zeros(0, dtype=np.int64), np.zeros((0, n, 3)), np.zeros((0, n, 3)), qtab,
                   *_PhotonSink(bundle, 0).buffers())
    load_time = time.perf_counter() - load_start
    start = time.perf_counter()
    slot_base = 0
    if grid:
        windows = max(1, round(CHUNK_STEPS / (n * bundle.plan.save_every)))
        t_stop = 0.0
    steps, capacity = _chunk_plan(bundle)
    snap_slots = snapshot_slots(scenario, bundle)
    snap_x = np.full((len(snap_slots), n, 3), np.nan)
    snap_u = np.full((len(snap_slots), n, 3), np.nan)
    while True:
        if grid:
            t_stop = t_stop + windows * interval
            last = t_stop >= duration * (1.0 - 1e-12)
            capacity = windows + 2
            call_steps, call_stop = int(pl[PL_LAST]), (math.inf if last else t_stop)
        else:
            call_steps, call_stop = steps, math.inf
        buffers = _buffers(capacity, n) if (store_all or single) else _buffers(1, 1)
        blocks = (n + 63) // 64
        partials = np.zeros((blocks, capacity, NSTAT))
        photons, counters = sink.buffers()
        if single:
            run_single(*table, sp, pl, state, call_steps, slot_base, *buffers.values(), qtab, photons, counters)
        else:
            run_blocks(*table, sp, pl, state, bundle.weight, call_steps, call_stop, slot_base, store_all,
                       *buffers.values(), partials, snap_slots, snap_x, snap_u, qtab, photons, counters)
        sink.collect(photons, counters)
        saved = int(np.max(state[SAVED])) - slot_base
        if store_all or single:
            pieces.append({name: a[:saved] for name, a in buffers.items()})
        if not single:
            stats = np.zeros((saved, NSTAT))
            reduce_partials(partials, saved, stats)
            stat_pieces.append(stats)
        slot_base += saved
        if progress is not None:
            progress(_fraction_done(state, bundle, duration))
        if not np.any(state[STATUS] == RUNNING):
            break
        if _is_cancelled(cancel):
            break
    wall = time.perf_counter() - start
    arrays = None
    if pieces:
        arrays = {name: np.concatenate([p[name] for p in pieces]) for name in ARRAY_NAMES}
    stats = np.concatenate(stat_pieces) if stat_pieces else np.zeros((0, NSTAT))
    snapshots = [(int(k), snap_x[m], snap_u[m]) for m, k in enumerate(snap_slots) if k < slot_base]
    return arrays, stats, state, wall, load_time, snapshots


def _meta(scenario, bundle, state, stop, wall, load_time):
    plan = bundle.plan
    steps = int(np.sum(state[STEP]))
    return {
        "steps": int(np.max(state[STEP])) if bundle.count == 1 else steps,
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
        "particles": bundle.count,
    }


def track(scenario, progress=None, cancel=None):
    """Integrate a scenario: a ``Result`` for one particle, a ``BeamResult`` for a beam (SI units).

    Parameters
    ----------
    scenario : Scenario
    progress : callable(fraction: float), optional
        Called between chunks with the fraction done (of the slowest particle).
    cancel : threading.Event or callable() -> bool, optional
        Checked between chunks; a cancelled run returns the states computed so far
        with ``meta["complete"] = False`` and ``meta["stop_reason"] = "cancelled"``.
    """
    bundle = compile_scenario(scenario)
    if getattr(scenario, "beam", None) is not None:
        return _track_beam(scenario, bundle, progress, cancel)
    sink = _PhotonSink(bundle)
    arrays, _, state, wall, load_time, _ = run_bundle(bundle, scenario, progress, cancel, photon_sink=sink)
    stop, lost = _stop_reason(scenario, bundle, state)
    detail = ""
    if lost[0] == LOST_DOMAIN:
        detail = f"{outside_reason(scenario, state[X:X + 3, 0])} (run stopped, last good state kept)"
    one = {name: (a[:, 0] if a.ndim == 2 else a[:, 0, :]) for name, a in arrays.items()}
    if len(one["t"]) == 0:
        one = _initial_record(scenario, bundle)   # failed on the first step: keep the valid start
    meta = _meta(scenario, bundle, state, stop, wall, load_time)
    if detail:
        meta["stop_detail"] = detail
    result = Result(scenario=scenario, meta=meta, **{name: np.ascontiguousarray(one[name]) for name in ARRAY_NAMES})
    result.photons = sink.table(bundle)
    _attach_warnings(result)
    return result


def _track_beam(scenario, bundle, progress, cancel):
    from .beam_result import BeamResult

    store_all = getattr(scenario.run, "save", "all") == "all"
    sink = _PhotonSink(bundle)
    arrays, stats, state, wall, load_time, snaps = run_bundle(bundle, scenario, progress, cancel, store_all, sink)
    stop, lost = _stop_reason(scenario, bundle, state)
    meta = _meta(scenario, bundle, state, stop, wall, load_time)
    meta["lost"] = {LOST_REASONS[c]: int(np.sum(lost == c)) for c in LOST_REASONS if np.any(lost == c)}
    arrays = arrays or {}
    t = stats[:, 0].copy()
    weight = np.array(bundle.weight)
    snapshots = [(float(t[k]), x, u, weight) for k, x, u in snaps if k < len(t)]
    result = BeamResult(scenario=scenario, meta=meta, t=t, lost=lost,
                        lost_time=np.where(lost != LOST_NONE, state[T], np.inf), weight=weight,
                        stats=statistics_from_moments(stats), snapshots=snapshots,
                        **{name: arrays.get(name) for name in ARRAY_NAMES if name != "t"})
    from .beam_validity import check_beam

    result.photons = sink.table(bundle)
    result.warnings = check_beam(result) + photon_warnings(result.photons)
    return result


def statistics_from_moments(stats):
    """Beam statistics per saved time from reduced moments (``kernel`` S_* slots).

    Keys: t (s), mean_gamma, rms_gamma_spread (relative), emittance_x, emittance_y
    (normalised rms, m rad: sqrt(<dx^2><du^2> - <dx du>^2) with u = gamma beta),
    radiated_energy (J, summed with weights), mean_chi, max_chi, lost (count).
    """
    from .kernel import (S_CHI, S_MAXCHI, S_MG, S_MGG, S_MISSING, S_MUXUX, S_MUYUY, S_MXUX, S_MXX, S_MYUY,
                         S_MYY, S_RAD, S_T, S_W)

    w = stats[:, S_W]
    with np.errstate(invalid="ignore", divide="ignore"):
        inv_w = np.where(w > 0, 1.0 / w, np.nan)
        ex = stats[:, S_MXX] * stats[:, S_MUXUX] * inv_w**2 - (stats[:, S_MXUX] * inv_w) ** 2
        ey = stats[:, S_MYY] * stats[:, S_MUYUY] * inv_w**2 - (stats[:, S_MYUY] * inv_w) ** 2
        return {
            "t": stats[:, S_T].copy(),
            "mean_gamma": np.where(w > 0, stats[:, S_MG], np.nan),
            "rms_gamma_spread": np.sqrt(stats[:, S_MGG] * inv_w) / stats[:, S_MG],
            "emittance_x": np.sqrt(np.maximum(ex, 0.0)),
            "emittance_y": np.sqrt(np.maximum(ey, 0.0)),
            "radiated_energy": stats[:, S_RAD].copy(),
            "mean_chi": stats[:, S_CHI] * inv_w,
            "max_chi": stats[:, S_MAXCHI].copy(),
            "lost": stats[:, S_MISSING].astype(np.int64),
        }


def _attach_warnings(result):
    """Validity checks after every run (tracker.validity), and the photon cap."""
    from .validity import check_result

    result.warnings = check_result(result) + photon_warnings(getattr(result, "photons", None))


def photon_warnings(photons):
    """'photons' warning when photons above photon_min_energy were not kept (the MAX_PHOTONS cap)."""
    if photons is None or photons.dropped == 0:
        return []
    return [{"kind": "photons", "time": float(photons.t[-1]) if len(photons) else 0.0,
             "message": (f"{photons.dropped} photons above photon_min_energy were not recorded: the run keeps at most "
                         f"{MAX_PHOTONS} photons ({MAX_PHOTONS * 80 / 1e6:.0f} MB). Their energy "
                         f"({photons.dropped_energy:.4g} J) is still in radiated_energy. Raise run.photon_min_energy "
                         "or shorten the run to record them all.")}]


def _initial_record(scenario, bundle):
    """Saved-state arrays holding only the validated initial state (power from the fields there)."""
    from .radiation.power import chi_parameter, transverse_force_squared

    x0, u0 = bundle.x0[0], bundle.u0[0]
    gamma0 = math.sqrt(1.0 + float(u0 @ u0))
    e0, b0 = scenario.fields_at(x0[None, :], 0.0)
    f2 = transverse_force_squared(*(u0 / gamma0), *e0[0], *b0[0])
    sp = bundle.species
    return {"t": np.zeros(1), "x": x0[None, :].copy(), "u": u0[None, :].copy(),
            "gamma": np.array([gamma0]), "power": np.array([sp[2] * gamma0**2 * f2]),
            "radiated_energy": np.zeros(1), "field_work": np.zeros(1),
            "chi": np.array([chi_parameter(sp[3], gamma0, f2)]), "dt": np.array([bundle.plan.dt])}


def damped_and_undamped(scenario):
    """(damped, undamped) scenarios: radiation reaction on (the scenario's model, or
    Landau-Lifshitz if it had none) and off."""
    model = scenario.run.radiation_reaction
    damped = scenario if model != "none" else scenario.with_run(radiation_reaction="landau-lifshitz")
    return damped, scenario.with_run(radiation_reaction="none")


def compare(scenario, models=None, progress=None, cancel=None):
    """Run the scenario with each radiation-reaction model, side by side on up to two threads.

    Parameters
    ----------
    scenario : Scenario
    models : sequence of str, optional
        Names from ``tracker.radiation.reaction.MODELS`` (any order; run and listed in
        ``MODEL_ORDER``). Default: the damped/undamped pair -- the scenario's model (or
        ``landau-lifshitz`` when it has none) and ``none``.
    progress : callable(fraction), optional -- mean fraction done of the runs
    cancel : threading.Event or callable, optional -- stops every run

    Returns
    -------
    Comparison -- ``.results[model]``; ``.damped``/``.undamped`` for the default pair

    Raises
    ------
    ScenarioError
        Before any run starts, when the runs together would not fit in memory
        (``plan.refuse_if_comparison_too_large``: every result is kept until the end).
    """
    from .errors import ScenarioError
    from .plan import refuse_if_comparison_too_large

    if models is None:
        refuse_if_comparison_too_large(scenario, 2)
        damped, undamped = damped_and_undamped(scenario)
        runs = [damped, undamped]
    else:
        names = list(dict.fromkeys(models))
        unknown = [m for m in names if m not in RR_MODELS]
        if unknown or not names:
            raise ScenarioError("models", f"must name models from {', '.join(MODEL_ORDER)}, not {list(models)!r}.")
        names.sort(key=MODEL_ORDER.index)
        refuse_if_comparison_too_large(scenario, len(names), models=names)
        runs = [scenario if scenario.run.radiation_reaction == m else scenario.with_run(radiation_reaction=m)
                for m in names]
    fractions = [0.0] * len(runs)

    def reporter(i):
        if progress is None:
            return None

        def report(fraction):
            fractions[i] = fraction
            progress(sum(fractions) / len(fractions))

        return report

    with ThreadPoolExecutor(max_workers=COMPARE_WORKERS) as pool:
        jobs = [pool.submit(track, s, reporter(i), cancel) for i, s in enumerate(runs)]
        results = [job.result() for job in jobs]
    if models is None:
        return Comparison(damped=results[0], undamped=results[1])
    by_model = {r.scenario.run.radiation_reaction: r for r in results}
    damped_model = scenario.run.radiation_reaction if scenario.run.radiation_reaction != "none" else "landau-lifshitz"
    return Comparison(damped=by_model.get(damped_model), undamped=by_model.get("none"), results=by_model)
