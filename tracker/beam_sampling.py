"""Sampling a [beam]: N particles about a centroid, drawn once in Python (deterministic).

Definitions (SI; what ``[beam]`` keys mean):

- **axes**: d is the unit direction of the centroid momentum. The transverse axes are
  e1 = (y-hat x d) / |y-hat x d| (horizontal: perpendicular to y and d) and e2 = d x e1;
  for a beam along +-y, e1 = x-hat minus its component along d. For a beam along +z,
  (e1, e2) = (x-hat, y-hat); along -z, (-x-hat, y-hat).
- **energy_spread** sigma_E: gamma_i = gamma0 (1 + sigma_E n_i), so the relative rms of
  gamma is sigma_E.
- **divergence** (sigma_1, sigma_2): the slopes u.e1/u.d and u.e2/u.d (the trace-space
  angles x', y' of accelerator optics) have rms sigma_1, sigma_2; |u_i| = sqrt(gamma_i^2 - 1).
- **size** (s_x, s_y, s_z): x_i = x0 + s * n_i along the lab axes.
- **distribution**: n_i standard normal ("gaussian") or uniform on [-sqrt(3), sqrt(3)]
  ("uniform", unit rms).

The generator is ``numpy.random.Generator(PCG64(seed))`` and the draws come in a fixed
order: positions (N, 3), then gamma (N,), then the two angles (N, 2), whatever spreads
are zero, so changing one spread leaves the other coordinates' draws unchanged. A zero
spread leaves that coordinate an exact copy of the centroid's (no arithmetic on it): a
beam with no spread, size or divergence is N bit-identical copies of its centroid.
"""

import math

import numpy as np

from .errors import ScenarioError

UNIFORM_HALF_WIDTH = math.sqrt(3.0)  #: uniform on [-a, a] has rms a / sqrt(3)


def transverse_axes(direction):
    """(e1, e2) unit vectors perpendicular to ``direction`` (3,), as defined in the module docstring."""
    d = np.asarray(direction, dtype=float)
    d = d / math.sqrt(float(d @ d))
    e1 = np.cross([0.0, 1.0, 0.0], d)
    norm = math.sqrt(float(e1 @ e1))
    if norm < 1e-6:
        e1 = np.array([1.0, 0.0, 0.0]) - d[0] * d
        norm = math.sqrt(float(e1 @ e1))
    e1 = e1 / norm
    return e1, np.cross(d, e1)


def _unit_draws(rng, shape, distribution):
    if distribution == "uniform":
        return rng.uniform(-UNIFORM_HALF_WIDTH, UNIFORM_HALF_WIDTH, size=shape)
    return rng.standard_normal(size=shape)


def sample_beam(reference, beam):
    """(x (N, 3) m, u (N, 3) gamma*beta, weight (N,)) of a sampled beam.

    ``reference`` is the centroid ParticleSpec, ``beam`` the BeamSpec. Raises
    ScenarioError naming ``beam.energy_spread`` if a sampled gamma falls below 1.
    """
    n = beam.count
    rng = np.random.Generator(np.random.PCG64(beam.seed))
    draws_x = _unit_draws(rng, (n, 3), beam.distribution)
    draws_gamma = _unit_draws(rng, n, beam.distribution)
    draws_angle = _unit_draws(rng, (n, 2), beam.distribution)

    x = np.empty((n, 3))
    x[:] = np.asarray(reference.position, dtype=float)
    for axis, size in enumerate(beam.size):
        if size > 0:
            x[:, axis] += size * draws_x[:, axis]

    u0 = np.asarray(reference.u, dtype=float)
    u = np.empty((n, 3))
    u[:] = u0
    sigma_1, sigma_2 = beam.divergence_pair
    if beam.energy_spread == 0 and sigma_1 == 0 and sigma_2 == 0:
        return x, u, np.ones(n)

    p0 = math.sqrt(float(u0 @ u0))
    gamma0 = math.sqrt(1.0 + p0 * p0)
    if beam.energy_spread > 0:
        gamma = gamma0 * (1.0 + beam.energy_spread * draws_gamma)
        below = int(np.count_nonzero(~(gamma >= 1.0)))
        if below:
            raise ScenarioError("beam.energy_spread", f"{below} of {n} sampled particles fall below gamma = 1 "
                                                      f"(centroid gamma {gamma0:.6g}); reduce the spread, not "
                                                      f"{beam.energy_spread!r}.")
        magnitude = np.sqrt((gamma - 1.0) * (gamma + 1.0))
    else:
        magnitude = np.full(n, p0)
    if sigma_1 == 0 and sigma_2 == 0:
        u[:] = magnitude[:, None] * (u0 / p0)
        return x, u, np.ones(n)

    d = reference.direction if reference.direction is not None else u0 / p0
    d = np.asarray(d, dtype=float)
    e1, e2 = transverse_axes(d)
    slope_1 = sigma_1 * draws_angle[:, 0]
    slope_2 = sigma_2 * draws_angle[:, 1]
    along = magnitude / np.sqrt(1.0 + slope_1 * slope_1 + slope_2 * slope_2)
    u[:] = along[:, None] * (d[None, :] + slope_1[:, None] * e1[None, :] + slope_2[:, None] * e2[None, :])
    return x, u, np.ones(n)
