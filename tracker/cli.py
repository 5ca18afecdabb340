"""The ``radorbit`` command: run, check, fieldmap, lab, spectrum, sweep. Thin wrappers over the Python API."""

import argparse
import sys
from pathlib import Path

from . import constants
from .errors import ScenarioError
from .stops import StopReason

EXIT_FAILED = 1       #: an output could not be written (the result was kept in the temp folder)
EXIT_BAD_INPUT = 2
EXIT_NOT_COMPLETE = 3  #: the run did not end as planned, or a check found it wrong (see its warnings)
EXIT_CANCELLED = 130  #: as a shell reports Ctrl-C; the partial result was still printed and written

#: eV multiples for the summary table; one is chosen per table so that columns line up
ENERGY_PREFIXES = (("TeV", 1e12), ("GeV", 1e9), ("MeV", 1e6), ("keV", 1e3), ("eV", 1.0), ("meV", 1e-3))
#: output formats by file extension (anything else is refused before the run starts)
OUTPUT_FORMATS = {".h5": "hdf5", ".hdf5": "hdf5", ".csv": "csv"}
#: two runs "end at the same time" when their end times agree to this fraction of the duration
SAME_END = 1e-9


def energy_prefix(joules_values):
    """(label, eV per unit) of one eV multiple for all the energies of a table (J)."""
    from .constants import e

    finite = [abs(v) / e for v in joules_values if v is not None and v == v and abs(v) != float("inf")]
    largest = max(finite, default=0.0)
    for unit, scale in ENERGY_PREFIXES:
        if largest >= scale:
            return unit, scale
    return "eV", 1.0


def _fmt_energy(joules, prefix=None):
    """An energy (J) in the eV multiple ``prefix`` (see ``energy_prefix``; default: its own)."""
    from .constants import e

    unit, scale = prefix or energy_prefix([joules])
    return f"{joules / e / scale:.6g} {unit}"


def _fmt_time(seconds):
    for unit, scale in (("s", 1.0), ("ms", 1e-3), ("µs", 1e-6), ("ns", 1e-9), ("ps", 1e-12), ("fs", 1e-15)):
        if abs(seconds) >= scale:
            return f"{seconds / scale:.6g} {unit}"
    return f"{seconds:.4g} s"


ENERGY_KEYS = ("final_energy", "initial_kinetic_energy", "final_kinetic_energy", "energy_radiated")


def summary_rows(result, prefix=None):
    """[(label, text)] of the headline numbers of a Result.

    ``prefix`` is the (label, eV per unit) of the energy column (``energy_prefix``); by
    default the one suited to this result alone.
    """
    s = result.summary()
    prefix = prefix or energy_prefix([s[k] for k in ENERGY_KEYS])
    damped = result.scenario.run.radiation_reaction != "none"
    radiated = _fmt_energy(s["energy_radiated"], prefix)
    if not damped:
        radiated += " (would radiate; damping off, not removed)"
    steps = s.get("steps")
    return [
        ("end time", _fmt_time(s["end_time"])),
        ("steps taken", f"{steps:,}" if isinstance(steps, int) else "-"),
        ("total energy γmc² (final)", _fmt_energy(s["final_energy"], prefix)),
        ("kinetic energy (start)", _fmt_energy(s["initial_kinetic_energy"], prefix)),
        ("kinetic energy (final)", _fmt_energy(s["final_kinetic_energy"], prefix)),
        ("energy radiated", radiated),
        ("radiated / initial kinetic energy", f"{s['fraction_lost']:.4g}"),
        ("peak power", f"{s['peak_power']:.4g} W"),
        ("peak chi", f"{s['peak_chi']:.4g}"),
        ("energy balance residual", f"{s['energy_balance_residual']:.2e}"),
        ("wall time", f"{s['wall_time']:.3f} s"),
        ("steps/s", f"{s['steps_per_second']:.3g}"),
        ("status", result.status),
    ]


def until(result, t_end):
    """The saved states of ``result`` up to time ``t_end`` (s), as a Result for the table."""
    import dataclasses

    import numpy as np

    keep = max(1, int(np.searchsorted(result.t, t_end * (1.0 + 1e-12), side="right")))
    arrays = {name: getattr(result, name)[:keep] for name in ("t", "x", "u", "gamma", "power", "radiated_energy",
                                                              "field_work", "chi", "dt")}
    meta = dict(result.meta)
    if not result.scenario.run.adaptive and meta.get("dt"):
        meta["steps"] = int(round(float(arrays["t"][-1]) / meta["dt"]))
    else:
        meta["steps"] = None
    return dataclasses.replace(result, meta=meta, **arrays)


def comparison_table(results, out=None):
    """Print the summary table of one or more results; when they end at different times
    say so first and compare them at their common end time. Returns the results shown."""
    out = out or sys.stdout
    ends = {name: float(r.t[-1]) for name, r in results.items()}
    shown = dict(results)
    if len(results) > 1:
        duration = next(iter(results.values())).scenario.run.duration
        common = min(ends.values())
        if max(ends.values()) - common > SAME_END * duration:
            why = "; ".join(f"{name} ended at {_fmt_time(ends[name])} ({r.status})" for name, r in results.items())
            print(f"NOTE: the runs are not comparable as they stand: {why}. The table compares them at their "
                  f"common end time {_fmt_time(common)}; the files keep every saved state.", file=out)
            shown = {name: until(r, common) for name, r in results.items()}
    prefix = energy_prefix([r.summary()[k] for r in shown.values() for k in ENERGY_KEYS])
    tables = {name: dict(summary_rows(r, prefix)) for name, r in shown.items()}
    labels = [label for label, _ in summary_rows(next(iter(shown.values())), prefix)]
    print_table(["", *shown], [[label, *[tables[name][label] for name in shown]] for label in labels], out=out)
    return shown


def print_table(columns, rows, out=None, wrap=96):
    """Print a plain aligned table: columns = header list, rows = lists of str; the last column wraps."""
    import textwrap

    out = out or sys.stdout
    widths = [max(len(str(r[i])) for r in [columns, *rows]) for i in range(len(columns) - 1)]
    last = min(wrap, max(len(str(r[-1])) for r in [columns, *rows]))
    widths.append(last)
    pad = "  ".join(" " * w for w in widths[:-1]) + "  "

    def emit(cells):
        lines = textwrap.wrap(str(cells[-1]), last) or [""]
        head = "  ".join(str(c).ljust(w) for c, w in zip(cells[:-1], widths)) + "  "
        print((head + lines[0]).rstrip(), file=out)
        for more in lines[1:]:
            print(pad + more, file=out)

    emit(columns)
    print("  ".join("-" * w for w in widths), file=out)
    for r in rows:
        emit(r)


def _progress_bar(total_label):
    from tqdm import tqdm

    bar = tqdm(total=1000, desc=total_label, unit="‰", leave=False, disable=None,
               bar_format="{desc}: {percentage:3.0f}%|{bar}| {elapsed}<{remaining}")

    def update(fraction):
        bar.n = int(1000 * fraction)
        bar.refresh()

    return bar, update


class _InterruptToCancel:
    """First Ctrl-C asks the run to stop after the current chunk (partial result kept and
    marked); a second one interrupts at once."""

    def __init__(self):
        import threading

        self.event = threading.Event()

    def __enter__(self):
        import signal
        import threading

        self._previous = None
        self._previous_term = None
        if threading.current_thread() is threading.main_thread():
            self._previous = signal.signal(signal.SIGINT, self._handle)
            self._previous_term = signal.signal(signal.SIGTERM, self._handle)
        return self.event

    def _handle(self, signum, frame):
        import signal

        print("\nradorbit: stopping after the current chunk (Ctrl-C again to abort)", file=sys.stderr)
        self.event.set()
        signal.signal(signal.SIGINT, signal.default_int_handler)

    def __exit__(self, *exc):
        import signal

        if self._previous is not None:
            signal.signal(signal.SIGINT, self._previous)
        if self._previous_term is not None:
            signal.signal(signal.SIGTERM, self._previous_term)
        return False


def output_format(path, key="--output"):
    """'hdf5' or 'csv' from a file name's extension; anything else is ScenarioError."""
    suffix = Path(path).suffix.lower()
    if suffix not in OUTPUT_FORMATS:
        raise ScenarioError(key, f"{str(path)!r}: unknown extension {suffix or '(none)'!r}; use "
                                 f"{', '.join(OUTPUT_FORMATS)}.")
    return OUTPUT_FORMATS[suffix]


class _DeferSignals:
    """Ctrl-C or SIGTERM while a finished result is being written: finish the write first
    (a half-written file is worth nothing), then exit as interrupted."""

    def __init__(self):
        self.caught = False
        self._previous = {}

    def __enter__(self):
        import signal
        import threading

        if threading.current_thread() is threading.main_thread():
            for sig in (signal.SIGINT, signal.SIGTERM):
                self._previous[sig] = signal.signal(sig, self._handle)
        return self

    def _handle(self, signum, frame):
        if not self.caught:
            print("\nradorbit: finishing the file being written, then stopping", file=sys.stderr)
        self.caught = True

    def __exit__(self, *exc):
        import signal

        for sig, handler in self._previous.items():
            signal.signal(sig, handler)
        return False


def _write(result, path):
    """Write a Result (.csv or .h5) atomically; if that fails, keep it in the temp folder instead."""
    import os
    import tempfile

    writer = result.to_csv if output_format(path) == "csv" else result.to_hdf5
    try:
        writer(path)
        print(f"wrote {path}")
        return True
    except OSError as exc:
        rescue = Path(tempfile.gettempdir()) / f"radorbit-{os.getpid()}-{path.name}"
        writer(rescue)
        print(f"radorbit: error: cannot write {path} ({exc.strerror or exc}); the result is kept in {rescue}",
              file=sys.stderr)
        return False


def cmd_run(args):
    from . import compare, load_scenario, track

    scenario = _with_overrides(load_scenario(args.scenario), args)
    if args.output:
        output_format(args.output)   # refuse an unknown extension before the run, not after it
    if scenario.beam is not None:                      # beams: tracker/beam_cli.py
        from .beam_cli import run_beam

        return run_beam(args, scenario)
    if getattr(args, "snapshots", None):
        raise ScenarioError("--snapshots", "needs a [beam] scenario (one particle has no snapshots).")
    plan = scenario.plan()
    bar, update = _progress_bar(f"{Path(args.scenario).stem} ({plan.steps:,} steps)")
    try:
        with _InterruptToCancel() as cancel:
            results = run_models(scenario, args, update, cancel)
    finally:
        bar.close()
    from .errors import one_line

    print(one_line(scenario.title or Path(args.scenario).stem, 200))
    comparison_table(results)
    for name, r in results.items():
        for w in r.warnings:
            print(f"warning ({name}, {w['kind']}, t = {w['time']:.4g} s): {w['message']}")
    print_photons(results)
    ok = True
    interrupted = False
    if args.output:
        out = Path(args.output)
        with _DeferSignals() as deferred:
            for name, r in results.items():
                path = out if len(results) == 1 else out.with_name(f"{out.stem}-{name}{out.suffix}")
                ok = _write(r, path) and ok
        interrupted = deferred.caught
    if interrupted or any(r.meta.get("stop_reason") == StopReason.CANCELLED for r in results.values()):
        return EXIT_CANCELLED
    if not ok:
        return EXIT_FAILED
    incomplete = [f"{name}: {r.status}" for name, r in results.items() if not r.complete]
    if incomplete:
        print(f"radorbit: the run did not complete as planned ({'; '.join(incomplete)}); see the warnings",
              file=sys.stderr)
        return EXIT_NOT_COMPLETE
    return 0


def requested_models(args):
    """The models of ``--models a,b,...`` in ``MODEL_ORDER`` (None when not given).

    Raises
    ------
    ScenarioError
        For an empty list or an unknown name (the message names ``--models`` and the value).
    """
    from .engine import MODEL_ORDER

    text = getattr(args, "models", None)
    if text is None:
        return None
    names = [n.strip() for n in str(text).split(",") if n.strip()]
    unknown = [n for n in names if n not in MODEL_ORDER]
    if unknown or not names:
        raise ScenarioError("--models", f"must be a comma-separated list of {', '.join(MODEL_ORDER)}, "
                                        f"not {text!r}.")
    return [m for m in MODEL_ORDER if m in names]


def run_count(args):
    """How many runs ``radorbit run`` makes with these options: one per ``--models`` entry, two
    with ``--compare``, else one (ScenarioError when both options are given)."""
    models = requested_models(args)
    if models is not None:
        if getattr(args, "compare", False):
            raise ScenarioError("--models", "give either --compare (the damped/undamped pair) or --models, not both.")
        return len(models)
    return 2 if getattr(args, "compare", False) else 1


def comparison_rows(scenario, plan, runs, models=None):
    """[(label, text)] of the memory of several runs side by side (``plan.comparison_memory``):
    the asked-for number of runs, or with one run what --compare and every model would need.
    Refuses (ScenarioError) when the asked-for runs do not fit, as ``run`` would."""
    from .engine import MODEL_ORDER
    from .plan import comparison_memory, comparison_text, human_bytes, refuse_if_comparison_too_large

    if runs > 1:
        refuse_if_comparison_too_large(scenario, runs, plan, models)
        return [(f"memory, {runs} runs", comparison_text(scenario, plan, runs, models))]
    peaks = {2: human_bytes(comparison_memory(scenario, plan, 2)[1]),
             len(MODEL_ORDER): human_bytes(comparison_memory(scenario, plan, len(MODEL_ORDER), MODEL_ORDER)[1])}
    return [("memory side by side", f"every run's result is kept: --compare (2 runs) peaks at {peaks[2]}, "
                                    f"--models with all {len(MODEL_ORDER)} at {peaks[len(MODEL_ORDER)]} "
                                    "(check --compare or --models A,B,... for the limit)")]


def run_models(scenario, args, progress=None, cancel=None):
    """What ``radorbit run`` tracks, as {column name: result}: every model of ``--models``
    (named by model), the damped/undamped pair of ``--compare``, or the scenario's own model."""
    from . import compare, track

    models = requested_models(args)
    if models is not None:
        run_count(args)   # refuses --compare with --models
        return dict(compare(scenario, models=models, progress=progress, cancel=cancel).results)
    if getattr(args, "compare", False):
        pair = compare(scenario, progress=progress, cancel=cancel)
        return {"damped": pair.damped, "undamped": pair.undamped}
    return {scenario.run.radiation_reaction: track(scenario, progress=progress, cancel=cancel)}


def print_photons(results, out=None):
    """One line per run that recorded photons: how many, their energy, and any not kept."""
    out = out or sys.stdout
    for name, r in results.items():
        photons = getattr(r, "photons", None)
        if photons is None:
            continue
        energy = photons.total_energy()
        line = (f"photons ({name}): {len(photons):,} recorded at or above {photons.min_energy:.4g} J, "
                f"{energy:.6g} J ({energy / constants.e:.6g} eV) in total")
        if photons.dropped:
            line += f"; {photons.dropped:,} more not kept (memory cap; raise photon_min_energy)"
        print(line, file=out)


def _with_overrides(scenario, args):
    """The scenario with [run] entries given on the command line (--pusher, --radiation-reaction, --adaptive)."""
    changes = {}
    if getattr(args, "pusher", None):
        changes["pusher"] = args.pusher
    if getattr(args, "radiation_reaction", None):
        changes["radiation_reaction"] = args.radiation_reaction
    if getattr(args, "adaptive", False):
        changes["adaptive"] = True
    return scenario.with_run(**changes) if changes else scenario


def cmd_check(args):
    from . import load_scenario
    from .plan import human_bytes

    scenario = _with_overrides(load_scenario(args.scenario), args)
    if scenario.beam is not None:                      # beams: tracker/beam_cli.py
        from .beam_cli import check_beam

        return check_beam(args, scenario)
    plan = scenario.plan()
    side_by_side = comparison_rows(scenario, plan, run_count(args), requested_models(args))
    p = scenario.particle
    rows = [
        ["title", scenario.title or "-"],
        ["particle", f"{p.species}, gamma0 = {p.gamma:.6g}"],
        ["fields", ", ".join(f.type for f in scenario.fields) or "none"],
        ["pusher / damping", f"{scenario.run.pusher} / {scenario.run.radiation_reaction}"],
        ["dt", f"{plan.dt:.6g} s"],
        ["steps", f"{plan.steps:,}"],
        ["saved states", f"{plan.saved_states:,} (every {plan.save_every})"],
        ["memory estimate", f"{human_bytes(plan.memory_bytes)} per run (peak {human_bytes(plan.peak_bytes)})"],
        *[list(r) for r in side_by_side],
        ["fastest time scale", f"{plan.period:.6g} s ({plan.period_source})" if plan.period else "none found"],
        ["resolution", f"{plan.steps_per_period:.4g} steps per period" if plan.steps_per_period else "-"],
    ]
    from .regime import regime_rows

    rows += [list(r) for r in regime_rows(scenario)]
    print_table(["check", "value"], rows)
    from .validity import field_advice

    for w in field_advice(scenario):
        print(f"warning ({w['kind']}): {w['message']}")
    print("scenario is valid")
    return 0


def cmd_fieldmap(args):
    from . import load_scenario
    from .fieldmap_export import export_field_map
    from .units import parse_scalar

    scenario = load_scenario(args.scenario)
    t = parse_scalar(args.time, "time", "--time")
    frequency = parse_scalar(args.frequency, "frequency", "--frequency")
    bar, update = _progress_bar(f"sampling {Path(args.scenario).stem}")
    try:
        path, geometry, shape = export_field_map(scenario, args.grid, Path(args.output), t, frequency, update)
    finally:
        bar.close()
    print(f"wrote {path} ({geometry} map, {' x '.join(map(str, shape))} nodes, t = {t:g} s)")
    return 0


def cmd_lab(args):
    from ui.app import serve

    return serve(args.scenario, port=args.port, address=args.address, show=args.show,
                 allow_hosts=args.allow_host) or 0


def cmd_spectrum(args):
    from .radiation.cli import run_spectrum

    return run_spectrum(args) or 0


def build_parser():
    parser = argparse.ArgumentParser(prog="radorbit", description="Charged-particle orbits with radiation reaction.")
    sub = parser.add_subparsers(dest="command", required=True)

    from .pushers import PUSHERS
    from .radiation.reaction import MODELS

    def add_run_overrides(p):
        p.add_argument("--pusher", choices=tuple(PUSHERS), help="override run.pusher")
        p.add_argument("--radiation-reaction", choices=tuple(MODELS), help="override run.radiation_reaction")
        p.add_argument("--adaptive", action="store_true", help="set run.adaptive = true")

    run = sub.add_parser("run", help="track a scenario and print a summary")
    run.add_argument("scenario", help="scenario TOML file")
    run.add_argument("-o", "--output", help="write the result (.h5, or .csv)")
    run.add_argument("--compare", action="store_true", help="run damped and undamped side by side")
    run.add_argument("--models", metavar="A,B,...",
                     help="run these radiation-reaction models side by side (any of "
                          f"{', '.join(MODELS)}); one output file per model")
    run.add_argument("--snapshots", metavar="OUT.h5",
                     help="beam: write the run.snapshots dumps as openPMD (loads back as a [beam] file)")
    add_run_overrides(run)
    run.set_defaults(func=cmd_run)

    check = sub.add_parser("check", help="validate a scenario and print its plan")
    check.add_argument("scenario", help="scenario TOML file")
    check.add_argument("--compare", action="store_true", help="plan the memory of damped and undamped side by side")
    check.add_argument("--models", metavar="A,B,...", help="plan the memory of these models side by side")
    add_run_overrides(check)
    check.set_defaults(func=cmd_check)

    fmap = sub.add_parser("fieldmap", help="sample a scenario's fields on a grid and write a field map")
    fmap.add_argument("scenario", help="scenario TOML file")
    fmap.add_argument("--grid", nargs="+", required=True, metavar="AXIS=LOW:HIGH:N",
                      help="x=.. y=.. z=.. (Cartesian) or r=.. z=.. (axisymmetric, axis z); e.g. x=-1cm:1cm:21")
    fmap.add_argument("--time", default="0 s", help="time at which to sample (default 0 s)")
    fmap.add_argument("--frequency", default="0 Hz",
                      help="write a time-harmonic map of this frequency (adds the quadrature part)")
    fmap.add_argument("-o", "--output", required=True, help="map file to write (.h5, or .csv)")
    fmap.set_defaults(func=cmd_fieldmap)

    lab = sub.add_parser("lab", help="open the browser lab")
    lab.add_argument("scenario", nargs="?", help="scenario TOML to start from (default: a bundled one)")
    lab.add_argument("--port", type=int, default=5006, help="port (default 5006)")
    lab.add_argument("--address", default="127.0.0.1", help="address to bind (default 127.0.0.1)")
    lab.add_argument("--allow-host", action="append", default=[], metavar="NAME",
                     help="also answer to this host name (repeatable); loopback names and --address always")
    lab.add_argument("--show", action="store_true", help="open a browser tab")
    lab.set_defaults(func=cmd_lab)

    spectrum = sub.add_parser("spectrum", help="radiation spectrum of a saved result")
    spectrum.add_argument("result", help="result file written by `radorbit run -o`")
    spectrum.add_argument("--direction", action="append", metavar="NX,NY,NZ",
                          help="observer direction (repeatable; default: along the mean velocity)")
    spectrum.add_argument("--omega-range", metavar="LOW,HIGH,N",
                          help="angular frequency grid, rad/s or with units, e.g. '1e15,1e19,400' ")
    spectrum.add_argument("--method", choices=("auto", "direct", "nufft", "synchrotron"), default="auto",
                          help="auto (default) chooses by the orbit and prints why")
    spectrum.add_argument("-o", "--output", help="write the table (.h5 or .csv)")
    spectrum.set_defaults(func=cmd_spectrum)

    from .scan.cli import add_parser as add_sweep_parser

    add_sweep_parser(sub)
    return parser


def main(argv=None):
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        return args.func(args)
    except ScenarioError as exc:
        print(f"radorbit: error: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except BrokenPipeError:
        # output piped into `head` and closed early: not an error of ours
        import os

        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return 0
    except OSError as exc:
        print(f"radorbit: error: {exc}", file=sys.stderr)
        return 1
    except KeyboardInterrupt:
        print("radorbit: interrupted", file=sys.stderr)
        return 130


if __name__ == "__main__":
    sys.exit(main())
