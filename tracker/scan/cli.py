"""``radorbit sweep SCENARIO --vary KEY=VALUES ... [-o scan.h5]``: a scan from the command line."""

import sys
from pathlib import Path

from ..errors import ScenarioError

EXIT_CANCELLED = 130

#: columns of the printed table after the varied entries: (column, header, formatter)
def _energy(v):
    from ..cli import _fmt_energy

    return _fmt_energy(v) if v == v else "–"


def _number(v):
    return f"{v:.4g}" if v == v else "–"


PRINTED = (
    ("energy_radiated_damped", "radiated (damped)", _energy),
    ("energy_radiated_undamped", "radiated (undamped)", _energy),
    ("fraction_radiated_damped", "fraction lost", _number),
    ("final_gamma_damped", "final γ (damped)", _number),
    ("peak_chi_damped", "peak χ", _number),
)


def add_parser(sub):
    p = sub.add_parser("sweep", help="run a scenario over a grid of values (a parameter scan)")
    p.add_argument("scenario", help="scenario TOML file (its [sweep] table is used when no --vary is given)")
    p.add_argument("--vary", action="append", metavar="KEY=VALUES",
                   help="entry and its values: 'field[0].a0=5:50:10' (start:stop:count[:log]), "
                        "'particle.kinetic_energy=0.5 GeV,1 GeV,2 GeV', 'run.pusher=boris,vay' (repeatable)")
    p.add_argument("--zip", action="store_true", help="pair the lists (equal lengths) instead of every combination")
    p.add_argument("--scheduler", metavar="ADDRESS",
                   help="run the points on a running dask.distributed scheduler, e.g. tcp://10.0.0.5:8786")
    p.add_argument("--workers", type=int, metavar="N", help="local worker threads (default: all cores)")
    p.add_argument("--keep-results", action="store_true",
                   help="also store every point's damped and undamped runs in the output file")
    p.add_argument("-o", "--output", help="scan file (.h5): written as points finish; re-running resumes it")
    p.add_argument("--csv", metavar="PATH", help="also write the table as CSV")
    p.set_defaults(func=cmd_sweep)
    return p


def _vary(args):
    from .spec import parse_vary_option

    if not args.vary:
        return None
    vary = {}
    for text in args.vary:
        key, values = parse_vary_option(text)
        if key in vary:
            raise ScenarioError(key, "is given twice with --vary.")
        vary[key] = values
    return vary


def cmd_sweep(args):
    from .. import load_scenario, sweep
    from ..cli import _InterruptToCancel, print_table

    if args.workers is not None and args.workers < 1:
        raise ScenarioError("--workers", f"must be at least 1, not {args.workers}.")
    scenario = load_scenario(args.scenario)
    vary = _vary(args)
    if vary is None and scenario.sweep is None:
        raise ScenarioError("--vary", "give at least one --vary KEY=VALUES (the scenario has no [sweep] table).")
    grid = None if vary is None and not args.zip else not args.zip
    if args.output and Path(args.output).suffix.lower() not in (".h5", ".hdf5"):
        raise ScenarioError("--output", f"a scan file ends in .h5, not {args.output!r} (use --csv for a table).")
    client = _client(args.scheduler)
    bar = None
    try:
        from tqdm import tqdm

        bar = tqdm(total=0, unit="point", desc="scan", leave=False, disable=None,
                   bar_format="{desc}: {n_fmt}/{total_fmt} points |{bar}| {elapsed}<{remaining}")

        def progress(done, total):
            if bar.total != total:
                bar.reset(total=total)
            bar.n = done
            bar.refresh()

        with _InterruptToCancel() as cancel:
            result = sweep(scenario, vary, grid=grid, client=client, progress=progress, cancel=cancel,
                           keep="results" if args.keep_results else None, output=args.output,
                           workers=args.workers)
    finally:
        if bar is not None:
            bar.close()
        if client is not None:
            client.close()
    _report(result, args, print_table)
    if args.csv:
        result.to_csv(args.csv)
        print(f"wrote {args.csv}")
    counts = result.status_counts()
    if counts.get("cancelled") or counts.get("not run"):
        return EXIT_CANCELLED
    return 1 if counts.get("failed") else 0


def _client(address):
    if not address:
        return None
    from distributed import Client

    try:
        return Client(address, timeout="10s")
    except (OSError, TimeoutError) as exc:
        raise ScenarioError("--scheduler", f"cannot reach a dask scheduler at {address!r} ({exc}).") from None


def _report(result, args, print_table):
    keys = result.keys
    rows = []
    for i, r in enumerate(result.rows):
        given = [str(v) for v in result.given(i)]
        status = r["status"] if not r.get("error") else f"{r['status']}: {r['error']}"
        warned = r.get("warnings_damped") or ""
        rows.append([str(i), *given, *[fmt(r[c]) for c, _, fmt in PRINTED], warned or "-", status])
    print(result.base.title or Path(args.scenario).stem)
    print_table(["#", *keys, *[h for _, h, _ in PRINTED], "warnings", "status"], rows)
    counts = result.status_counts()
    summary = ", ".join(f"{n} {s}" for s, n in counts.items())
    print(f"{len(result.rows)} points: {summary}; reused {result.reused} from an earlier run, computed {result.computed}")
    if args.output:
        print(f"wrote {args.output}")
    if counts.get("cancelled") or counts.get("not run"):
        print("radorbit: scan interrupted; finished points are kept"
              + (f" in {args.output}: run the same command again to finish it" if args.output else ""),
              file=sys.stderr)
