"""Sample a scenario's fields on a grid and write them as a field map (``radorbit fieldmap``).

The written file is read back by the ``field-map`` field type, so a user can move
between an analytic (or formula) field and its mapped form and compare orbits.
"""

import math

import numpy as np

from .errors import ScenarioError
from .fields.mapfile import AXES, COMPONENTS, write_map
from .units import parse_scalar

#: grid points evaluated per call (bounds the temporary memory to ~100 MB)
CHUNK_POINTS = 1_000_000


def _length(text, key):
    """A plain number (m) or a length with units ('1cm')."""
    try:
        return parse_scalar(float(text), "length", key)
    except ValueError:
        return parse_scalar(text, "length", key)


def parse_grid(specs):
    """['x=-1cm:1cm:21', 'y=...', 'z=...'] or ['r=0:1cm:11', 'z=...'] -> (geometry, {axis: 1-D array in m})."""
    axes = {}
    for spec in specs:
        name, sep, rest = spec.partition("=")
        name = name.strip()
        key = f"--grid {spec}"
        parts = rest.split(":")
        if not sep or name not in ("x", "y", "z", "r") or len(parts) != 3:
            raise ScenarioError(key, "write each axis as name=low:high:count, e.g. x=-1cm:1cm:21 (names x, y, z or r, z).")
        low, high = (_length(part, key) for part in parts[:2])
        try:
            count = int(parts[2])
        except ValueError:
            raise ScenarioError(key, f"the node count must be a whole number, not {parts[2]!r}.") from None
        if count < 2 or not high > low:
            raise ScenarioError(key, "needs high > low and at least 2 nodes.")
        if name in axes:
            raise ScenarioError(key, f"axis {name!r} given twice.")
        axes[name] = np.linspace(low, high, count)
    geometry = "axisymmetric" if "r" in axes else "cartesian"
    if set(axes) != set(AXES[geometry]):
        raise ScenarioError("--grid", f"give the axes {', '.join(AXES[geometry])} for a {geometry} map, "
                                      f"not {', '.join(axes) or 'none'}.")
    if geometry == "axisymmetric" and axes["r"][0] < 0:
        raise ScenarioError("--grid", "r must not be negative.")
    return geometry, axes


def sample(scenario, geometry, axes, t, progress=None):
    """{dataset name: array on the grid} of E (V/m) and B (T) at time t (s).

    Axisymmetric grids are sampled in the x-z half-plane (azimuth 0), where
    (F_r, F_phi, F_z) = (F_x, F_y, F_z).
    """
    names = AXES[geometry]
    grids = np.meshgrid(*[axes[a] for a in names], indexing="ij")
    shape = grids[0].shape
    if geometry == "axisymmetric":
        points = np.column_stack([grids[0].ravel(), np.zeros(grids[0].size), grids[1].ravel()])
    else:
        points = np.column_stack([g.ravel() for g in grids])
    e = np.empty_like(points)
    b = np.empty_like(points)
    for start in range(0, len(points), CHUNK_POINTS):
        stop = min(start + CHUNK_POINTS, len(points))
        e[start:stop], b[start:stop] = scenario.fields_at(points[start:stop], t)
        if progress is not None:
            progress(stop / len(points))
    bad = ~(np.all(np.isfinite(e), axis=1) & np.all(np.isfinite(b), axis=1))
    if np.any(bad):
        where = points[np.argmax(bad)]
        raise ScenarioError("--grid", f"the fields are not finite at {np.count_nonzero(bad)} grid nodes (first at "
                                      f"{where.tolist()} m): a singularity or a map's edge; move or shrink the grid.")
    out = {}
    for letter, values in (("E", e), ("B", b)):
        if not np.any(values):
            continue  # leave out a field that is zero everywhere (a magnet map has no E)
        for index, comp in enumerate(COMPONENTS[geometry]):
            out[f"{letter}{comp}"] = values[:, index].reshape(shape)
    if not out:
        raise ScenarioError("--grid", "the fields are zero everywhere on this grid; nothing to write.")
    return out


def export_field_map(scenario, specs, path, t=0.0, frequency=0.0, progress=None):
    """Sample ``scenario``'s fields on the grid ``specs`` (see ``parse_grid``) and write ``path``.

    With ``frequency`` f (Hz) > 0 the fields are taken as time-harmonic: the in-phase part
    at t and the quadrature part from t + 1/(4 f) (F_imag = -F(t + T/4)), so that the
    map with that frequency reproduces F(t) cos(2 pi f (t' - t)) - F_imag sin(...).
    Returns (path, geometry, shape).
    """
    geometry, axes = parse_grid(specs)
    report = (lambda f: progress(0.5 * f)) if (progress and frequency) else progress
    fields = sample(scenario, geometry, axes, t, report)
    if frequency:
        later = sample(scenario, geometry, axes, t + 0.25 / frequency,
                       (lambda f: progress(0.5 + 0.5 * f)) if progress else None)
        fields.update({f"{name}_imag": -values for name, values in later.items()})
    attrs = {"source": scenario.title or "radorbit scenario", "sampled_at_time_s": float(t)}
    if frequency:
        attrs["frequency_Hz"] = float(frequency)
        attrs["note"] = f"load with frequency = {frequency!r} and phase = {-2 * math.pi * frequency * t!r}"
    write_map(path, geometry, axes, fields, attrs)
    return path, geometry, tuple(len(axes[a]) for a in AXES[geometry])
