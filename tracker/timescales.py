"""The one time-scale routine: the fastest local angular rate a step must resolve.

Used by the run plan (the first step), by adaptive steps inside the kernel and by the
validity checks on saved states, so the three always agree. Rates in rad/s:

- relativistic gyration |q| |B|/(gamma m);
- electric-field rotation |q| |E|/(gamma m c) (the rate at which E turns or
  accelerates the momentum; it lets a pure E field plan a step);
- each field row's own rate from its module (``row_rate``): the laser frequency seen by
  the particle w (1 - n.beta), an undulator's period transit k_u c |beta_z| or its
  peak-field gyration, ...;
- with damping on, the radiative cooling rate P/(gamma m c^2) times
  ``COOLING_RESOLUTION``, so the split radiation kick stays a small change per step.
"""

import math

import numpy as np
from numba import njit

from . import constants as k
from .config import KERNEL, LEAF
from .fields.evaluate import field_at, row_rate
from .radiation.power import transverse_force_squared

#: source codes returned with the rate; a field row i reports FIELD_ROW + i
NO_SCALE, GYRATION, ELECTRIC, COOLING, FIELD_ROW = 0, 1, 2, 3, 10

#: the cooling rate P/(gamma m c^2) counts as a frequency this many times larger, i.e.
#: at most ~2 pi/(10 spp) of the energy is lost per step (common practice, no source).
COOLING_RESOLUTION = 10.0


@njit(**LEAF)
def fastest_rate(kinds, params, data, qm, cooling_scale, x, y, z, t, ux, uy, uz,
                 ex, ey, ez, fbx, fby, fbz):
    """(omega in rad/s, source code) of the fastest time scale at one state.

    qm = q/m (C/kg); cooling_scale = q^2 tau0/(m^3 c^2) in 1/(s (V/m)^2), so that the
    cooling rate is cooling_scale gamma f2 (0 when damping is off); position m, t s,
    u = gamma beta, E V/m and B T at the particle.
    """
    gamma = math.sqrt(1.0 + ux * ux + uy * uy + uz * uz)
    inv_g = 1.0 / gamma
    bx = ux * inv_g
    by = uy * inv_g
    bz = uz * inv_g
    omega = abs(qm) * math.sqrt(fbx * fbx + fby * fby + fbz * fbz) * inv_g
    source = GYRATION if omega > 0.0 else NO_SCALE
    w = abs(qm) * math.sqrt(ex * ex + ey * ey + ez * ez) * inv_g / k.c
    if w > omega:
        omega, source = w, ELECTRIC
    if cooling_scale != 0.0:
        f2 = transverse_force_squared(bx, by, bz, ex, ey, ez, fbx, fby, fbz)
        w = COOLING_RESOLUTION * cooling_scale * gamma * f2  # P/(gamma m c^2), times the resolution factor
        if w > omega:
            omega, source = w, COOLING
    for i in range(kinds.shape[0]):
        w = row_rate(kinds, params, data, i, x, y, z, t, bx, by, bz, gamma, qm)
        if not w <= omega:  # also takes NaN (unknown kind), which then stops the run loudly
            omega, source = w, FIELD_ROW + i
    return omega, source


@njit(**KERNEL)
def rates_at_states(kinds, params, data, qm, cooling_scale, t, x, u, out_rate, out_source):
    """Fill out_rate (n,) rad/s and out_source (n,) int64 for states t (n,) s, x (n, 3) m, u (n, 3)."""
    for i in range(t.shape[0]):
        f = field_at(kinds, params, data, x[i, 0], x[i, 1], x[i, 2], t[i])
        r = fastest_rate(kinds, params, data, qm, cooling_scale, x[i, 0], x[i, 1], x[i, 2], t[i],
                         u[i, 0], u[i, 1], u[i, 2], f[0], f[1], f[2], f[3], f[4], f[5])
        out_rate[i] = r[0]
        out_source[i] = r[1]


def rates(table, qm, cooling_scale, t, x, u):
    """Fastest rate (rad/s, shape (n,)) and its source code (int, shape (n,)) at saved states.

    table = (kinds, params, data); qm C/kg and cooling_scale 1/(s (V/m)^2) as in
    ``fastest_rate`` (0 for an undamped run); t (n,) or scalar s; x, u (n, 3).
    """
    kinds, params, data = table
    t = np.ascontiguousarray(np.broadcast_to(np.asarray(t, dtype=np.float64), (len(x),)))
    x = np.ascontiguousarray(x, dtype=np.float64)
    u = np.ascontiguousarray(u, dtype=np.float64)
    out_rate = np.empty(len(t))
    out_source = np.empty(len(t), dtype=np.int64)
    rates_at_states(kinds, params, data, float(qm), float(cooling_scale), t, x, u, out_rate, out_source)
    return out_rate, out_source


def describe(source, fields=()):
    """Words for a source code; ``fields`` are the scenario's FieldSpecs (for row labels)."""
    if source == GYRATION:
        return "relativistic gyration"
    if source == ELECTRIC:
        return "electric-field rotation"
    if source == COOLING:
        return "radiative cooling"
    if source >= FIELD_ROW:
        i = source - FIELD_ROW
        label = fields[i].model.rate_label if i < len(fields) else ""
        return f"field[{i}] {label or 'time scale'}"
    return "none"
