"""Field maps: E and/or B sampled on a regular 3-D grid or an axisymmetric r-z grid.

The file formats live in ``mapfile.py``. Here: the model (parameters, validation,
packing) and the compiled interpolation, which reads the map straight from the
shared 1-D ``data`` array (loaded once; nothing is copied per step).

Interpolation
-------------
- ``linear``: trilinear (bilinear in r-z), continuous, error O(h^2) for smooth fields.
- ``cubic``: the tensor product of Keys' cubic convolution kernel with a = -1/2
  (R. G. Keys, "Cubic convolution interpolation for digital image processing",
  IEEE Trans. Acoust. Speech Signal Process. 29, 1153 (1981)): 4 nodes per axis,
  C1-continuous, error O(h^3). At the first and last interval the missing node
  is Keys' boundary extrapolation f_-1 = 3 f_0 - 3 f_1 + f_2, which keeps the
  third order. Needs at least 4 nodes per axis.

Time dependence: F(r, t) = scale [F(r) cos(w t + phase) - F_imag(r) sin(w t + phase)]
(static map: w = 0, phase = 0 gives F(r)). Axisymmetric maps give (F_r, F_phi, F_z)
about an axis parallel to z through (offset_x, offset_y), turned into Cartesian
components with the azimuth of the point.

Outside the grid: ``outside = "stop"`` returns NaN, so the run stops there and the
engine names the reason through ``MODEL.outside``; ``"zero"`` returns no field.
"""

import math

from numba import njit

from ..config import DATA_OFFSET_SLOT, LEAF
from ..errors import ScenarioError
from .base import FieldModel, Param
from .mapfile import H_GEOMETRY, H_GROUPS, H_INV, H_N, H_ORIGIN, load_map

FIELD_MAP = 7

ORDERS = {"linear": 1, "cubic": 3}
OUTSIDE = {"stop": 0, "zero": 1}

# row layout: the grid itself is described by the header of the data block (mapfile.py)
SLOT_ORDER, SLOT_OUTSIDE, SLOT_SCALE, OMEGA_SLOT, SLOT_PHASE, SLOT_OFFSET = 0, 1, 2, 3, 4, 5
#: a grid coordinate this far (in cells) beyond the last node still counts as inside (round-off)
EDGE_TOLERANCE = 1e-9
NAN = float("nan")


@njit(**LEAF)
def axis_stencil(u, n, order):
    """Nodes and weights along one axis at grid coordinate u (in cells from the first node).

    Returns (start, count, (w0, w1, w2, w3)); start = -1 when u is outside [0, n - 1].
    """
    if n == 1:
        return 0, 1, (1.0, 0.0, 0.0, 0.0)
    if u < -EDGE_TOLERANCE or u > n - 1 + EDGE_TOLERANCE:
        return -1, 0, (0.0, 0.0, 0.0, 0.0)
    j = int(math.floor(u))
    if j < 0:
        j = 0
    if j > n - 2:
        j = n - 2
    s = u - j
    if order == 1:
        return j, 2, (1.0 - s, s, 0.0, 0.0)
    s2 = s * s
    s3 = s2 * s
    # Keys (1981) kernel, a = -1/2, for the nodes j-1, j, j+1, j+2
    wm = 0.5 * (-s3 + 2.0 * s2 - s)
    w0 = 0.5 * (3.0 * s3 - 5.0 * s2 + 2.0)
    w1 = 0.5 * (-3.0 * s3 + 4.0 * s2 + s)
    w2 = 0.5 * (s3 - s2)
    if j == 0:  # f_-1 = 3 f_0 - 3 f_1 + f_2
        return 0, 3, (w0 + 3.0 * wm, w1 - 3.0 * wm, w2 + wm, 0.0)
    if j == n - 2:  # f_n = 3 f_(n-1) - 3 f_(n-2) + f_(n-3)
        return j - 1, 3, (wm + w2, w0 - 3.0 * w2, w1 + 3.0 * w2, 0.0)
    return j - 1, 4, (wm, w0, w1, w2)


@njit(**LEAF)
def weighted_sum(data, base, n1, n2, s0, c0, w0, s1, c1, w1, s2, c2, w2):
    """Sum of w0[a] w1[b] w2[c] f[s0 + a, s1 + b, s2 + c] over one component stored at data[base:]."""
    total = 0.0
    for a in range(c0):
        row0 = (s0 + a) * n1
        for b in range(c1):
            row1 = (row0 + s1 + b) * n2
            wab = w0[a] * w1[b]
            for c in range(c2):
                total += wab * w2[c] * data[base + row1 + s2 + c]
    return total


@njit(**LEAF)
def field_map_field(p, i, data, x, y, z, t):
    """Interpolated map field (V/m, T) at (x, y, z) m, t s; see the module docstring."""
    start = int(p[i, DATA_OFFSET_SLOT])
    n0 = int(data[start + H_N])
    n1 = int(data[start + H_N + 1])
    n2 = int(data[start + H_N + 2])
    order = int(p[i, SLOT_ORDER])
    dx = x - p[i, SLOT_OFFSET]
    dy = y - p[i, SLOT_OFFSET + 1]
    dz = z - p[i, SLOT_OFFSET + 2]
    axisymmetric = data[start + H_GEOMETRY] == 1.0
    cphi = 1.0
    sphi = 0.0
    if axisymmetric:
        r = math.sqrt(dx * dx + dy * dy)
        if r > 0.0:
            cphi = dx / r
            sphi = dy / r
        u0 = (r - data[start + H_ORIGIN]) * data[start + H_INV]
        u1 = (dz - data[start + H_ORIGIN + 1]) * data[start + H_INV + 1]
        u2 = 0.0
    else:
        u0 = (dx - data[start + H_ORIGIN]) * data[start + H_INV]
        u1 = (dy - data[start + H_ORIGIN + 1]) * data[start + H_INV + 1]
        u2 = (dz - data[start + H_ORIGIN + 2]) * data[start + H_INV + 2]
    s0, c0, w0 = axis_stencil(u0, n0, order)
    s1, c1, w1 = axis_stencil(u1, n1, order)
    s2, c2, w2 = axis_stencil(u2, n2, order)
    if s0 < 0 or s1 < 0 or s2 < 0:
        if p[i, SLOT_OUTSIDE] == 0.0:
            return NAN, NAN, NAN, NAN, NAN, NAN
        return 0.0, 0.0, 0.0, 0.0, 0.0, 0.0
    nodes = n0 * n1 * n2
    phase = p[i, OMEGA_SLOT] * t + p[i, SLOT_PHASE]
    scale = p[i, SLOT_SCALE]
    c_re = scale * math.cos(phase)
    c_im = -scale * math.sin(phase)
    out0 = out1 = out2 = out3 = out4 = out5 = 0.0
    for g in range(4):
        offset = data[start + H_GROUPS + g]
        factor = c_re if g < 2 else c_im
        if offset < 0.0 or factor == 0.0:
            continue
        base = start + int(offset)
        f0 = factor * weighted_sum(data, base, n1, n2, s0, c0, w0, s1, c1, w1, s2, c2, w2)
        f1 = factor * weighted_sum(data, base + nodes, n1, n2, s0, c0, w0, s1, c1, w1, s2, c2, w2)
        f2 = factor * weighted_sum(data, base + 2 * nodes, n1, n2, s0, c0, w0, s1, c1, w1, s2, c2, w2)
        if axisymmetric:  # (F_r, F_phi, F_z) -> Cartesian
            f0, f1 = f0 * cphi - f1 * sphi, f0 * sphi + f1 * cphi
        if g == 0 or g == 2:
            out0 += f0
            out1 += f1
            out2 += f2
        else:
            out3 += f0
            out4 += f1
            out5 += f2
    return out0, out1, out2, out3, out4, out5


@njit(**LEAF)
def field_map_rate(p, i, data, x, y, z, t, beta_x, beta_y, beta_z, gamma, qm):
    """Own time scale (rad/s): the angular frequency of a time-harmonic map (0 when static)."""
    return abs(p[i, OMEGA_SLOT])


# ---------------------------------------------------------------------- model
def _map(v, base_dir, key="file"):
    return load_map(v["file"], base_dir, key)


def _resolve(v, key, base_dir):
    data = _map(v, base_dir, f"{key}.file")
    if v["interpolation"] == "cubic":
        for n, axis in zip(data.shape, ("first", "second", "third")):
            if n < 4:
                raise ScenarioError(f"{key}.interpolation", f"'cubic' needs at least 4 nodes along each axis; the "
                                                            f"{axis} axis has {n}. Use 'linear'.")


def _pack(v):
    return [ORDERS[v["interpolation"]], OUTSIDE[v["outside"]], v["scale"], 2.0 * math.pi * v["frequency"],
            v["phase"], *v["offset"]]


def _data(v, base_dir):
    return _map(v, base_dir).block


def _data_bytes(v, base_dir):
    return _map(v, base_dir).block.nbytes


def _outside(v, x, base_dir=None):
    """Reason text when position x (m) lies outside the map's grid (and outside = "stop")."""
    if v["outside"] != "stop":
        return None
    try:
        data = _map(v, base_dir)
    except ScenarioError:
        return f"left the field map {v['file']!r}"
    offset = v["offset"]
    if data.geometry == "axisymmetric":
        r = math.hypot(x[0] - offset[0], x[1] - offset[1])
        coords, names = (r, x[2] - offset[2]), ("r", "z")
    else:
        coords, names = tuple(x[j] - offset[j] for j in range(3)), ("x", "y", "z")
    for c, name, (low, high), d in zip(coords, names, data.extent, data.spacing):
        if c < low - EDGE_TOLERANCE * d or c > high + EDGE_TOLERANCE * d:
            return (f"left the field map {v['file']!r} at {name} = {c:.6g} m (map covers {low:.6g} .. {high:.6g} m "
                    "in its own coordinates)")
    return None


def _domain(v):
    return ("grid", f"inside the grid of {v['file']!r}; outside it the field is "
                    + ("undefined (the particle stops)" if v["outside"] == "stop" else "taken as zero"))


MODEL = FieldModel(
    name="field-map", code=FIELD_MAP, label="Field map (file)",
    params=(
        Param("file", "path", doc="HDF5 (.h5) or CSV map, relative to the scenario file"),
        Param("interpolation", "choice", default="linear", choices=tuple(ORDERS),
              doc="linear: trilinear, O(h^2); cubic: Keys cubic convolution, O(h^3), needs 4+ nodes per axis"),
        Param("scale", "scalar", "dimensionless", 1.0, doc="factor on every field value (e.g. a coil current ratio)"),
        Param("offset", "vector", "length", (0.0, 0.0, 0.0), doc="where the map's origin sits in the scenario"),
        Param("outside", "choice", default="stop", choices=tuple(OUTSIDE),
              doc="outside the grid: stop the particle (reason recorded) or take the field as zero"),
        Param("frequency", "scalar", "frequency", 0.0,
              doc="time-harmonic maps: F cos(2 pi f t + phase) - F_imag sin(...); 0 for a static map"),
        Param("phase", "scalar", "angle", 0.0, doc="phase of the harmonic time dependence at t = 0"),
    ),
    pack=_pack,
    doc=("E and/or B on a regular x-y-z grid or an axisymmetric r-z grid (axis along z), from an HDF5 or CSV "
         "file with units; trilinear or cubic interpolation; the particle stops (or the field is zero) "
         "outside the grid."),
    domain=_domain,
    resolve=_resolve,
    data=_data,
    data_bytes=_data_bytes,
    outside=_outside,
    rate_label="period of the map's time dependence",
)

