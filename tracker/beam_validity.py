"""Validity checks on a beam: the single-particle checks of ``tracker.validity``, counted.

``check_beam(result)`` returns at most one warning per kind for a ``BeamResult``:
``dict(kind, message, time, particles, worst_particle)`` where ``particles`` is the
number of particles that raised that kind (None when a statistics-only run cannot
tell) and ``worst_particle`` the index whose message is quoted (None if none).

With ``run.save = "all"`` every check runs on every particle at once (NumPy over the
(n_saved, N) arrays and one compiled time-scale call over all saved states), with the
same thresholds and the same states as ``check_result(result.particle(i))`` would use:
particle i raises kind K here exactly when its own ``Result`` would. The message
quoted is the single-particle message of the worst particle, so its advice applies
unchanged.

With ``run.save = "statistics"`` only what the statistics hold can be checked, and
each message says which part:

- ``quantum``: the beam's largest chi per saved time (the number of particles above
  ``CHI_QUANTUM`` is not known);
- ``radiation-dominated``: in a laser, R_c = alpha a0 max chi (count not known); the
  static-field criterion needs each particle's power and is not checked;
- ``resolution``: each particle's fastest time scale at the start against the planned
  step (exact count at t = 0, not later);
- ``nonfinite`` and ``domain``: the particles the engine stopped (exact counts), plus
  the ``domain`` limits at the ``run.snapshots`` times when there are snapshots.
"""

import math

import numpy as np

from . import constants as k
from .timescales import describe
from .validity import (CHI_QUANTUM, DOMAIN_CHECKS, MAX_LOSS_PER_STEP, MIN_STEPS_PER_PERIOD, R_C_DOMINATED,
                       LOSS_PER_PERIOD_DOMINATED, check_result, laser_rows, species_a0)

KINDS = ("resolution", "quantum", "radiation-dominated", "domain", "nonfinite")


def beam_warning(kind, message, time, particles, worst=None):
    """One beam warning record (see the module docstring)."""
    return {"kind": kind, "message": message, "time": float(time),
            "particles": None if particles is None else int(particles),
            "worst_particle": None if worst is None else int(worst)}


def check_beam(result):
    """Validity warnings of a BeamResult, one per kind with its particle count (list of dict)."""
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        if result.has_particles:
            return check_particles(result)
        return check_statistics(result)


# ---------------------------------------------------------------------- every particle saved
def good_states(result):
    """(n_saved, N) bool: the states ``result.particle(i)`` keeps that ``check_result`` uses."""
    t = np.asarray(result.t, dtype=float)
    keep = (t[:, None] <= np.asarray(result.lost_time)[None, :]) | (np.asarray(result.lost)[None, :] == 0)
    keep &= np.all(np.isfinite(result.x), axis=2) & np.all(np.isfinite(result.u), axis=2)
    for a in (result.gamma, result.power, result.chi, result.dt):
        keep &= np.isfinite(a)
    keep &= np.isfinite(t)[:, None]
    return keep


def state_rates(result, good):
    """(omega rad/s (n_saved, N), source codes) of the fastest local time scale at good states (0 elsewhere)."""
    from .timescales import rates

    scenario = result.scenario
    omega = np.zeros(good.shape)
    source = np.zeros(good.shape, dtype=np.int64)
    rows, cols = np.nonzero(good)
    if rows.size:
        w, s = rates(scenario.field_table, scenario.species_charge / scenario.species_mass, 0.0,
                     np.asarray(result.t, dtype=float)[rows], result.x[rows, cols], result.u[rows, cols])
        omega[rows, cols] = w
        source[rows, cols] = s
    return omega, source


def flags_per_kind(result):
    """{kind: (flags (N,) bool, worst particle index or None)} from the saved particle arrays."""
    scenario = result.scenario
    good = good_states(result)
    omega, _ = state_rates(result, good)
    dt = result.dt
    energy = result.gamma * result.rest_energy
    out = {}

    # resolution: steps per local period, and energy removed per step (validity.check_resolution)
    usable = good & (dt > 0) & (omega > 0)
    spp = np.where(usable, 2.0 * math.pi / np.where(usable, omega * dt, 1.0), np.inf)
    phase = np.any(spp < MIN_STEPS_PER_PERIOD, axis=0)
    score = np.min(spp, axis=0)
    loss_flag = np.zeros(result.count, dtype=bool)
    if scenario.run.radiation_reaction != "none":
        ok = good & (dt > 0) & (energy > 0)
        loss = np.where(ok, result.power * dt / np.where(ok, energy, 1.0), 0.0)
        loss_flag = np.any(loss > MAX_LOSS_PER_STEP, axis=0)
    flags = phase | loss_flag
    out["resolution"] = (flags, _worst(flags, np.where(phase, score, np.inf), smallest=True))

    # quantum: peak chi (validity.check_quantum)
    chi = np.where(good, result.chi, -np.inf)
    chi_max = np.max(chi, axis=0) if len(chi) else np.full(result.count, -np.inf)
    flags = chi_max > CHI_QUANTUM
    out["quantum"] = (flags, _worst(flags, chi_max))

    # radiation-dominated (validity.check_radiation_dominated)
    lasers = laser_rows(scenario)
    if lasers:
        a0 = max(species_a0(row[4], scenario) for row in lasers)
        flags = k.alpha * a0 * chi_max >= R_C_DOMINATED
        out["radiation-dominated"] = (flags, _worst(flags, chi_max))
    else:
        ok = good & (omega > 0) & (energy > 0)
        ratio = np.where(ok, result.power * 2.0 * math.pi / np.where(ok, omega * energy, 1.0), 0.0)
        worst_ratio = np.max(ratio, axis=0) if len(ratio) else np.zeros(result.count)
        flags = worst_ratio >= LOSS_PER_PERIOD_DOMINATED
        out["radiation-dominated"] = (flags, _worst(flags, worst_ratio))

    # domain: every field model's range (validity.check_domain), x0 = each particle's first state
    n_saved, n = good.shape
    flags = np.zeros(n, dtype=bool)
    if n_saved:
        x_flat = result.x.reshape(-1, 3)
        x0_flat = np.broadcast_to(result.x[0][None], result.x.shape).reshape(-1, 3)
        for f in scenario.fields:
            check = DOMAIN_CHECKS.get(f.type)
            if check is None:
                continue
            excess = check(f.params, x_flat, x0_flat)[0].reshape(n_saved, n)
            flags |= np.any(good & (excess > 1.0), axis=0)
    out["domain"] = (flags, _worst(flags, flags.astype(float)))
    return out


def _worst(flags, score, smallest=False):
    """Index of the flagged particle with the largest (or smallest) score, or None."""
    if not np.any(flags):
        return None
    pick = np.where(flags, score, np.inf if smallest else -np.inf)
    return int(np.argmin(pick) if smallest else np.argmax(pick))


def _counted(kind, count, total, worst, single):
    """A beam warning quoting the worst particle's own warnings of this kind."""
    share = f"{count:,} of {total:,} particles ({count / total:.1%})"
    if single:
        text = " | ".join(w["message"] for w in single)
        return beam_warning(kind, f"{share} raised this; worst, particle #{worst}: {text}", single[0]["time"],
                            count, worst)
    return beam_warning(kind, f"{share} raised this (worst: particle #{worst}).", 0.0, count, worst)


def check_particles(result):
    """Beam warnings from every particle's saved states (``run.save = "all"``).

    A particle counts once per kind, whether its saved states or its stop code raised it.
    """
    stopped = {w["kind"]: w for w in nonfinite_and_lost(result)}
    for w in stopped.values():
        w.pop("_who", None)
    lost = np.asarray(result.lost)
    total = result.count
    found = []
    per_kind = flags_per_kind(result)
    per_kind["nonfinite"] = (np.zeros(total, dtype=bool), None)
    for kind, (flags, worst) in per_kind.items():
        by_code = np.isin(lost, [code for code, (k_, _) in stopped_kinds().items() if k_ == kind])
        count = int(np.count_nonzero(flags | by_code))
        if not count:
            continue
        parts = []
        if worst is not None:
            single = [w for w in check_result(result.particle(worst)) if w["kind"] == kind]
            parts.append(_counted(kind, int(np.count_nonzero(flags)), total, worst, single))
        if kind in stopped:
            parts.append(stopped[kind])
        warning = dict(parts[0])
        warning["message"] = " | ".join(p["message"] for p in parts)
        warning["particles"] = count
        found.append(warning)
    return found


def stopped_kinds():
    """{engine stop code: (warning kind, what happened)} for particles the engine stopped."""
    from .engine import LOST_DOMAIN, LOST_KICK, LOST_NONFINITE

    return {
        LOST_NONFINITE: ("nonfinite", "stopped because their next state was not finite (NaN or Inf); their states "
                                      "up to there are kept and they are left out of the statistics from then on. "
                                      "Usual causes: a singular field, a field far beyond any physical value, or a "
                                      "step so coarse that the momentum overflows"),
        LOST_KICK: ("resolution", "stopped because one radiation kick would have changed |u| by more than the "
                                  "split kick allows: use a finer step"),
        LOST_DOMAIN: ("domain", "stopped where a field model has no values (outside its domain); they are kept "
                                "as lost"),
    }


def nonfinite_and_lost(result):
    """Warnings for the particles the engine stopped (NaN/Inf, too large a kick, outside a model)."""
    found = []
    total = result.count
    lost = np.asarray(result.lost)
    for code, (kind, what) in stopped_kinds().items():
        who = np.flatnonzero(lost == code)
        if who.size:
            first = int(who[np.argmin(np.asarray(result.lost_time)[who])])
            found.append(beam_warning(kind, f"{who.size:,} of {total:,} particles {what} (first: particle "
                                            f"#{first} at t = {float(result.lost_time[first]):.4g} s).",
                                      result.lost_time[first], who.size, first))
            found[-1]["_who"] = lost == code
    return found


def _merge(found):
    """One warning per kind: particle sets of the same kind are joined (``_who`` masks), so a
    particle counts once; a part with an unknown count makes the count unknown."""
    by_kind = {}
    for w in found:
        if w["kind"] not in by_kind:
            by_kind[w["kind"]] = dict(w)
            continue
        merged = by_kind[w["kind"]]
        merged["message"] += " | " + w["message"]
        if merged.get("_who") is None or w.get("_who") is None:
            merged["_who"] = None
        else:
            merged["_who"] = merged["_who"] | w["_who"]
    out = []
    for w in by_kind.values():
        who = w.pop("_who", None)
        w["particles"] = None if who is None else int(np.count_nonzero(who))
        out.append(w)
    return out


# ---------------------------------------------------------------------- statistics only
def check_statistics(result):
    """Beam warnings from the statistics, the start and the snapshots (``run.save = "statistics"``)."""
    scenario = result.scenario
    found = nonfinite_and_lost(result)
    stats = result.stats
    max_chi = np.asarray(stats.get("max_chi", ()), dtype=float)
    t = np.asarray(stats.get("t", result.t), dtype=float)
    finite = np.isfinite(max_chi)
    if np.any(finite):
        i = int(np.nanargmax(np.where(finite, max_chi, -np.inf)))
        chi_peak = float(max_chi[i])
        if chi_peak > CHI_QUANTUM:
            found.append(beam_warning(
                "quantum",
                f"the beam's largest chi peaks at {chi_peak:.3g} at t = {t[i]:.4g} s (> {CHI_QUANTUM}): classical "
                "emission overestimates the power there and emission is stochastic, which this tool does not model "
                "(use radiation_reaction = \"landau-lifshitz-quantum\" for the mean loss). How many particles "
                "exceed the limit is not known: run.save = \"statistics\" keeps only the beam's largest chi.",
                t[i], None) | {"_who": None})
        lasers = laser_rows(scenario)
        if lasers:
            a0 = max(species_a0(row[4], scenario) for row in lasers)
            r_c = k.alpha * a0 * chi_peak
            if r_c >= R_C_DOMINATED:
                found.append(beam_warning(
                    "radiation-dominated",
                    f"R_c = alpha a0 chi = {r_c:.3g} with the beam's largest chi at t = {t[i]:.4g} s (a0 = {a0:.3g}): "
                    "the radiation-dominated regime (Di Piazza et al., Rev. Mod. Phys. 84, 1177 (2012)); results "
                    "depend on the damping model and its resolution. How many particles reach it is not known "
                    "from statistics only.", t[i], None) | {"_who": None})
    found += start_resolution(result)
    found += snapshot_domain(result)
    return _merge(found)


def start_resolution(result):
    """'resolution' from each particle's fastest time scale at t = 0 and the planned step (fixed steps)."""
    from .plan import initial_rates

    scenario = result.scenario
    dt = float(result.meta.get("dt") or 0.0)
    if scenario.run.adaptive or not dt > 0:
        return []
    omega, source = initial_rates(scenario)
    usable = np.isfinite(omega) & (omega > 0)
    if not np.any(usable):
        return []
    spp = np.where(usable, 2.0 * math.pi / np.where(usable, omega * dt, 1.0), np.inf)
    flags = spp < MIN_STEPS_PER_PERIOD
    if not np.any(flags):
        return []
    worst = int(np.argmin(spp))
    return [beam_warning(
        "resolution",
        f"{int(flags.sum()):,} of {result.count:,} particles start with their "
        f"{describe(int(source[worst]), scenario.fields)} resolved by fewer than {MIN_STEPS_PER_PERIOD:.0f} steps "
        f"per period (worst: particle #{worst}, {spp[worst]:.3g}); raise run.steps_per_period or lower run.dt. "
        "Checked at the start only: run.save = \"statistics\" keeps no per-particle states.",
        0.0, int(flags.sum()), worst) | {"_who": flags}]


def snapshot_domain(result):
    """'domain' at the snapshot times (positions are known there only)."""
    scenario = result.scenario
    if not result.snapshots:
        return []
    x0 = np.asarray(scenario.initial_particles()[0], dtype=float)
    flags = np.zeros(result.count, dtype=bool)
    first_time = None
    for time, x, _u, _w in result.snapshots:
        x = np.asarray(x, dtype=float)
        finite = np.all(np.isfinite(x), axis=1)
        for f in scenario.fields:
            check = DOMAIN_CHECKS.get(f.type)
            if check is None:
                continue
            outside = finite & (check(f.params, x, x0)[0] > 1.0)
            if np.any(outside) and first_time is None:
                first_time = time
            flags |= outside
    if not np.any(flags):
        return []
    return [beam_warning(
        "domain",
        f"{int(flags.sum()):,} of {result.count:,} particles are outside a field model's range at a snapshot "
        f"(first at t = {first_time:.4g} s); the orbit after that uses the field outside its range: treat it as "
        "qualitative. Checked at the run.snapshots times only (run.save = \"statistics\").",
        first_time, int(flags.sum()), int(np.argmax(flags))) | {"_who": flags}]
