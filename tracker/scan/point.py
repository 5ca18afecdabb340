"""One point of a scan: scenario TOML text in, a summary row (plain data) out.

The function ``compute_point`` is what a worker runs, on a local thread or on a
``dask.distributed`` worker; its argument and its return value are plain data
(text, numbers, numpy arrays, dicts), so a worker needs only radorbit installed.
"""

import hashlib
import time

from ..engine import Comparison, damped_and_undamped, track
from ..result import ARRAYS, Result

RUNS = ("damped", "undamped")

#: summary quantities of each run: name -> (label, SI unit); taken from Result.summary()
QUANTITIES = {
    "final_gamma": ("final γ (beam: mean)", ""),
    "energy_radiated": ("energy radiated", "J"),
    "fraction_radiated": ("fraction of the initial kinetic energy radiated", ""),
    "peak_power": ("peak Liénard power", "W"),
    "peak_chi": ("peak χ", ""),
    "energy_balance_residual": ("energy-balance residual", ""),
}

#: per-point status values
COMPLETED, STOPPED, FAILED, CANCELLED = "completed", "stopped", "failed", "cancelled"


class PointCancelled(Exception):
    """The scan was cancelled while this point ran (nothing of it is kept)."""


def point_key(toml_text):
    """Identity of a point: a hash of its scenario TOML (resume matches points by it)."""
    return hashlib.sha256(toml_text.encode("utf-8")).hexdigest()[:20]


def run_comparison(scenario, cancel=None):
    """The damped and undamped runs of ``tracker.compare``, one after the other on this thread.

    A scan keeps one core per point (its workers are the parallelism); the runs are the
    same calls ``compare`` makes, so the numbers are identical (tests/test_sweep.py).
    """
    damped, undamped = damped_and_undamped(scenario)
    results = []
    for s in (damped, undamped):
        result = track(s, cancel=cancel)
        if result.meta.get("stop_reason") == "cancelled":
            raise PointCancelled()
        results.append(result)
    return Comparison(damped=results[0], undamped=results[1])


def summary_row(comparison):
    """Summary columns of a Comparison: ``<quantity>_<run>``, warning kinds per run, status."""
    row = {}
    stops = []
    for run in RUNS:
        result = getattr(comparison, run)
        row.update({f"{name}_{run}": value for name, value in run_quantities(result).items()})
        row[f"warnings_{run}"] = ",".join(sorted({w["kind"] for w in result.warnings}))
        if not result.complete:
            stops.append(f"{run}: {result.meta.get('stop_reason', 'stopped')}")
    row["status"] = STOPPED if stops else COMPLETED
    row["error"] = "; ".join(stops)
    return row


def run_quantities(result):
    """QUANTITIES of one run: a Result, or a BeamResult (means over the beam; no peak power or
    energy balance per beam, NaN)."""
    s = result.summary()
    if "mean_gamma" in s:   # tracker.beam_result.BeamResult
        nan = float("nan")
        return {"final_gamma": float(s["mean_gamma"][1]), "energy_radiated": s["energy_radiated"],
                "fraction_radiated": s["fraction_lost"], "peak_power": nan, "peak_chi": s["peak_chi"],
                "energy_balance_residual": nan}
    return {"final_gamma": float(result.gamma[-1]), "energy_radiated": s["energy_radiated"],
            "fraction_radiated": s["fraction_lost"], "peak_power": s["peak_power"], "peak_chi": s["peak_chi"],
            "energy_balance_residual": s["energy_balance_residual"]}


def result_to_plain(result):
    """A Result as plain data (arrays, scenario TOML, meta, warnings) for the wire or a file."""
    return {"arrays": {name: getattr(result, name) for name in ARRAYS}, "scenario_toml": result.scenario.to_toml(),
            "meta": dict(result.meta), "warnings": list(result.warnings)}


def result_from_plain(plain):
    from ..scenario import Scenario

    return Result(scenario=Scenario.from_toml(plain["scenario_toml"]), meta=plain["meta"],
                  warnings=plain["warnings"], **plain["arrays"])


def compute_point(toml_text, keep=False, cancel=None):
    """Run one point (damped and undamped) and return plain data.

    Parameters
    ----------
    toml_text : str or Scenario
        The point's scenario as TOML (a validated Scenario on local threads: no re-parsing).
    keep : bool
        Also return both runs (``"results"``: {run: plain Result}).
    cancel : threading.Event, optional
        Local runs only: raises PointCancelled when set during the runs.

    Returns
    -------
    dict
        ``row`` (summary columns, ``wall_time`` in s) and, with ``keep``, ``results``.
        Exceptions propagate: the executor records them and retries once.
    """
    from ..scenario import Scenario

    start = time.perf_counter()
    scenario = toml_text if isinstance(toml_text, Scenario) else Scenario.from_toml(toml_text)
    comparison = run_comparison(scenario, cancel=cancel)
    row = summary_row(comparison)
    row["wall_time"] = time.perf_counter() - start
    out = {"row": row}
    if keep:
        out["results"] = {run: result_to_plain(getattr(comparison, run)) for run in RUNS}
    return out


def failed_row(message):
    """The row of a point whose runs raised twice: NaN quantities, the error text."""
    row = {f"{q}_{run}": float("nan") for run in RUNS for q in QUANTITIES}
    row.update({f"warnings_{run}": "" for run in RUNS})
    row.update(status=FAILED, error=message, wall_time=float("nan"))
    return row


def comparison_from_plain(results):
    return Comparison(damped=result_from_plain(results["damped"]), undamped=result_from_plain(results["undamped"]))
