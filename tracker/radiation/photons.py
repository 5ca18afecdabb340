"""Analyses of recorded photons (``Result.photons``): spectra and angular distribution with error bars.

All histograms count real photons (each recorded photon carries its emitter's weight)
and give the Poisson standard error of each bin, sqrt(sum of weight^2) (times the
photon energy for energy-weighted bins), divided by the bin width or solid angle.
The classical synchrotron spectrum of the same orbit, on the same axes, comes from
``synchrotron_spectrum`` (Jackson sec. 14.6 universal function; see synchrotron.py):
dE/d(eps) = (dW/d omega)/hbar and dN/d(eps) = dE/d(eps)/eps at eps = hbar omega.
"""

from dataclasses import dataclass

import numpy as np

from .. import constants as k
from ..errors import ScenarioError


#: smallest default polar-angle range (rad) when every photon flies along the axis
MIN_ANGLE_RANGE = 1e-6


@dataclass
class Histogram:
    """Bin edges and per-bin densities with standard errors (units in each function's docstring)."""

    edges: np.ndarray
    density: np.ndarray
    error: np.ndarray
    counts: np.ndarray       # recorded photons per bin (unweighted)

    @property
    def centers(self):
        return 0.5 * (self.edges[1:] + self.edges[:-1])


def _photons(result_or_table):
    photons = getattr(result_or_table, "photons", result_or_table)
    if photons is None:
        raise ScenarioError("photons", "this run recorded no photons: use radiation_reaction = \"quantum-stochastic\".")
    return photons


def default_energy_edges(photons, n=60):
    """Log-spaced edges (J) from the smallest to the largest recorded photon energy, shape (n + 1,)."""
    e = photons.energy[photons.energy > 0]
    if len(e) == 0:
        raise ScenarioError("photons", "no photons with positive energy were recorded.")
    low, high = float(e.min()), float(e.max())
    if high <= low:
        high = low * 1.01
    return np.geomspace(low, high * (1 + 1e-12), n + 1)


def energy_spectrum(result_or_table, edges=None, weighted_by_energy=False):
    """Photon energy spectrum of the recorded photons.

    Parameters
    ----------
    result_or_table : Result, BeamResult or PhotonTable
    edges : array_like (m + 1,), J, optional -- bin edges (log-spaced over the photons when None)
    weighted_by_energy : bool
        False: dN/d(eps), photons per J. True: dE/d(eps), J per J (dimensionless).

    Returns
    -------
    Histogram -- density and error per J (or dimensionless), counts per bin
    """
    photons = _photons(result_or_table)
    edges = default_energy_edges(photons) if edges is None else np.asarray(edges, dtype=float)
    w = photons.weight * (photons.energy if weighted_by_energy else 1.0)
    width = np.diff(edges)
    total = np.histogram(photons.energy, bins=edges, weights=w)[0]
    square = np.histogram(photons.energy, bins=edges, weights=w * w)[0]
    counts = np.histogram(photons.energy, bins=edges)[0]
    return Histogram(edges, total / width, np.sqrt(square) / width, counts)


def angular_distribution(result_or_table, axis=None, edges=None, weighted_by_energy=False):
    """dN/dOmega (photons per sr) or dE/dOmega (J/sr) against the polar angle from ``axis``.

    Parameters
    ----------
    axis : array_like (3,), optional -- polar axis; the photons' mean direction when None
    edges : array_like (m + 1,), rad, optional -- polar-angle bin edges (default: 60 bins up to
        the largest angle recorded)

    Returns
    -------
    Histogram -- density and error per sr; ``axis`` used is in ``.axis``
    """
    photons = _photons(result_or_table)
    if len(photons) == 0:
        raise ScenarioError("photons", "no photons were recorded.")
    d = photons.direction
    if axis is None:
        axis = (photons.weight[:, None] * photons.p).sum(axis=0)
    axis = np.asarray(axis, dtype=float)
    if axis.shape != (3,) or not np.linalg.norm(axis) > 0:
        raise ScenarioError("axis", f"must be a non-zero 3-vector, not {axis!r}.")
    axis = axis / np.linalg.norm(axis)
    theta = np.arccos(np.clip(d @ axis, -1.0, 1.0))
    if edges is None:
        edges = np.linspace(0.0, max(float(theta.max()), MIN_ANGLE_RANGE) * (1 + 1e-9), 61)
    edges = np.asarray(edges, dtype=float)
    # cos a - cos b = 2 sin((a + b)/2) sin((b - a)/2): no cancellation for narrow bins near the axis
    solid = 4.0 * np.pi * np.sin(0.5 * (edges[1:] + edges[:-1])) * np.sin(0.5 * (edges[1:] - edges[:-1]))
    w = photons.weight * (photons.energy if weighted_by_energy else 1.0)
    total = np.histogram(theta, bins=edges, weights=w)[0]
    square = np.histogram(theta, bins=edges, weights=w * w)[0]
    h = Histogram(edges, total / solid, np.sqrt(square) / solid, np.histogram(theta, bins=edges)[0])
    h.axis = axis
    return h


def classical_spectrum(result, energies):
    """Classical synchrotron spectrum of the same orbit on photon-energy axes.

    Parameters
    ----------
    result : Result (one particle, every saved state)
    energies : array_like (m,), J -- photon energies eps = hbar omega

    Returns
    -------
    (dN/d(eps) in 1/J, dE/d(eps) dimensionless), each (m,)
    """
    from .synchrotron import synchrotron_spectrum

    eps = np.asarray(energies, dtype=float)
    de = synchrotron_spectrum(result, eps / k.hbar) / k.hbar
    return de / eps, de


def emitted_energy(comparison):
    """Energy radiated per model (J): {model: J} from a ``tracker.Comparison``, and, for the
    stochastic model, the recorded photons' energy under ``"quantum-stochastic (photons)"``."""
    out = comparison.energy_radiated()
    stochastic = comparison.results.get("quantum-stochastic")
    if stochastic is not None and getattr(stochastic, "photons", None) is not None:
        out["quantum-stochastic (photons)"] = stochastic.photons.total_energy()
    return out
