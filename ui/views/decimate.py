"""Fewer points for drawing long runs (display only: the data and exports keep every state)."""

import math

import numpy as np

#: most points drawn per orbit curve (browsers stay fluid well beyond this; common practice, no source)
MAX_ORBIT_POINTS = 20_000

#: cells per side of the grid a projected path is kept to (about 7x the plot's pixels, so a
#: zoom by that much still shows the true path; display only)
PATH_CELLS = 2_000

#: cells per side of the density image that replaces a path too dense to draw as a line
DENSITY_CELLS = 400

#: buckets per time series; each keeps its minimum and maximum so narrow peaks survive
MAX_SERIES_BUCKETS = 2_000


def stride_indices(n, max_points):
    """Indices 0, k, 2k, ... plus the last one, at most about ``max_points`` of them."""
    if n <= max_points:
        return np.arange(n)
    step = math.ceil(n / max_points)
    idx = np.arange(0, n, step)
    if idx[-1] != n - 1:
        idx = np.append(idx, n - 1)
    return idx


def minmax_indices(columns, max_buckets):
    """Sorted indices that keep the minimum and maximum of every column in each bucket.

    Parameters
    ----------
    columns : sequence of ndarray, each shape (n,)
    max_buckets : int

    Returns
    -------
    ndarray of int
        Includes the first and last index; all indices when n is small.
    """
    n = len(columns[0]) if columns else 0
    if n <= 2 * max_buckets:
        return np.arange(n)
    size = math.ceil(n / max_buckets)
    buckets = math.ceil(n / size)
    starts = np.arange(buckets) * size
    keep = [np.array([0, n - 1])]
    for column in columns:
        values = np.asarray(column, dtype=float)
        finite = np.where(np.isfinite(values), values, 0.0)
        padded_hi = np.full(buckets * size, -np.inf)
        padded_lo = np.full(buckets * size, np.inf)
        padded_hi[:n] = finite
        padded_lo[:n] = finite
        keep.append(starts + padded_hi.reshape(buckets, size).argmax(axis=1))
        keep.append(starts + padded_lo.reshape(buckets, size).argmin(axis=1))
    idx = np.unique(np.concatenate(keep))
    return idx[idx < n]


def path_indices(h, v, lo, hi, cells=PATH_CELLS):
    """Indices that keep a projected path's shape on a ``cells`` x ``cells`` grid.

    A state is kept when it lies in another grid cell than the state before it, so the
    drawn polyline never leaves the path by more than one cell (no chords across the
    orbit, whatever its period); the first and last states are always kept.

    Parameters
    ----------
    h, v : ndarray (n,)
        Horizontal and vertical coordinates (m).
    lo, hi : (float, float)
        Lower and upper bound of (h, v) (m), e.g. the plot window.
    """
    n = len(h)
    if n <= 2:
        return np.arange(n)
    ih = _cell(h, lo[0], hi[0], cells)
    iv = _cell(v, lo[1], hi[1], cells)
    code = ih * (cells + 1) + iv
    keep = np.flatnonzero(np.diff(code) != 0) + 1
    return np.unique(np.concatenate([[0], keep, [n - 1]]))


def density_image(h, v, lo, hi, cells=DENSITY_CELLS):
    """Visits per cell of a ``cells`` x ``cells`` grid over [lo, hi] (rows along v), float (cells, cells)."""
    counts, _, _ = np.histogram2d(v, h, bins=cells, range=[[lo[1], hi[1]], [lo[0], hi[0]]])
    return counts


def _cell(values, lo, hi, cells):
    span = hi - lo
    if not span > 0:
        return np.zeros(len(values), dtype=np.int64)
    scaled = np.floor((np.asarray(values, dtype=float) - lo) / span * cells)
    return np.clip(np.nan_to_num(scaled, nan=0.0), 0, cells).astype(np.int64)
