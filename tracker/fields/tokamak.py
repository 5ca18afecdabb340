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
    # in units of R0: work that depends on the position alone would be hoisted out of the kernels'
    # loop over field rows and run on every step of every scenario (see DEVELOPERS.md, the hot loop)
    r0 = p[i, 0]
    inv_r0 = 1.0 / r0
    xi = x * inv_r0
    eta = y * inv_r0
    rho = math.sqrt(xi * xi + eta * eta)   # R/R0
    inv_rho = 1.0 / rho
    cphi = xi * inv_rho
    sphi = eta * inv_rho
    bphi = p[i, 1] * inv_rho
    pol = p[i, 1] / (p[i, 2] * r0 * rho)   # B0/(q R)
    b_rmaj = -pol * z
    bz = pol * (r0 * rho - r0)
    ephi = p[i, 3] * inv_r0 * inv_rho * (0.5 / math.pi)
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
