"""Parameter scans: vary scenario entries over a grid, run every point damped and undamped.

Usage::

    from tracker import load_scenario, sweep, load_sweep
    scan = sweep(load_scenario("scenarios/laser_scan_a0_energy.toml"),
                 {"field[0].a0": "5:50:10", "particle.kinetic_energy": ["0.5 GeV", "1 GeV"]},
                 output="scan.h5")
    scan.column("energy_radiated_damped")          # J, one per point
    scan.quantity("energy_radiated", "ratio")      # damped / undamped
    scan.point(3)                                  # that point's Comparison (stored or re-run)

The pieces live in ``tracker/scan/`` (key paths, value text, one point, executors, file).
"""

import csv
import itertools
import json
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from .errors import ScenarioError
from .io import atomic_path
from .scan import keys as keypaths
from .scan.execute import run_points
from .scan.point import (CANCELLED, COMPLETED, FAILED, QUANTITIES, RUNS, STOPPED, comparison_from_plain,
                         failed_row, point_key)
from .scan.spec import normalise_vary
from .scan.store import read_runs, read_scan, write_scan
from .scenario import Scenario, load_scenario

NOT_RUN = "not run"
KEEP_CHOICES = (None, "summary", "results")


def quantity_columns():
    """Summary columns of every point, in table order."""
    return [f"{q}_{run}" for q in QUANTITIES for run in RUNS]


def _message(exc):
    text = str(exc)
    prefix = f"{exc.key}: "
    return text[len(prefix):] if exc.key and text.startswith(prefix) else text


def _describe(keys, combo):
    return ", ".join(f"{k} = {v!r}" for k, v in zip(keys, combo))


def build_points(base, vary, grid):
    """Validated point Scenarios (and their given values) of a scan; nothing runs.

    Raises
    ------
    ScenarioError
        Naming the key path and, for a bad value, the point (index and its values).
    """
    keys = [k for k, _ in vary]
    for k in keys:
        keypaths.check_key(base, k)
    combos = list(itertools.product(*(v for _, v in vary)) if grid else zip(*(v for _, v in vary)))
    data = base.to_dict(as_entered=True)   # the user's own text ("1 GeV") stays in every point
    data.pop("sweep", None)
    points = []
    for i, combo in enumerate(combos):
        point = _copy(data)
        for k, v in zip(keys, combo):
            keypaths.set_value(point, k, v)
        try:
            points.append(Scenario.from_dict(point, base_dir=base.base_dir))
        except ScenarioError as exc:
            raise ScenarioError(exc.key, f"{_message(exc)} (at point {i} of {len(combos)}: "
                                         f"{_describe(keys, combo)})") from None
    return points, combos


def _copy(data):
    """A copy of a plain scenario dict (dicts, lists, scalars): deepcopy costs ~1 ms here."""
    if isinstance(data, dict):
        return {k: _copy(v) for k, v in data.items()}
    if isinstance(data, list):
        return [_copy(v) for v in data]
    return data


def _as_scenario(scenario):
    if isinstance(scenario, Scenario):
        return scenario
    if isinstance(scenario, dict):
        return Scenario.from_dict(scenario)
    return load_scenario(scenario)


def _resolve_vary(base, vary, grid):
    if vary is None:
        if base.sweep is None:
            raise ScenarioError("sweep", "nothing to vary: pass vary= or give the scenario a [sweep] table.")
        return base.sweep.vary, base.sweep.grid if grid is None else grid
    grid = True if grid is None else bool(grid)
    return normalise_vary(dict(vary), grid), grid


@dataclass
class SweepResult:
    """A scan: one row per point with the varied entries (SI) and the summary quantities.

    Columns: ``index``, ``point_key``, each varied key path, ``<quantity>_<run>`` for the
    quantities in ``tracker.scan.point.QUANTITIES`` and run ``damped``/``undamped``,
    ``warnings_<run>`` (comma-separated kinds), ``wall_time`` (s, both runs of the point),
    ``status`` (completed, stopped, failed, cancelled, not run) and ``error``.
    """

    base: Scenario
    vary: tuple
    grid: bool
    rows: list
    combos: list
    path: str | None = None
    reused: int = 0
    computed: int = 0
    results: dict = field(default_factory=dict, repr=False)   #: index -> plain runs kept in memory
    _points: list = field(default=None, repr=False)

    # ------------------------------------------------------------------ table
    @property
    def keys(self):
        """The varied key paths."""
        return [k for k, _ in self.vary]

    @property
    def shape(self):
        """Values per key (grid), or (points,) for a zipped scan."""
        return tuple(len(v) for _, v in self.vary) if self.grid else (len(self.rows),)

    @property
    def columns(self):
        return ["index", "point_key", *self.keys, *quantity_columns(), *[f"warnings_{r}" for r in RUNS],
                "wall_time", "status", "error"]

    @property
    def units(self):
        """{column: SI unit text}."""
        out = {k: keypaths.unit(self.base, k) for k in self.keys}
        out.update({f"{q}_{run}": unit for q, (_, unit) in QUANTITIES.items() for run in RUNS})
        out["wall_time"] = "s"
        return out

    def __len__(self):
        return len(self.rows)

    def column(self, name):
        """One column as an array (float64 for numbers, object otherwise)."""
        values = [r.get(name) for r in self.rows]
        if all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in values):
            return np.asarray(values, dtype=np.float64)
        return np.asarray(values, dtype=object)

    def quantity(self, name, variant="damped"):
        """A summary quantity per point: ``variant`` = 'damped', 'undamped' or 'ratio' (damped/undamped)."""
        if variant == "ratio":
            with np.errstate(divide="ignore", invalid="ignore"):
                return self.column(f"{name}_damped") / self.column(f"{name}_undamped")
        return self.column(f"{name}_{variant}")

    def on_grid(self, values):
        """Per-point values reshaped to ``shape`` (first key along axis 0)."""
        return np.asarray(values).reshape(self.shape)

    def given(self, i):
        """The values of point ``i`` as given (with their units)."""
        return self.combos[i]

    def status_counts(self):
        counts = {}
        for r in self.rows:
            counts[r["status"]] = counts.get(r["status"], 0) + 1
        return counts

    # ------------------------------------------------------------------ points
    def scenario(self, i):
        """The validated Scenario of point ``i``."""
        if self._points is None:
            self._points, _ = build_points(self.base, self.vary, self.grid)
        return self._points[i]

    def point(self, i, progress=None, cancel=None):
        """The Comparison of point ``i``: kept in memory, stored in the scan file, or re-run."""
        from .engine import compare

        if i in self.results:
            return comparison_from_plain(self.results[i])
        if self.path is not None and Path(self.path).exists():
            runs = read_runs(self.path, self.rows[i]["point_key"])
            if runs is not None:
                return comparison_from_plain(runs)
        return compare(self.scenario(i), progress=progress, cancel=cancel)

    # ------------------------------------------------------------------ files
    def header(self):
        return {"scenario_toml": self.base.to_toml(), "points": len(self.rows),
                "vary": {"keys": self.keys, "values": [list(v) for _, v in self.vary], "grid": self.grid}}

    def to_hdf5(self, path):
        """Write the table (and any kept runs) to an HDF5 scan file; atomic."""
        kept = {self.rows[i]["point_key"]: runs for i, runs in self.results.items()}
        write_scan(path, self.header(), [_jsonable(r) for r in self.rows], self.units, kept, source=self.path)
        return path

    def to_csv(self, path):
        """One line per point, units in the header; atomic."""
        units = self.units
        with atomic_path(path) as tmp:
            with open(tmp, "w", newline="", encoding="utf-8") as fh:
                fh.write(f"# radorbit scan: {self.base.title or 'untitled'}; "
                         f"{'grid' if self.grid else 'zip'} of {', '.join(self.keys)}; {len(self.rows)} points\n")
                writer = csv.writer(fh)
                writer.writerow([f"{c} [{units[c]}]" if units.get(c) else c for c in self.columns])
                for r in self.rows:
                    writer.writerow([_csv_cell(r.get(c)) for c in self.columns])
        return path


def _csv_cell(v):
    if isinstance(v, float):
        return repr(v)
    if isinstance(v, (list, tuple)):
        return json.dumps(list(v))
    return "" if v is None else v


def _jsonable(row):
    return {k: list(v) if isinstance(v, tuple) else v for k, v in row.items()}


def _row(index, key, params, outcome_row):
    row = {"index": index, "point_key": key, **params}
    blank = failed_row("")
    for name in [*quantity_columns(), *[f"warnings_{r}" for r in RUNS], "wall_time"]:
        row[name] = outcome_row.get(name, blank[name])
    row["status"] = outcome_row["status"]
    row["error"] = outcome_row.get("error", "")
    return row


def load_sweep(path):
    """Read a scan file written by ``sweep(output=...)`` or ``SweepResult.to_hdf5``.

    Points the file does not hold yet (an interrupted scan) have status ``not run``.
    """
    header, stored_rows, _ = read_scan(path)
    base = Scenario.from_toml(header["scenario_toml"])
    vary = normalise_vary(dict(zip(header["vary"]["keys"], header["vary"]["values"])), header["vary"]["grid"])
    points, combos = build_points(base, vary, header["vary"]["grid"])
    by_key = {r["point_key"]: r for r in stored_rows}
    rows = []
    for i, p in enumerate(points):
        key = point_key(p.to_toml())
        params = {k: keypaths.get_value(p, k) for k, _ in vary}
        row = by_key.get(key)
        rows.append(_row(i, key, params, row if row is not None else {"status": NOT_RUN}))
    return SweepResult(base=base, vary=vary, grid=header["vary"]["grid"], rows=rows, combos=combos,
                       path=str(path), _points=points)


def sweep(scenario, vary=None, grid=None, client=None, progress=None, cancel=None, keep=None, output=None,
          workers=None):
    """Run a scenario over a grid (or zip) of values of some of its entries.

    Parameters
    ----------
    scenario : Scenario, dict or path of a scenario file
    vary : {key path: values}, optional
        Key paths such as ``"field[0].a0"``, ``"particle.kinetic_energy"``, ``"run.pusher"``,
        ``"particle.position[2]"``; values are lists (numbers in SI, or strings with units
        such as ``"1 GeV"``) or value text (``"5:50:10"``, see ``tracker.scan.spec``).
        Default: the scenario's ``[sweep]`` table.
    grid : bool, optional
        True: every combination (outer product); False: the lists zipped (equal lengths).
        Default True, or what the ``[sweep]`` table says.
    client : distributed.Client, optional
        Run the points on that dask cluster; default: threads on this machine.
    progress : callable(done: int, total: int), optional
        Called as points finish (reused points count as done at the start).
    cancel : threading.Event or callable() -> bool, optional
        Stops the scan: running points stop at their next chunk and are not kept.
    keep : None, "summary" or "results"
        "results" also keeps every point's two runs (in ``output`` when given, else in memory).
    output : path, optional
        HDF5 scan file written as each point finishes; if it exists, points it already holds
        are reused and only the missing ones run.
    workers : int, optional
        Local threads (default: all cores); ignored with ``client``.

    Every point is built and validated before anything runs: a bad key or value raises
    ScenarioError naming the key path and the point. A point whose runs raise is retried
    once, then recorded with status ``failed`` and its message; none is dropped.
    """
    if keep not in KEEP_CHOICES:
        raise ScenarioError("keep", f"must be one of {', '.join(map(repr, KEEP_CHOICES))}, not {keep!r}.")
    base = _as_scenario(scenario)
    if keep == "results" and base.beam is not None:
        raise ScenarioError("keep", "keeping every point's runs works for one particle; for a beam, "
                                    "SweepResult.point(i) re-runs the point.")
    vary, grid = _resolve_vary(base, vary, grid)
    points, combos = build_points(base, vary, grid)
    texts = [p.to_toml() for p in points]
    keys = [point_key(t) for t in texts]
    params = [{k: keypaths.get_value(p, k) for k, _ in vary} for p in points]
    result = SweepResult(base=base, vary=vary, grid=grid, combos=combos, _points=points,
                         rows=[_row(i, keys[i], params[i], {"status": NOT_RUN}) for i in range(len(points))],
                         path=None if output is None else str(output))
    keep_runs = keep == "results"
    previous = _previous_rows(output, keep_runs)
    for i, key in enumerate(keys):
        if key in previous:
            result.rows[i] = _row(i, key, params[i], previous[key])
            result.reused += 1
    units = result.units
    pending = {}                       # kept runs not yet in the file

    def save():
        finished = [r for r in result.rows if r["status"] in (COMPLETED, STOPPED, FAILED)]
        write_scan(output, result.header(), [_jsonable(r) for r in finished], units, pending, source=output)
        pending.clear()

    if output is not None:
        save()
    done = result.reused
    if progress is not None:
        progress(done, len(points))

    def on_done(i, outcome):
        nonlocal done
        result.rows[i] = _row(i, keys[i], params[i], outcome["row"])
        if outcome["row"]["status"] != CANCELLED:
            result.computed += 1
            if "results" in outcome:
                if output is None:
                    result.results[i] = outcome["results"]
                else:
                    pending[keys[i]] = outcome["results"]
            if output is not None:
                save()
        done += 1
        if progress is not None:
            progress(done, len(points))

    jobs = [(i, points[i], texts[i]) for i in range(len(points)) if result.rows[i]["status"] == NOT_RUN]
    run_points(jobs, on_done, client=client, workers=workers, keep=keep_runs, cancel=cancel)
    return result


def _previous_rows(output, keep_runs):
    """{point_key: row} of finished points an existing scan file holds (failed ones run again)."""
    if output is None or not Path(output).exists():
        return {}
    try:
        _, rows, stored = read_scan(output)
    except (OSError, ValueError, KeyError) as exc:
        raise ScenarioError("output", f"{str(output)!r} exists and is not a readable radorbit scan file "
                                      f"({exc}); choose another name.") from None
    return {r["point_key"]: r for r in rows
            if r["status"] in (COMPLETED, STOPPED) and (not keep_runs or r["point_key"] in stored)}
