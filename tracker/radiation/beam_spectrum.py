"""Spectra of a beam: the incoherent sum of its particles' spectra.

For a ``BeamResult`` the spectrum functions of this package return

    S_beam(omega) = sum_i w_i S_i(omega)

where S_i is the single-particle spectrum of particle i (``BeamResult.particle(i)``,
its saved states up to its loss) and w_i its weight (real particles per tracked one).
We add **intensities**, not amplitudes: |sum_i w_i A_i|^2 would be the coherent
spectrum, which also holds the interference between particles. The total is
N S_1 + N (N - 1) |f(omega)|^2 S_1 for N identical emitters with bunch form factor f
(J. S. Nodvick and D. S. Saxon, Phys. Rev. 96, 180 (1954), from memory); the
coherent term matters only at wavelengths comparable with or longer than the bunch
(or its density modulations), and is not computed here. Particles with fewer than
two saved states (lost at once) contribute nothing.

A spectrum needs every particle's orbit: results saved with ``run.save = "statistics"``
are refused with a ScenarioError naming ``result``.
"""

import numpy as np

from ..errors import ScenarioError


def is_beam(result):
    """True for a BeamResult (per-particle arrays (n_saved, N, ...))."""
    return hasattr(result, "particle") and hasattr(result, "lost") and hasattr(result, "stats")


def require_particles(result):
    """Raise ScenarioError('result') when a beam saved statistics only."""
    if not result.has_particles:
        raise ScenarioError(
            "result", "this beam result saved statistics only (run.save = \"statistics\"): a spectrum needs every "
                      "particle's orbit. Track again with run.save = \"all\" (and run.save_every = 1 for high "
                      "frequencies); a smaller beam.count keeps the memory down.")


def contributing_particles(result):
    """Indices of the particles with at least two saved states (int array)."""
    keep = (result.t[:, None] <= np.asarray(result.lost_time)[None, :]) | (np.asarray(result.lost)[None, :] == 0)
    keep &= np.all(np.isfinite(result.x), axis=2) & np.all(np.isfinite(result.u), axis=2)
    return np.flatnonzero(keep.sum(axis=0) >= 2)


def incoherent_sum(result, per_particle, progress=None, cancel=None):
    """sum_i w_i per_particle(result.particle(i)) over the contributing particles.

    per_particle : callable(Result) -> ndarray (any shape, the same for every particle)
    progress : callable(fraction) between particles; cancel : threading.Event or callable
        -> bool, checked between particles (raises KeyboardInterrupt when set: a partial
        sum is not a spectrum of the beam).
    """
    require_particles(result)
    who = contributing_particles(result)
    if who.size == 0:
        raise ScenarioError("result", "no particle of this beam has two saved states: no spectrum.")
    total = None
    for n, i in enumerate(who):
        if cancel is not None and (cancel.is_set() if hasattr(cancel, "is_set") else cancel()):
            raise KeyboardInterrupt("beam spectrum cancelled")
        term = float(result.weight[i]) * np.asarray(per_particle(result.particle(int(i))))
        total = term if total is None else total + term
        if progress is not None:
            progress((n + 1) / who.size)
    return total


def orbit_radiated_energy(result):
    """Energy radiated by the orbit (J): the last saved value, or sum_i w_i W_i over a beam."""
    if is_beam(result):
        values = result.statistics().get("radiated_energy", ())
        return float(values[-1]) if len(values) else float("nan")
    return float(result.radiated_energy[-1])


def beam_default_direction(result):
    """Unit vector (3,) along the beam's mean velocity over all particles and saved states."""
    require_particles(result)
    u = np.asarray(result.u, dtype=float).reshape(-1, 3)
    u = u[np.all(np.isfinite(u), axis=1)]
    beta = u / np.sqrt(1.0 + np.einsum("ij,ij->i", u, u))[:, None]
    mean = beta.mean(axis=0) if len(beta) else np.zeros(3)
    if not np.linalg.norm(mean) > 0:
        raise ScenarioError("directions", "the beam's mean velocity is zero; give a direction.")
    return mean / np.linalg.norm(mean)


def beam_resolved_band(result, directions, window="auto"):
    """(low, high) rad/s (n_dir,) every contributing particle resolves: the largest resolution
    and the smallest Nyquist limit over the particles (``spectrum.resolved_band``)."""
    from .spectrum import resolved_band

    require_particles(result)
    n = np.atleast_2d(np.asarray(directions, dtype=float))
    low = np.zeros(len(n))
    high = np.full(len(n), np.inf)
    for i in contributing_particles(result):
        lo, hi = resolved_band(result.particle(int(i)), n, window=window)
        low = np.maximum(low, np.where(np.isfinite(lo), lo, 0.0))
        high = np.minimum(high, hi)
    return np.where(low > 0, low, np.inf), high
