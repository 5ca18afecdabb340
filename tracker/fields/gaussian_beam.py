"""Focused laser pulse: the paraxial Gaussian beam with first-order longitudinal fields.

Beam (fundamental TEM00 mode; A. E. Siegman, *Lasers*, University Science Books 1986,
ch. 17 "Physical properties of Gaussian beams", chapter from memory). With zeta the
distance from the focus along the propagation direction n, rho the distance from
the axis, k = w/c = 2 pi/lambda:

    z_R = pi w0^2/lambda            Rayleigh length
    w(zeta) = w0 sqrt(1 + zeta^2/z_R^2)
    R(zeta) = zeta (1 + z_R^2/zeta^2)        wavefront radius (1/R = 0 at the focus)
    psi(zeta) = arctan(zeta/z_R)             Gouy phase
    U = (w0/w) exp(-rho^2/w^2) exp(i [psi - k rho^2/(2 R)])

Transverse field: the normalised vector potential a = a0 g(s) Re[U e^{i(w s + phase)}]
(e1 for linear polarisation; + e2 with a quarter-period lag for circular), s =
t - focus_time - zeta/c, with the envelope g of ``plane-wave`` (``envelope.py``) and
E_T = -(m_e c/e) da/dt, so that at the focus the pulse is the ``plane-wave`` pulse
times the transverse profile. B_T = n x E_T/c.

Longitudinal fields: the first order in 1/(k w0) of the expansion of Lax, Louisell
& McKnight, "From Maxwell to paraxial wave optics", Phys. Rev. A 11, 1365 (1975)
(see also Quesnel & Mora, Phys. Rev. E 58, 3719 (1998)). Written here as derived
from div E = 0 and div B = 0 with d/dzeta ~ -i k on the fast phase: with the
complex beam parameter 1/q = 1/R - 2 i/(k w^2),

    E_n = Re[-(xi E~_1 + eta E~_2)/q],   B_n = Re[-(xi B~_1 + eta B~_2)/q]

(xi, eta: coordinates along e1, e2; E~ the complex transverse components). The
divergence left over is of second order, ~ (1/(k w0))^2 of the field's gradient;
tests/test_gaussian_beam.py measures it. The model needs w0 >> lambda: below about
two wavelengths the paraxial expansion fails (``advice`` warns).
"""

import math

from numba import njit

from .. import constants as k
from ..config import LEAF
from .base import ABSENT, FieldModel, Param
from .envelope import ENVELOPES, envelope, pack_envelope
from .laser import _check as check_plane_wave
from .laser import a0_of, polarization_vectors

GAUSSIAN_BEAM = 8

#: waist below which the paraxial model is flagged, in wavelengths (common practice, no
#: source: the first neglected terms are ~ (lambda/(pi w0))^2 ~ 2.5 % at two wavelengths)
MIN_WAIST_WAVELENGTHS = 2.0

# row layout: omega and n share the plane-wave slots 1..4 (the kernel's time-scale rule reads them)
(SLOT_AMPLITUDE, SLOT_OMEGA, SLOT_N, SLOT_E1, SLOT_E2, SLOT_ENVELOPE, SLOT_WIDTH, SLOT_HELICITY, SLOT_PHASE,
 SLOT_FOCUS, SLOT_FOCUS_TIME, SLOT_ZR, SLOT_W0) = (0, 1, 2, 5, 8, 11, 12, 13, 14, 15, 18, 19, 20)


@njit(**LEAF)
def gaussian_beam_field(p, i, data, x, y, z, t):
    """E (V/m) and B (T) of the focused pulse at (x, y, z) m, t s (see the module docstring)."""
    rx = x - p[i, SLOT_FOCUS]
    ry = y - p[i, SLOT_FOCUS + 1]
    rz = z - p[i, SLOT_FOCUS + 2]
    nx, ny, nz = p[i, SLOT_N], p[i, SLOT_N + 1], p[i, SLOT_N + 2]
    e1x, e1y, e1z = p[i, SLOT_E1], p[i, SLOT_E1 + 1], p[i, SLOT_E1 + 2]
    e2x, e2y, e2z = p[i, SLOT_E2], p[i, SLOT_E2 + 1], p[i, SLOT_E2 + 2]
    zeta = nx * rx + ny * ry + nz * rz
    xi = e1x * rx + e1y * ry + e1z * rz
    eta = e2x * rx + e2y * ry + e2z * rz
    s = t - p[i, SLOT_FOCUS_TIME] - zeta / k.c
    g, dg = envelope(p[i, SLOT_ENVELOPE], p[i, SLOT_WIDTH], s)
    if g == 0.0 and dg == 0.0:
        return 0.0, 0.0, 0.0, 0.0, 0.0, 0.0
    w = p[i, SLOT_OMEGA]
    wavenumber = w / k.c
    z_r = p[i, SLOT_ZR]
    w0 = p[i, SLOT_W0]
    ratio2 = 1.0 + (zeta / z_r) ** 2
    w2 = w0 * w0 * ratio2
    inv_r = zeta / (zeta * zeta + z_r * z_r)
    rho2 = xi * xi + eta * eta
    magnitude = p[i, SLOT_AMPLITUDE] * math.exp(-rho2 / w2) / math.sqrt(ratio2)
    theta = w * s + p[i, SLOT_PHASE] + math.atan(zeta / z_r) - 0.5 * wavenumber * rho2 * inv_r
    cs = math.cos(theta)
    sn = math.sin(theta)
    # E~_1 = -|A U| (g' + i g w) e^{i theta};  E~_2 = -i h E~_1
    e1_re = -magnitude * (dg * cs - g * w * sn)
    e1_im = -magnitude * (dg * sn + g * w * cs)
    h = p[i, SLOT_HELICITY]
    e2_re = h * e1_im
    e2_im = -h * e1_re
    # -1/q = a + i b
    a = -inv_r
    b = 2.0 / (wavenumber * w2)
    en = a * (xi * e1_re + eta * e2_re) - b * (xi * e1_im + eta * e2_im)
    inv_c = 1.0 / k.c
    # B~_1 = -E~_2/c, B~_2 = E~_1/c (B_T = n x E_T/c)
    bn = (a * (eta * e1_re - xi * e2_re) - b * (eta * e1_im - xi * e2_im)) * inv_c
    b1 = -e2_re * inv_c
    b2 = e1_re * inv_c
    return (e1_re * e1x + e2_re * e2x + en * nx,
            e1_re * e1y + e2_re * e2y + en * ny,
            e1_re * e1z + e2_re * e2z + en * nz,
            b1 * e1x + b2 * e2x + bn * nx,
            b1 * e1y + b2 * e2y + bn * ny,
            b1 * e1z + b2 * e2z + bn * nz)


@njit(**LEAF)
def gaussian_beam_rate(p, i, data, x, y, z, t, beta_x, beta_y, beta_z, gamma, qm):
    """Laser frequency seen by the particle, w (1 - n.beta) in rad/s (the plane-wave rule)."""
    n_beta = p[i, SLOT_N] * beta_x + p[i, SLOT_N + 1] * beta_y + p[i, SLOT_N + 2] * beta_z
    return p[i, SLOT_OMEGA] * (1.0 - n_beta)


def rayleigh_length(v):
    """z_R = pi w0^2/lambda (m) of a gaussian-beam parameter set."""
    return math.pi * v["waist"] ** 2 / v["wavelength"]


def _check(v, key):
    # amplitude (a0 xor E0), direction and polarisation axis follow the plane-wave rules
    check_plane_wave(v, key)


def _pack(v):
    omega = 2.0 * math.pi * k.c / v["wavelength"]
    amplitude = a0_of(v) * k.m_e * k.c / k.e
    n, e1, e2 = polarization_vectors(v)
    code, width = pack_envelope(v["envelope"], v["duration"])
    return [amplitude, omega, *n, *e1, *e2, code, width, 1.0 if v["polarization"] == "circular" else 0.0,
            v["phase"], *v["focus"], v["focus_time"], rayleigh_length(v), v["waist"]]


def _domain(v):
    return ("paraxial", f"waist {v['waist']:.4g} m well above the wavelength {v['wavelength']:.4g} m; "
                        f"Rayleigh length {rayleigh_length(v):.4g} m")


def _advice(v, scenario=None):
    ratio = v["waist"] / v["wavelength"]
    if ratio >= MIN_WAIST_WAVELENGTHS:
        return []
    return [("domain", f"the waist is {ratio:.3g} wavelengths (< {MIN_WAIST_WAVELENGTHS:g}): the paraxial Gaussian "
                       f"beam with first-order longitudinal fields errs by ~(lambda/(pi w0))^2 = "
                       f"{(1.0 / (math.pi * ratio)) ** 2:.1%} and more near the focus; treat the fields as "
                       "qualitative or use a wider waist.")]


MODEL = FieldModel(
    name="gaussian-beam", code=GAUSSIAN_BEAM, label="Focused laser pulse (Gaussian beam)",
    params=(
        Param("a0", "scalar", "dimensionless", ABSENT, positive=True,
              doc="normalised amplitude e E0/(m_e c w) at the focus; or give E0"),
        Param("E0", "scalar", "electric_field", ABSENT, positive=True, doc="peak field at the focus; or give a0"),
        Param("wavelength", "scalar", "length", positive=True, doc="laser wavelength"),
        Param("waist", "scalar", "length", positive=True, doc="1/e^2 intensity radius w0 at the focus"),
        Param("direction", "vector", "dimensionless", (0.0, 0.0, 1.0), doc="propagation direction"),
        Param("polarization", "choice", default="linear", choices=("linear", "circular")),
        Param("polarization_axis", "vector", "dimensionless", ABSENT,
              doc="E direction at zero phase (made normal to direction)"),
        Param("envelope", "choice", default="gaussian", choices=ENVELOPES),
        Param("duration", "scalar", "time", positive=True, doc="FWHM of the intensity envelope"),
        Param("focus", "vector", "length", (0.0, 0.0, 0.0), doc="position of the focus"),
        Param("focus_time", "scalar", "time", 0.0, doc="when the envelope peak crosses the focus"),
        Param("phase", "scalar", "angle", 0.0, doc="carrier phase at the focus at the envelope peak"),
    ),
    pack=_pack,
    check=_check,
    doc=("Paraxial Gaussian beam (waist w0, Rayleigh length pi w0^2/lambda, Gouy phase, wavefront curvature) "
         "with first-order longitudinal E and B, and the plane-wave envelopes in time. Needs w0 >~ 2 lambda."),
    domain=_domain,
    advice=_advice,
    rate_label="laser period seen by the particle",
)
