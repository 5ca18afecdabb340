"""Plane-wave laser pulse defined through its vector potential (exact Maxwell solution).

Amplitude: give one of ``a0``, ``E0`` or ``intensity``. With a0 = e E0/(m_e omega c)
(E0 the peak amplitude of each field component) and the cycle-averaged peak intensity
I = eps0 c E0^2/2 for linear and I = eps0 c E0^2 for circular polarisation (two
components of amplitude E0 in quadrature; Jackson sec. 7.1, from memory):

    a0 = (e lambda/(2 pi m_e c^2)) sqrt(2 I/(eps0 c))     linear
       = 0.855 sqrt(I[1e18 W/cm^2]) lambda[um]            linear
       = 0.855 sqrt(I[1e18 W/cm^2]) lambda[um] / sqrt(2)  circular

(the numerical form: G. A. Mourou, T. Tajima and S. V. Bulanov, Rev. Mod. Phys. 78,
309 (2006), sec. II, from memory; ``a0_from_intensity`` evaluates the exact form with
CODATA constants, 0.8549 for linear). For circular polarisation a0 is the amplitude of
each of the two components, so |a| = a0 at every phase and the same a0 carries twice
the intensity of a linear wave.
"""

import math

from numba import njit

from .. import constants as k
from ..config import LEAF
from ..errors import ScenarioError
from .base import ABSENT, FieldModel, Param, cross, dot, unit_vector
from .envelope import ENVELOPE_GAUSSIAN, ENVELOPE_SIN2, SIN2_FWHM_FRACTION, envelope, pack_envelope  # noqa: F401

PLANE_WAVE = 5


@njit(**LEAF)
def plane_wave_field(p, i, data, x, y, z, t):
    """Plane-wave pulse from the normalised vector potential a(s), s = t - n.(r - r_peak)/c.

    a(s) = a0 g(s) [e1 cos(w s + phase) + h e2 sin(w s + phase)],  h = 0 linear, 1 circular
    E = -(m_e c/e) da/ds,  B = n x E / c   (Jackson sec. 7.1, from memory; a0 = e E0/(m_e c w)).
    Defining the envelope on the potential keeps the pulse free of a DC part.
    p = [A (= a0 m_e c/e, V s/m), w, nx, ny, nz, e1(3), h*e2(3), envelope, width, n.r_peak, phase].
    """
    w = p[i, 1]
    s = t - (p[i, 2] * x + p[i, 3] * y + p[i, 4] * z - p[i, 13]) / k.c
    g, dg = envelope(p[i, 11], p[i, 12], s)
    if g == 0.0 and dg == 0.0:
        return 0.0, 0.0, 0.0, 0.0, 0.0, 0.0
    ph = w * s + p[i, 14]
    cs = math.cos(ph)
    sn = math.sin(ph)
    # E = -A [g' (e1 cos + e2 sin) + g w (-e1 sin + e2 cos)]
    c1 = -p[i, 0] * (dg * cs - g * w * sn)
    c2 = -p[i, 0] * (dg * sn + g * w * cs)
    ex = c1 * p[i, 5] + c2 * p[i, 8]
    ey = c1 * p[i, 6] + c2 * p[i, 9]
    ez = c1 * p[i, 7] + c2 * p[i, 10]
    inv_c = 1.0 / k.c
    bx = (p[i, 3] * ez - p[i, 4] * ey) * inv_c
    by = (p[i, 4] * ex - p[i, 2] * ez) * inv_c
    bz = (p[i, 2] * ey - p[i, 3] * ex) * inv_c
    return ex, ey, ez, bx, by, bz


def a0_from_intensity(intensity, wavelength, polarization="linear"):
    """a0 of a plane wave of cycle-averaged peak intensity (W/m^2) and wavelength (m).

    a0 = e E0/(m_e omega c) with I = eps0 c E0^2/2 (linear) or eps0 c E0^2 (circular);
    see the module docstring for the numerical form and its source.
    """
    share = 2.0 if polarization == "linear" else 1.0
    e0 = math.sqrt(share * intensity / (k.epsilon_0 * k.c))
    omega = 2.0 * math.pi * k.c / wavelength
    return e0 * k.e / (k.m_e * k.c * omega)


def intensity_from_a0(a0, wavelength, polarization="linear"):
    """Cycle-averaged peak intensity (W/m^2) of a plane wave of amplitude a0 and wavelength (m)."""
    return intensity_from_a0_unit(wavelength, polarization) * a0 * a0


def intensity_from_a0_unit(wavelength, polarization="linear"):
    """Intensity (W/m^2) at a0 = 1 (the inverse of ``a0_from_intensity`` squared)."""
    return 1.0 / a0_from_intensity(1.0, wavelength, polarization) ** 2


@njit(**LEAF)
def plane_wave_rate(p, i, data, x, y, z, t, bx, by, bz, gamma, qm):
    """Laser angular frequency seen by the particle, w (1 - n.beta) in rad/s (Doppler shift)."""
    return p[i, 1] * (1.0 - (p[i, 2] * bx + p[i, 3] * by + p[i, 4] * bz))


def a0_of(v):
    """a0 of a plane-wave parameter set (from a0, E0 or intensity), dimensionless."""
    if v.get("a0") is not None:
        return v["a0"]
    if v.get("intensity") is not None:
        return a0_from_intensity(v["intensity"], v["wavelength"], v.get("polarization", "linear"))
    omega = 2.0 * math.pi * k.c / v["wavelength"]
    return v["E0"] * k.e / (k.m_e * k.c * omega)


def polarization_vectors(v):
    """(n, e1, e2): propagation direction and the two polarisation unit vectors."""
    n = unit_vector(v["direction"], "direction")
    axis = v.get("polarization_axis")
    if axis is None:
        trial = (1.0, 0.0, 0.0) if abs(n[0]) < 0.9 else (0.0, 1.0, 0.0)
    else:
        trial = axis
    along = dot(trial, n)
    e1 = unit_vector(tuple(a - along * b for a, b in zip(trial, n)), "polarization_axis")
    return n, e1, cross(n, e1)


def _check(v, key):
    given = [name for name in ("a0", "E0", "intensity") if v.get(name) is not None]
    if len(given) != 1:
        raise ScenarioError(f"{key}.{given[1] if given else 'a0'}", "give exactly one of a0, E0 and intensity"
                            + (f", not {' and '.join(given)}." if given else "."))
    unit_vector(v["direction"], f"{key}.direction")
    axis = v.get("polarization_axis")
    if axis is not None:
        n = unit_vector(v["direction"], f"{key}.direction")
        a = unit_vector(axis, f"{key}.polarization_axis")
        if abs(dot(a, n)) > 1.0 - 1e-9:
            raise ScenarioError(f"{key}.polarization_axis", f"must not be parallel to direction, not {list(axis)!r}.")


def _pack(v):
    omega = 2.0 * math.pi * k.c / v["wavelength"]
    amplitude = a0_of(v) * k.m_e * k.c / k.e
    n, e1, e2 = polarization_vectors(v)
    h = 1.0 if v["polarization"] == "circular" else 0.0
    code, width = pack_envelope(v["envelope"], v["duration"])
    return [amplitude, omega, *n, *e1, *(h * c for c in e2), code, width, dot(n, v["peak_position"]), v["phase"]]


MODEL = FieldModel(
    name="plane-wave", code=PLANE_WAVE, label="Plane-wave laser pulse",
    params=(
        Param("a0", "scalar", "dimensionless", ABSENT, positive=True, doc="normalised amplitude e E0/(m_e c w); or give E0"),
        Param("E0", "scalar", "electric_field", ABSENT, positive=True, doc="peak field amplitude; or give a0"),
        Param("intensity", "scalar", "intensity", ABSENT, positive=True,
              doc="cycle-averaged peak intensity, e.g. '2e20 W/cm**2'; or give a0"),
        Param("wavelength", "scalar", "length", positive=True, doc="laser wavelength"),
        Param("direction", "vector", "dimensionless", (0.0, 0.0, 1.0), doc="propagation direction"),
        Param("polarization", "choice", default="linear", choices=("linear", "circular")),
        Param("polarization_axis", "vector", "dimensionless", ABSENT, doc="E direction at zero phase (made normal to direction)"),
        Param("envelope", "choice", default="sin2", choices=("sin2", "gaussian")),
        Param("duration", "scalar", "time", positive=True, doc="FWHM of the intensity envelope"),
        Param("peak_position", "vector", "length", (0.0, 0.0, 0.0), doc="where the envelope peak is at t = 0"),
        Param("phase", "scalar", "angle", 0.0, doc="carrier phase at the envelope peak"),
    ),
    pack=_pack,
    check=_check,
    rate_label="laser period seen by the particle",
    doc=(
        "Plane wave from a(s) = a0 g(s) cos(w s + phase) on the vector potential. `duration` is the "
        "FWHM of the intensity |a|^2 envelope; for sin2 the amplitude envelope is cos^2(pi s/T) over a "
        "full length T = duration/0.364. Circular: each of the two components has amplitude a0. "
        "Intensity: a0 = 0.855 sqrt(I/1e18 W/cm^2) lambda/um (linear; circular divides by sqrt 2)."
    ),
)
