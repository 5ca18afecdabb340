"""Circular large-aspect-ratio tokamak: toroidal 1/R field, poloidal field from a safety factor."""

import math

from numba import njit

from ..config import LEAF
from .base import FieldModel, Param

TOKAMAK = 6


@njit(**LEAF)
def tokamak_field(p, i, data, x, y, z, t):
    """Axisymmetric tokamak field about the z axis (J. Wesson, Tokamaks, ch. 3, large aspect ratio; chapter from memory).

    B_phi = B0 R0/R; poloidal field from the flux psi = B0 r^2/(2 q), r^2 = (R - R0)^2 + z^2:
    B_R = -(1/R) dpsi/dz, B_z = (1/R) dpsi/dR, exactly divergence-free, so the field-line
    safety factor is q R0/R ~ q. Loop voltage gives E_phi = V/(2 pi R).
    p = [R0, B0, q, V_loop].
    """
    rmaj = math.sqrt(x * x + y * y)
    inv_r = 1.0 / rmaj
    cphi = x * inv_r
    sphi = y * inv_r
    bphi = p[i, 1] * p[i, 0] * inv_r
    pol = p[i, 1] / (p[i, 2] * rmaj)
    b_rmaj = -pol * z
    bz = pol * (rmaj - p[i, 0])
    ephi = p[i, 3] / (2.0 * math.pi * rmaj)
    return (-ephi * sphi, ephi * cphi, 0.0,
            b_rmaj * cphi - bphi * sphi, b_rmaj * sphi + bphi * cphi, bz)


def _pack(v):
    return [v["R0"], v["B0"], v["q"], v["loop_voltage"]]


def _domain(v):
    return ("large-aspect-ratio", f"minor radius small against R0 = {v['R0']:g} m")


MODEL = FieldModel(
    name="tokamak", code=TOKAMAK, label="Tokamak (circular, large aspect ratio)",
    params=(
        Param("R0", "scalar", "length", positive=True, doc="major radius of the magnetic axis"),
        Param("B0", "scalar", "magnetic_field", doc="toroidal field on the axis"),
        Param("q", "scalar", "dimensionless", positive=True, doc="safety factor"),
        Param("loop_voltage", "scalar", "voltage", 0.0, doc="toroidal loop voltage"),
    ),
    pack=_pack,
    doc="Major axis along z through the origin; toroidal field B0 R0/R, constant-q poloidal field.",
    domain=_domain,
)
