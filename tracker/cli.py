"""The ``radorbit`` command: run, check, fieldmap, lab, spectrum, sweep. Thin wrappers over the Python API."""

import argparse
import sys
from pathlib import Path

from .errors import ScenarioError

EXIT_BAD_INPUT = 2
EXIT_CANCELLED = 130  #: as a shell reports Ctrl-C; the partial result was still printed and written


def _fmt_energy(joules):
    """Energy in eV multiples for people."""
    from .constants import e

    ev = joules / e
    for unit, scale in (("TeV", 1e12), ("GeV", 1e9), ("MeV", 1e6), ("keV", 1e3), ("eV", 1.0), ("meV", 1e-3)):
        if abs(ev) >= scale:
            return f"{ev / scale:.6g} {unit}"
    return f"{ev:.4g} eV"


def summary_rows(result):
    """[(label, text)] of the headline numbers of a Result."""
    s = result.summary()
    return [
        ("final energy", _fmt_energy(s["final_energy"])),
        ("energy radiated", _fmt_energy(s["energy_radiated"])),
        ("fraction lost", f"{s['fraction_lost']:.4g}"),
        ("peak power", f"{s['peak_power']:.4g} W"),
        ("peak chi", f"{s['peak_chi']:.4g}"),
        ("energy balance residual", f"{s['energy_balance_residual']:.2e}"),
        ("wall time", f"{s['wall_time']:.3f} s"),
        ("steps/s", f"{s['steps_per_second']:.3g}"),
        ("stop reason", result.meta.get("stop_reason", "")),
    ]


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
        if threading.current_thread() is threading.main_thread():
            self._previous = signal.signal(signal.SIGINT, self._handle)
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
        return False


def _write(result, path):
    """Write a Result (.csv or .h5) atomically; if that fails, keep it in the temp folder instead."""
    import os
    import tempfile

    writer = result.to_csv if path.suffix.lower() == ".csv" else result.to_hdf5
    try:
        writer(path)
        print(f"wrote {path}")
        return True
    except OSError as exc:
        rescue = Path(tempfile.gettempdir()) / f"radorbit-{os.getpid()}-{path.name}"
        writer(rescue)
        print(f"radorbit: error: cannot write {path} ({exc.strerror}); the result is kept in {rescue}",
              file=sys.stderr)
        return False


def cmd_run(args):
    from . import compare, load_scenario, track

    scenario = _with_overrides(load_scenario(args.scenario), args)
    if scenario.beam is not None:                      # beams: tracker/beam_cli.py
        from .beam_cli import run_beam

        return run_beam(args, scenario)
    if getattr(args, "snapshots", None):
        raise ScenarioError("--snapshots", "needs a [beam] scenario (one particle has no snapshots).")
    plan = scenario.plan()
    bar, update = _progress_bar(f"{Path(args.scenario).stem} ({plan.steps:,} steps)")
    try:
        with _InterruptToCancel() as cancel:
            if args.compare:
                pair = compare(scenario, progress=update, cancel=cancel)
                results = {"damped": pair.damped, "undamped": pair.undamped}
            else:
                results = {scenario.run.radiation_reaction: track(scenario, progress=update, cancel=cancel)}
    finally:
        bar.close()
    names = list(results)
    rows = [[label, *[dict(summary_rows(r))[label] for r in results.values()]]
            for label, _ in summary_rows(next(iter(results.values())))]
    print(f"{scenario.title or Path(args.scenario).stem}")
    print_table(["", *names], rows)
    for name, r in results.items():
        for w in r.warnings:
            print(f"warning ({name}, {w['kind']}, t = {w['time']:.4g} s): {w['message']}")
    ok = True
    if args.output:
        out = Path(args.output)
        for name, r in results.items():
            path = out if len(results) == 1 else out.with_name(f"{out.stem}-{name}{out.suffix}")
            ok = _write(r, path) and ok
    if any(r.meta.get("stop_reason") == "cancelled" for r in results.values()):
        return EXIT_CANCELLED
    return 0 if ok else 1


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
    p = scenario.particle
    rows = [
        ["title", scenario.title or "-"],
        ["particle", f"{p.species}, gamma0 = {p.gamma:.6g}"],
        ["fields", ", ".join(f.type for f in scenario.fields) or "none"],
        ["pusher / damping", f"{scenario.run.pusher} / {scenario.run.radiation_reaction}"],
        ["dt", f"{plan.dt:.6g} s"],
        ["steps", f"{plan.steps:,}"],
        ["saved states", f"{plan.saved_states:,} (every {plan.save_every})"],
        ["memory estimate", human_bytes(plan.memory_bytes)],
        ["fastest time scale", f"{plan.period:.6g} s ({plan.period_source})" if plan.period else "none found"],
        ["resolution", f"{plan.steps_per_period:.4g} steps per period" if plan.steps_per_period else "-"],
    ]
    try:
        from .regime import regime_rows
    except ImportError:
        regime_rows = None
    if regime_rows is not None:
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

    return serve(args.scenario, port=args.port, address=args.address, show=args.show) or 0


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
    run.add_argument("--snapshots", metavar="OUT.h5",
                     help="beam: write the run.snapshots dumps as openPMD (loads back as a [beam] file)")
    add_run_overrides(run)
    run.set_defaults(func=cmd_run)

    check = sub.add_parser("check", help="validate a scenario and print its plan")
    check.add_argument("scenario", help="scenario TOML file")
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
    lab.add_argument("--show", action="store_true", help="open a browser tab")
    lab.set_defaults(func=cmd_lab)

    spectrum = sub.add_parser("spectrum", help="radiation spectrum of a saved result")
    spectrum.add_argument("result", help="result file written by `radorbit run -o`")
    spectrum.add_argument("--direction", action="append", metavar="NX,NY,NZ",
                          help="observer direction (repeatable; default: along the mean velocity)")
    spectrum.add_argument("--omega-range", metavar="LOW,HIGH,N",
                          help="angular frequency grid, rad/s or with units, e.g. '1e15,1e19,400' ")
    spectrum.add_argument("--method", choices=("direct", "nufft", "synchrotron"), default="nufft")
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
