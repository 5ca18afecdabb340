"""The field dispatchers every kernel uses: the sum of all rows of a field table, and their time scales.

A field table is three arrays: ``kinds`` (int64, one kind code per row), ``params``
(float64, one row of ``config.FIELD_PARAMS`` slots per component) and ``data``
(float64, 1-D bulk data such as field maps; a row finds its block through the offset
in ``params[i, DATA_OFFSET_SLOT]``). Both dispatchers switch on the kind code; an
unknown code gives NaN (the particle stops as non-finite), never a silent zero.
``tracker.compile`` refuses such a table before it reaches a kernel.
"""

import math

import numpy as np
from numba import njit

from ..config import KERNEL, LEAF
from .expression import EXPRESSION, expression_field, expression_rate
from .fieldmap import FIELD_MAP, field_map_field, field_map_rate
from .gaussian_beam import GAUSSIAN_BEAM, gaussian_beam_field, gaussian_beam_rate
from .laser import PLANE_WAVE, plane_wave_field, plane_wave_rate
from .static import DIPOLE, MIRROR, UNIFORM, dipole_field, mirror_field, uniform_field
from .tokamak import TOKAMAK, tokamak_field
from .undulator import UNDULATOR, undulator_field, undulator_rate

#: kind code -> evaluator name, for the registry test (every code reachable, none twice)
EVALUATORS = {UNIFORM: "uniform_field", PLANE_WAVE: "plane_wave_field", UNDULATOR: "undulator_field",
              MIRROR: "mirror_field", DIPOLE: "dipole_field", TOKAMAK: "tokamak_field",
              FIELD_MAP: "field_map_field", GAUSSIAN_BEAM: "gaussian_beam_field", EXPRESSION: "expression_field"}
#: kind code -> rate leaf name for the models that have their own time scale
RATES = {PLANE_WAVE: "plane_wave_rate", UNDULATOR: "undulator_rate", FIELD_MAP: "field_map_rate",
         GAUSSIAN_BEAM: "gaussian_beam_rate", EXPRESSION: "expression_rate"}


@njit(**LEAF)
def field_row(kinds, params, data, i, x, y, z, t):
    """E (V/m) and B (T) of table row ``i`` at (x, y, z) m, t s; NaN for an unknown kind."""
    kind = kinds[i]
    p = params  # evaluators index params[i, j]: a row view here would cost a refcount per call
    # one exit: several returns defeat numba's reference-count pruning (an atomic op per array per call)
    if kind == UNIFORM:
        f = uniform_field(p, i, data, x, y, z, t)
    elif kind == PLANE_WAVE:
        f = plane_wave_field(p, i, data, x, y, z, t)
    elif kind == UNDULATOR:
        f = undulator_field(p, i, data, x, y, z, t)
    elif kind == MIRROR:
        f = mirror_field(p, i, data, x, y, z, t)
    elif kind == DIPOLE:
        f = dipole_field(p, i, data, x, y, z, t)
    elif kind == TOKAMAK:
        f = tokamak_field(p, i, data, x, y, z, t)
    elif kind == FIELD_MAP:
        f = field_map_field(p, i, data, x, y, z, t)
    elif kind == GAUSSIAN_BEAM:
        f = gaussian_beam_field(p, i, data, x, y, z, t)
    elif kind == EXPRESSION:
        f = expression_field(p, i, data, x, y, z, t)
    else:
        f = (math.nan, math.nan, math.nan, math.nan, math.nan, math.nan)
    return f


@njit(**KERNEL)
def bulk_field(kind, p, i, data, x, y, z, t):
    """Field maps and formula fields, kept out of line: their loops, stencils and scratch
    arrays inlined into ``field_at`` would defeat numba's reference-count pruning of the whole
    step loop (atomic operations on every step of every scenario, measured 2x slower); out of
    line they cost one call where they are used. NaN for an unknown kind."""
    if kind == FIELD_MAP:
        f = field_map_field(p, i, data, x, y, z, t)
    elif kind == GAUSSIAN_BEAM:
        f = gaussian_beam_field(p, i, data, x, y, z, t)
    elif kind == EXPRESSION:
        f = expression_field(p, i, data, x, y, z, t)
    else:
        f = (math.nan, math.nan, math.nan, math.nan, math.nan, math.nan)
    return f


#: kinds evaluated out of line (``bulk_fields_at``): their loops, stencils and scratch arrays
#: inlined into the step loop would defeat numba's reference-count pruning of the whole loop
#: (atomic operations on every step of every scenario, measured 2x slower)
BULK_KINDS = (FIELD_MAP, EXPRESSION, GAUSSIAN_BEAM)


@njit(**LEAF)
def analytic_field_at(kinds, params, data, x, y, z, t):
    """E (V/m) and B (T) at (x, y, z) m, t s from the rows evaluated inline (bulk rows add zero,
    an unknown kind gives NaN). The kernels add ``bulk_fields_at`` when the table has bulk rows."""
    ex = ey = ez = bx = by = bz = 0.0
    for i in range(kinds.shape[0]):
        kind = kinds[i]
        p = params  # evaluators index params[i, j]: a row view here would cost a refcount per call
        if kind == UNIFORM:
            f = uniform_field(p, i, data, x, y, z, t)
        elif kind == PLANE_WAVE:
            f = plane_wave_field(p, i, data, x, y, z, t)
        elif kind == UNDULATOR:
            f = undulator_field(p, i, data, x, y, z, t)
        elif kind == MIRROR:
            f = mirror_field(p, i, data, x, y, z, t)
        elif kind == DIPOLE:
            f = dipole_field(p, i, data, x, y, z, t)
        elif kind == TOKAMAK:
            f = tokamak_field(p, i, data, x, y, z, t)
        elif kind == FIELD_MAP or kind == EXPRESSION or kind == GAUSSIAN_BEAM:
            f = (0.0, 0.0, 0.0, 0.0, 0.0, 0.0)
        else:
            f = (math.nan, math.nan, math.nan, math.nan, math.nan, math.nan)
        ex += f[0]
        ey += f[1]
        ez += f[2]
        bx += f[3]
        by += f[4]
        bz += f[5]
    return ex, ey, ez, bx, by, bz


@njit(**KERNEL)
def bulk_fields_at(kinds, params, data, x, y, z, t):
    """E (V/m) and B (T) of the bulk rows (field maps, formulas, focused beams), out of line."""
    ex = ey = ez = bx = by = bz = 0.0
    for i in range(kinds.shape[0]):
        kind = kinds[i]
        if kind == FIELD_MAP:
            f = field_map_field(params, i, data, x, y, z, t)
        elif kind == EXPRESSION:
            f = expression_field(params, i, data, x, y, z, t)
        elif kind == GAUSSIAN_BEAM:
            f = gaussian_beam_field(params, i, data, x, y, z, t)
        else:
            continue
        ex += f[0]
        ey += f[1]
        ez += f[2]
        bx += f[3]
        by += f[4]
        bz += f[5]
    return ex, ey, ez, bx, by, bz


@njit(**LEAF)
def has_bulk_rows(kinds):
    """True when the table has a row evaluated by ``bulk_fields_at``."""
    for i in range(kinds.shape[0]):
        if kinds[i] == FIELD_MAP or kinds[i] == EXPRESSION or kinds[i] == GAUSSIAN_BEAM:
            return True
    return False


@njit(**LEAF)
def field_at(kinds, params, data, x, y, z, t):
    """E (V/m) and B (T) at (x, y, z) in m and t in s, summed over the table rows.

    For callers outside the step loops (validity, spectra, previews); the loops call
    ``analytic_field_at`` and, when ``has_bulk_rows``, ``bulk_fields_at`` themselves.
    """
    f = analytic_field_at(kinds, params, data, x, y, z, t)
    if has_bulk_rows(kinds):
        g = bulk_fields_at(kinds, params, data, x, y, z, t)
        f = (f[0] + g[0], f[1] + g[1], f[2] + g[2], f[3] + g[3], f[4] + g[4], f[5] + g[5])
    return f


@njit(**LEAF)
def row_rate(kinds, params, data, i, x, y, z, t, bx, by, bz, gamma, qm):
    """The model's own angular rate (rad/s) for row ``i``, 0 if it has none; beta = (bx, by, bz)."""
    kind = kinds[i]
    if kind == PLANE_WAVE:
        w = plane_wave_rate(params, i, data, x, y, z, t, bx, by, bz, gamma, qm)
    elif kind == UNDULATOR:
        w = undulator_rate(params, i, data, x, y, z, t, bx, by, bz, gamma, qm)
    elif kind == GAUSSIAN_BEAM:
        w = gaussian_beam_rate(params, i, data, x, y, z, t, bx, by, bz, gamma, qm)
    elif kind == FIELD_MAP:
        w = field_map_rate(params, i, data, x, y, z, t, bx, by, bz, gamma, qm)
    elif kind == EXPRESSION:
        w = expression_rate(params, i, data, x, y, z, t, bx, by, bz, gamma, qm)
    elif kind == UNIFORM or kind == MIRROR or kind == DIPOLE or kind == TOKAMAK:
        w = 0.0
    else:
        w = math.nan
    return w


@njit(**KERNEL)
def fields_on_points(kinds, params, data, points, t, out_e, out_b):
    """Fill out_e, out_b (n, 3) with E (V/m) and B (T) at points (n, 3) in m at time t (s)."""
    for i in range(points.shape[0]):
        f = field_at(kinds, params, data, points[i, 0], points[i, 1], points[i, 2], t)
        out_e[i, 0] = f[0]
        out_e[i, 1] = f[1]
        out_e[i, 2] = f[2]
        out_b[i, 0] = f[3]
        out_b[i, 1] = f[4]
        out_b[i, 2] = f[5]


def evaluate(kinds, params, data, points, t):
    """E, B arrays (n, 3) in SI at positions ``points`` (n, 3) m and time t (s)."""
    points = np.ascontiguousarray(np.atleast_2d(points), dtype=np.float64)
    if points.ndim != 2 or points.shape[-1] != 3:
        raise ValueError(f"positions must have shape (n, 3), not {points.shape}.")
    t = np.asarray(t, dtype=np.float64)
    if t.ndim != 0:
        raise ValueError(f"the time must be one number in s, not an array of shape {t.shape}.")
    out_e = np.zeros_like(points)
    out_b = np.zeros_like(points)
    fields_on_points(kinds, params, data, points, float(t), out_e, out_b)
    return out_e, out_b
