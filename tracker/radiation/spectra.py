"""Spectra of several tracked runs on one grid: what ``radorbit spectrum`` and the lab both call.

``spectra({"damped": a, "undamped": b}, "synchrotron")`` picks the frequency grid (and,
for the radiation integral, the direction) from the first run, so the runs are drawn
or tabulated on the same axis and can be compared point by point.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np

from ..errors import ScenarioError

#: default number of frequencies: fine enough to see undulator lines of relative width 1/(n N)
#: over a decade or two (common practice, no source).
DEFAULT_POINTS = {"direct": 2000, "nufft": 2000, "synchrotron": 400}


@dataclass
class SpectrumSet:
    """Spectra of named runs on one frequency grid.

    ``values[name]``: synchrotron: dW/domega in J s, shape (n_omega,); radiation integral
    ("direct"/"nufft"): d2W/(domega dOmega) in J s/sr, shape (n_dir, n_omega).
    """

    method: str
    omega: np.ndarray                     #: rad/s, (n_omega,)
    directions: np.ndarray | None         #: unit vectors (n_dir, 3), None for synchrotron
    values: dict = field(default_factory=dict)
    unit: str = ""

    @property
    def photon_energy_ev(self) -> np.ndarray:
        from .spectrum import photon_energy_ev

        return photon_energy_ev(self.omega)


def default_grid(result, method: str, directions=None, points: int | None = None) -> np.ndarray:
    """The frequency grid (rad/s) ``radorbit spectrum`` uses for ``result`` when none is given."""
    n = points or DEFAULT_POINTS[method]
    if method == "synchrotron":
        from .synchrotron import default_synchrotron_omega

        return default_synchrotron_omega(result, n)
    from .spectrum import default_omega

    return default_omega(result, directions, n)


def spectra(results: Mapping[str, object], method: str = "synchrotron", omega=None, directions=None,
            points: int | None = None) -> SpectrumSet:
    """Spectrum of every run in ``results`` on the grid of the first.

    Parameters
    ----------
    results : {name: Result}
    method : {"synchrotron", "nufft", "direct"}
    omega : array, optional
        Angular frequencies in rad/s; default ``default_grid`` of the first run.
    directions : array (n_dir, 3), optional
        Observation directions for the radiation integral; default the first run's
        mean velocity (``default_direction``). Not used by ``"synchrotron"``.
    points : int, optional
        Size of the default grid.
    """
    if method not in DEFAULT_POINTS:
        raise ScenarioError("method", f"must be direct, nufft or synchrotron, not {method!r}.")
    if not results:
        raise ScenarioError("results", "no runs given.")
    if directions is not None and method == "synchrotron":
        raise ScenarioError("direction", "does not apply to the synchrotron method (summed over all directions).")
    reference = next(iter(results.values()))
    if method == "synchrotron":
        from .synchrotron import synchrotron_spectrum

        grid = np.asarray(omega, dtype=float) if omega is not None else default_grid(reference, method,
                                                                                      points=points)
        values = {name: synchrotron_spectrum(result, grid) for name, result in results.items()}
        return SpectrumSet(method, grid, None, values, "J s")
    from .spectrum import default_direction, spectrum

    dirs = (np.atleast_2d(np.asarray(directions, dtype=float)) if directions is not None
            else default_direction(reference)[None, :])
    grid = np.asarray(omega, dtype=float) if omega is not None else default_grid(reference, method, dirs, points)
    values = {name: spectrum(result, dirs, grid, method=method) for name, result in results.items()}
    return SpectrumSet(method, grid, dirs, values, "J s/sr")
