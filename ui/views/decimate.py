"""Fewer points for drawing long runs (display only: the data and exports keep every state)."""

import math

import numpy as np

#: most points drawn per orbit curve (browsers stay fluid well beyond this; common practice, no source)
MAX_ORBIT_POINTS = 20_000

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
