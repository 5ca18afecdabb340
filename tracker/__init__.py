"""radorbit engine: relativistic charged-particle orbits with radiation reaction.

Public face::

    from tracker import load_scenario, track, compare
    scenario = load_scenario("scenarios/storage_ring_bend.toml")
    result = track(scenario)          # Result: t, x, u, gamma, power, radiated_energy, ...
    pair = compare(scenario)          # .damped and .undamped
"""

from .engine import Comparison, compare, track
from .errors import ScenarioError
from .result import Result, load_result
from .scenario import Scenario, load_scenario

__version__ = "0.1.0"

__all__ = ["Scenario", "ScenarioError", "load_scenario", "track", "compare", "Comparison", "Result",
           "load_result", "__version__"]
