"""radorbit engine: relativistic charged-particle orbits with radiation reaction.

Public face::

    from tracker import load_scenario, track, compare
    scenario = load_scenario("scenarios/storage_ring_bend.toml")
    result = track(scenario)          # Result: t, x, u, gamma, power, radiated_energy, ...
    pair = compare(scenario)          # .damped and .undamped
    scan = sweep(scenario, {"field[0].a0": "5:50:10"})   # SweepResult: one row per point
"""

from .cache_guard import ensure_consistent_cache

ensure_consistent_cache()

# imported after the cache check, before any kernel is loaded
from .engine import Comparison, compare, track  # noqa: E402
from .errors import ScenarioError  # noqa: E402
from .result import Result, load_result  # noqa: E402
from .scenario import Scenario, load_scenario  # noqa: E402
from .sweep import SweepResult, load_sweep, sweep  # noqa: E402

__version__ = "0.1.0"

__all__ = ["Scenario", "ScenarioError", "load_scenario", "track", "compare", "Comparison", "Result",
           "load_result", "sweep", "SweepResult", "load_sweep", "__version__"]
