"""Planar undulator with the ideal curl- and divergence-free transverse dependence."""

import math

from numba import njit

from ..config import LEAF
from ..errors import ScenarioError
from .base import FieldModel, Param

UNDULATOR = 4


@njit(**LEAF)
def undulator_field(p, i, x, y, z, t):
    """Planar undulator, axis z, field along y (Wiedemann, Particle Accelerator Physics, ch. on insertion devices).

    Inside start <= z <= start + length (s = z - start, k = 2 pi/period):
        By = B0 cosh(k y) cos(k s),  Bz = -B0 sinh(k y) sin(k s)
    which satisfies curl B = 0 and div B = 0 exactly. Outside the field is zero.

    Ends: the field starts and stops with hard edges and the length is a whole
    number of periods. Then both the first field integral (int By ds = 0: exit
    angle zero) and the first moment (int int By = 0: exit offset zero) vanish,
    so a particle entering on axis leaves on axis and parallel to it.
    p = [B0, k, start, length].
    """
    s = z - p[i, 2]
    if s < 0.0 or s > p[i, 3]:
        return 0.0, 0.0, 0.0, 0.0, 0.0, 0.0
    k = p[i, 1]
    ky = k * y
    ks = k * s
    return 0.0, 0.0, 0.0, 0.0, p[i, 0] * math.cosh(ky) * math.cos(ks), -p[i, 0] * math.sinh(ky) * math.sin(ks)


def _check(v, key):
    periods = v["length"] / v["period"]
    if abs(periods - round(periods)) > 1e-6 * max(1.0, periods) or round(periods) < 1:
        raise ScenarioError(
            f"{key}.length",
            f"must be a whole number of periods (period {v['period']:g} m), not {v['length']:g} m "
            f"({periods:.6g} periods).",
        )


def _pack(v):
    return [v["B0"], 2.0 * math.pi / v["period"], v["start"], v["length"]]


def _domain(v):
    return ("aperture", f"|k y| small (cosh growth off the mid-plane), period {v['period']:g} m")


MODEL = FieldModel(
    name="undulator", code=UNDULATOR, label="Planar undulator",
    params=(
        Param("B0", "scalar", "magnetic_field", doc="peak field on axis"),
        Param("period", "scalar", "length", positive=True, doc="undulator period lambda_u"),
        Param("length", "scalar", "length", positive=True, doc="magnetic length, a whole number of periods"),
        Param("start", "scalar", "length", 0.0, doc="z where the field begins"),
    ),
    pack=_pack,
    check=_check,
    doc="By = B0 cosh(ky) cos(ks) along z; deflection parameter K = e B0 period/(2 pi m_e c).",
    domain=_domain,
)
