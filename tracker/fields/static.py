"""Static analytic fields: uniform E and B, paraxial magnetic mirror, magnetic dipole."""

import math

from numba import njit

from ..config import LEAF
from ..constants import mu_0
from .base import FieldModel, Param

UNIFORM = 1
MIRROR = 2
DIPOLE = 3


@njit(**LEAF)
def uniform_field(p, i, data, x, y, z, t):
    """Uniform E (V/m) in p[0:3] and B (T) in p[3:6]."""
    return p[i, 0], p[i, 1], p[i, 2], p[i, 3], p[i, 4], p[i, 5]


@njit(**LEAF)
def mirror_field(p, i, data, x, y, z, t):
    """Paraxial mirror, axis z: Bz = B0 (1 + z^2/L^2), Br = -B0 r z/L^2 (div B = 0).

    Chen, Introduction to Plasma Physics, sec. 2.3 (magnetic mirror; section from memory); the radial
    component follows from div B = 0 to first order in r/L.
    p = [B0, L, cx, cy, cz].
    """
    b0 = p[i, 0]
    inv_l2 = 1.0 / (p[i, 1] * p[i, 1])
    dx = x - p[i, 2]
    dy = y - p[i, 3]
    dz = z - p[i, 4]
    return 0.0, 0.0, 0.0, -b0 * dx * dz * inv_l2, -b0 * dy * dz * inv_l2, b0 * (1.0 + dz * dz * inv_l2)


@njit(**LEAF)
def dipole_field(p, i, data, x, y, z, t):
    """Point magnetic dipole B = mu0/(4 pi r^3) [3 (M.r^) r^ - M] (Jackson sec. 5.6, from memory).

    p = [mu0/(4 pi) Mx, My, Mz, cx, cy, cz]; infinite at the centre (caught as non-finite).
    """
    rx = x - p[i, 3]
    ry = y - p[i, 4]
    rz = z - p[i, 5]
    r2 = rx * rx + ry * ry + rz * rz
    inv_r = 1.0 / math.sqrt(r2)
    inv_r3 = inv_r * inv_r * inv_r
    m_dot_r = (p[i, 0] * rx + p[i, 1] * ry + p[i, 2] * rz) * inv_r * inv_r
    return (0.0, 0.0, 0.0,
            (3.0 * m_dot_r * rx - p[i, 0]) * inv_r3,
            (3.0 * m_dot_r * ry - p[i, 1]) * inv_r3,
            (3.0 * m_dot_r * rz - p[i, 2]) * inv_r3)


def _pack_uniform(v):
    return [*v["E"], *v["B"]]


def _pack_mirror(v):
    return [v["B0"], v["L"], *v["center"]]


def _pack_dipole(v):
    scale = mu_0 / (4.0 * math.pi)
    return [scale * m for m in v["moment"]] + list(v["center"])


def _mirror_domain(v):
    return ("paraxial", f"radius from the axis small against L = {v['L']:.4g} m")


def _dipole_domain(v):
    return ("far field", "well outside the magnetised body it stands for; the point-dipole field diverges at the centre")


UNIFORM_MODEL = FieldModel(
    name="uniform", code=UNIFORM, label="Uniform E and B",
    params=(
        Param("E", "vector", "electric_field", (0.0, 0.0, 0.0), doc="electric field vector"),
        Param("B", "vector", "magnetic_field", (0.0, 0.0, 0.0), doc="magnetic field vector"),
    ),
    pack=_pack_uniform,
    doc="Uniform, static E and B; either may be left out (zero).",
)

MIRROR_MODEL = FieldModel(
    name="mirror", code=MIRROR, label="Magnetic mirror (paraxial)",
    params=(
        Param("B0", "scalar", "magnetic_field", doc="field on axis at the centre"),
        Param("L", "scalar", "length", positive=True, doc="length over which Bz doubles"),
        Param("center", "vector", "length", (0.0, 0.0, 0.0), doc="centre of the trap"),
    ),
    pack=_pack_mirror,
    doc="Bz = B0 (1 + z^2/L^2), Br = -B0 r z/L^2 about an axis along z; valid for r << L.",
    domain=_mirror_domain,
)

DIPOLE_MODEL = FieldModel(
    name="dipole", code=DIPOLE, label="Magnetic dipole",
    params=(
        Param("moment", "vector", "magnetic_moment", doc="dipole moment vector"),
        Param("center", "vector", "length", (0.0, 0.0, 0.0), doc="position of the dipole"),
    ),
    pack=_pack_dipole,
    doc="Point dipole B = mu0/(4 pi r^3) [3 (M.r^) r^ - M] (e.g. a planetary field).",
    domain=_dipole_domain,
)
