"""The one field dispatcher every kernel uses: sum of all components of a field table."""

import numpy as np
from numba import njit

from ..config import KERNEL, LEAF
from .expression import EXPRESSION, expression_field
from .fieldmap import FIELD_MAP, field_map_field
from .gaussian_beam import GAUSSIAN_BEAM, gaussian_beam_field
from .laser import PLANE_WAVE, plane_wave_field
from .static import DIPOLE, MIRROR, UNIFORM, dipole_field, mirror_field, uniform_field
from .tokamak import TOKAMAK, tokamak_field
from .undulator import UNDULATOR, undulator_field

NAN = float("nan")


@njit(**LEAF)
def field_at(kinds, params, data, x, y, z, t):
    """E (V/m) and B (T) at (x, y, z) in m and t in s, summed over the table rows.

    ``data`` is the 1-D float64 bulk array (field maps, expression programs); each
    model finds its block at ``params[i, DATA_OFFSET_SLOT]``. An unknown kind code
    gives NaN (the run stops and says so) rather than a silent zero.
    """
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
        elif kind == FIELD_MAP:
            f = field_map_field(p, i, data, x, y, z, t)
        elif kind == GAUSSIAN_BEAM:
            f = gaussian_beam_field(p, i, data, x, y, z, t)
        elif kind == EXPRESSION:
            f = expression_field(p, i, data, x, y, z, t)
        else:
            f = (NAN, NAN, NAN, NAN, NAN, NAN)
        ex += f[0]
        ey += f[1]
        ez += f[2]
        bx += f[3]
        by += f[4]
        bz += f[5]
    return ex, ey, ez, bx, by, bz


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
    if points.shape[-1] != 3:
        raise ValueError(f"positions must have shape (n, 3), not {points.shape}.")
    out_e = np.zeros_like(points)
    out_b = np.zeros_like(points)
    fields_on_points(kinds, params, data, points, float(t), out_e, out_b)
    return out_e, out_b
