"""``radorbit run`` and ``radorbit check`` on a ``[beam]`` scenario (called from ``tracker.cli``).

``run_beam(args, scenario)``: tracks the beam (or damped and undamped with ``--compare``, or the
models of ``--models``),
prints the beam summary and the warnings counted over particles, writes ``-o`` (BeamResult
HDF5, or the statistics table as CSV) and ``--snapshots`` (openPMD 1.1.0 HDF5 of the
``run.snapshots`` dumps, loadable as a ``[beam] file``).
``check_beam(args, scenario)``: the plan with its memory (count, save, snapshots, state,
peak, the limit) and the regime estimates of the centroid.
"""

from pathlib import Path

import numpy as np

from .errors import ScenarioError


def _span(pair, fmt):
    start, end = pair
    return f"{fmt(start)} -> {fmt(end)}"


def lost_text(result):
    """'0' or 'n (reason: m, ...)' for the particles the run stopped."""
    lost = int(np.count_nonzero(result.lost))
    if not lost:
        return "0"
    reasons = result.meta.get("lost", {})
    return f"{lost:,} (" + "; ".join(f"{reason}: {n:,}" for reason, n in reasons.items()) + ")"


def warnings_text(result):
    """'none' or 'kind: n particles, ...' (unknown counts said so)."""
    counts = result.warning_counts()
    if not counts:
        return "none"
    return ", ".join(f"{kind}: " + ("count unknown (statistics only)" if n is None else f"{n:,} particles")
                     for kind, n in counts.items())


def beam_summary_rows(result):
    """[(label, text)] of the headline numbers of a BeamResult (SI; energies also in eV)."""
    from .cli import _fmt_energy

    s = result.summary()
    weight = float(np.sum(result.weight))
    particles = f"{s['particles']:,}" + ("" if weight == s["particles"] else f" (weight sum {weight:.4g})")
    return [
        ("particles", particles),
        ("lost", lost_text(result)),
        ("mean gamma", _span(s["mean_gamma"], lambda v: f"{v:.6g}")),
        ("rms gamma spread", _span(s["rms_gamma_spread"], lambda v: f"{v:.4%}")),
        ("emittance x (norm. rms)", _span(s["emittance_x"], lambda v: f"{v:.4g}") + " m rad"),
        ("emittance y (norm. rms)", _span(s["emittance_y"], lambda v: f"{v:.4g}") + " m rad"),
        ("energy radiated", _fmt_energy(s["energy_radiated"])),
        ("fraction lost", f"{s['fraction_lost']:.4g}"),
        ("peak chi", f"{s['peak_chi']:.4g}"),
        ("warnings", warnings_text(result)),
        ("wall time", f"{s['wall_time']:.3f} s"),
        ("particle-steps/s", f"{s['particle_steps_per_second']:.3g}"),
        ("stop reason", result.meta.get("stop_reason", "")),
    ]


def _paths(path, names):
    """{name: path}: the path itself for one result, path-<name> for a comparison."""
    out = Path(path)
    if len(names) == 1:
        return {names[0]: out}
    return {name: out.with_name(f"{out.stem}-{name}{out.suffix}") for name in names}


def _write_snapshots(result, path):
    result.snapshots_to_openpmd(path)
    print(f"wrote {path} (openPMD, {len(result.snapshots)} snapshot(s) of {result.count:,} particles)")
    return True


def run_beam(args, scenario):
    """Track a beam scenario from the command line; returns the exit status."""
    from .cli import EXIT_CANCELLED, _InterruptToCancel, _progress_bar, _write, print_photons, print_table, run_models

    if getattr(args, "snapshots", None) and not scenario.run.snapshots:
        raise ScenarioError("--snapshots", "the scenario asks for no snapshots: add run.snapshots, e.g. "
                                           "snapshots = [\"0 fs\", \"100 fs\"], to dump every particle at those times.")
    plan = scenario.plan()
    label = f"{Path(args.scenario).stem} ({scenario.particle_count:,} particles x {plan.steps:,} steps)"
    bar, update = _progress_bar(label)
    try:
        with _InterruptToCancel() as cancel:
            results = run_models(scenario, args, update, cancel)
    finally:
        bar.close()
    first = next(iter(results.values()))
    tables = {name: dict(beam_summary_rows(r)) for name, r in results.items()}
    rows = [[label, *[tables[name][label] for name in results]] for label, _ in beam_summary_rows(first)]
    print(f"{scenario.title or Path(args.scenario).stem}")
    print_table(["", *results], rows)
    for name, r in results.items():
        for w in r.warnings:
            count = w.get("particles")
            who = "count unknown" if count is None else f"{count:,} particles"
            print(f"warning ({name}, {w['kind']}, {who}): {w['message']}")
    print_photons(results)
    ok = True
    if args.output:
        for name, path in _paths(args.output, list(results)).items():
            ok = _write(results[name], path) and ok
    if getattr(args, "snapshots", None):
        for name, path in _paths(args.snapshots, list(results)).items():
            ok = _write_snapshots(results[name], path) and ok
    if any(r.meta.get("stop_reason") == "cancelled" for r in results.values()):
        return EXIT_CANCELLED
    return 0 if ok else 1


def beam_rows(scenario):
    """[(label, text)] describing how the beam's particles are made."""
    beam = scenario.beam
    p = scenario.particle
    if beam.file:
        made = f"from {beam.file}" + (f" (iteration {beam.iteration})" if beam.iteration is not None else "")
        return [("beam", f"{p.species} x {scenario.particle_count:,}, {made}"),
                ("centroid", f"gamma0 = {p.gamma:.6g} (weighted mean)")]
    div = beam.divergence_pair
    size = ", ".join(f"{v:.3g}" for v in beam.size)
    return [
        ("beam", f"{p.species} x {beam.count:,}, sampled ({beam.distribution}, seed {beam.seed})"),
        ("centroid", f"gamma0 = {p.gamma:.6g}"),
        ("spreads", f"energy {beam.energy_spread:.3g} rms (relative); divergence {div[0]:.3g}, {div[1]:.3g} rad rms; "
                    f"size ({size}) m rms"),
    ]


def memory_text(scenario, plan):
    """The memory row of ``check``: kept + state, peak, the limit, and what sets them."""
    from .plan import MEMORY_FRACTION, human_bytes, memory_limit_bytes

    run = scenario.run
    save = run.save
    what = ("every particle's saved states" if save == "all" else
            "statistics only (independent of beam.count)")
    snaps = f", {len(run.snapshots)} snapshot(s)" if run.snapshots else ""
    return (f"{human_bytes(plan.memory_bytes)} with beam.count = {scenario.particle_count:,} and run.save = "
            f"{save!r} ({what}{snaps}; particle state {human_bytes(plan.state_bytes)}); peak "
            f"{human_bytes(plan.peak_bytes)} of at most {human_bytes(memory_limit_bytes())} "
            f"({MEMORY_FRACTION:.0%} of this machine's memory) for one run")


def check_beam(args, scenario):
    """Print the plan and regime of a beam scenario; returns the exit status 0."""
    from .cli import comparison_rows, print_table, requested_models, run_count
    from .regime import regime_rows

    plan = scenario.plan()
    side_by_side = comparison_rows(scenario, plan, run_count(args), requested_models(args))
    run = scenario.run
    rows = [["title", scenario.title or "-"], *[list(r) for r in beam_rows(scenario)],
            ["fields", ", ".join(f.type for f in scenario.fields) or "none"],
            ["pusher / damping", f"{run.pusher} / {run.radiation_reaction}"],
            ["dt", f"{plan.dt:.6g} s" + (" (first step; adaptive, per particle)" if plan.adaptive else "")],
            ["steps", f"{plan.steps:,} per particle, {plan.steps * scenario.particle_count:,} particle-steps"],
            ["saved states", f"{plan.saved_states:,} (every {plan.save_every})"],
            ["snapshots", ", ".join(f"{t:.4g} s" for t in run.snapshots) or "none"],
            ["memory estimate", memory_text(scenario, plan)],
            *[list(r) for r in side_by_side],
            ["fastest time scale", f"{plan.period:.6g} s ({plan.period_source})" if plan.period else "none found"],
            ["resolution", f"{plan.steps_per_period:.4g} steps per period" if plan.steps_per_period else "-"],
            ["regime estimates", "for the centroid particle; particles away from it differ (chi and the loss grow "
                                 "with gamma)"]]
    rows += [[f"{label} (centroid)", text] for label, text in regime_rows(scenario)]
    print_table(["check", "value"], rows)
    print("scenario is valid")
    return 0
