"""Planar undulator with the ideal curl- and divergence-free transverse dependence."""

import math

from numba import njit

from .. import constants as k
from ..config import LEAF
from ..errors import ScenarioError
from .base import FieldModel, Param

UNDULATOR = 4


@njit(**LEAF)
def undulator_field(p, i, data, x, y, z, t):
    """Planar undulator, axis z, field along y (H. Wiedemann, Particle Accelerator Physics, chapter on insertion devices; from memory).

    Inside start <= z <= start + length (s = z - start, k = 2 pi/period):
        By = h B0 cosh(k y) sin(k s),  Bz = h B0 sinh(k y) cos(k s)
    which satisfies curl B = 0 and div B = 0 in each segment. Outside the field is zero.

    Ends: the length is a whole number N of periods and the first and last half
    periods have half strength (h = 1/2, else h = 1). The field on axis is then
    continuous (zero at both ends, so the leapfrog stays second order), the first
    field integral vanishes (a particle entering on axis leaves parallel to it),
    and inside the transverse velocity oscillates about zero (no mean angle); the
    exit is displaced by K period/(2 gamma).
    p = [B0, k, start, length].
    """
    s = z - p[i, 2]
    length = p[i, 3]
    if s < 0.0 or s > length:
        return 0.0, 0.0, 0.0, 0.0, 0.0, 0.0
    k = p[i, 1]
    half_period = math.pi / k
    b0 = p[i, 0]
    if s < half_period or s > length - half_period:
        b0 *= 0.5
    ky = k * y
    ks = k * s
    return 0.0, 0.0, 0.0, 0.0, b0 * math.cosh(ky) * math.sin(ks), b0 * math.sinh(ky) * math.cos(ks)


@njit(**LEAF)
def undulator_rate(p, i, data, x, y, z, t, bx, by, bz, gamma, qm):
    """Fastest undulator time scale in rad/s: the period transit k_u c |beta_z|, or the
    relativistic gyration |q| B0/(gamma m) at the peak field, whichever is faster."""
    transit = p[i, 1] * k.c * abs(bz)
    gyration = abs(qm * p[i, 0]) / gamma
    return transit if transit > gyration else gyration


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
    rate_label="undulator period transit or peak-field gyration",
    doc=("By = B0 cosh(ky) sin(ks) along z with half-strength end half-periods; "
         "deflection parameter K = e B0 period/(2 pi m_e c)."),
    domain=_domain,
)
