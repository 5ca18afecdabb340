"""Angular distribution of the instantaneous radiated power, dP/dOmega, along a tracked orbit.

The velocity comes from the Result (beta = u/gamma); the acceleration beta-dot
at each saved state follows from the Lorentz force with the fields at that
state's position and time,

    d(beta)/dt = q/(gamma m c) [E + c beta x B - (beta.E) beta],

the standard result for dv/dt (see ``tracker.radiation.power``). Radiation
reaction changes the acceleration by ~tau0 omega ~ 1e-6 of this in every
bundled scenario (|F_RR|/|F_L| ~ tau0 gamma omega_B = 1.1e-6 at gamma = 1000,
B = 1 T [computed from the Landau-Lifshitz force, Landau & Lifshitz vol. 2, sec. 76])
and is left out of the emission kernel.

Power per unit solid angle per unit *retarded* (emission) time t':

    dP(t')/dOmega = q^2/(16 pi^2 eps0 c) |n x ((n - beta) x beta_dot)|^2 / (1 - n.beta)^5

Its integral over the sphere is Lienard's power, the ``power`` column of a
Result. Per unit *observer* time it carries one more factor 1/(1 - n.beta).

References
----------
.. [1] J. D. Jackson, "Classical Electrodynamics", 3rd ed. (1999), sec. 14.3,
   eq. (14.38) (general case, Gaussian units; e^2 -> q^2/(4 pi eps0)),
   (14.39)-(14.44) (linear and circular cases). Equation numbers from memory.
"""

import math

import numpy as np
from numba import njit

from .. import constants as k
from ..config import KERNEL
from ..errors import ScenarioError
from ..fields.evaluate import field_at

#: per unit of which time the power is given: emission time t' or arrival time t
TIME_BASES = ("retarded", "observer")


@njit(**KERNEL)
def _beta_dot_along(kinds, params, data, qmc, t, x, u, out):
    """Fill out (n, 3) with d(beta)/dt in 1/s from the Lorentz force; qmc = q/(m c) in C s/(kg m)."""
    c = k.c
    for i in range(t.shape[0]):
        ex, ey, ez, bx, by, bz = field_at(kinds, params, data, x[i, 0], x[i, 1], x[i, 2], t[i])
        g = math.sqrt(1.0 + u[i, 0] * u[i, 0] + u[i, 1] * u[i, 1] + u[i, 2] * u[i, 2])
        b0 = u[i, 0] / g
        b1 = u[i, 1] / g
        b2 = u[i, 2] / g
        be = b0 * ex + b1 * ey + b2 * ez
        scale = qmc / g
        out[i, 0] = scale * (ex + c * (b1 * bz - b2 * by) - be * b0)
        out[i, 1] = scale * (ey + c * (b2 * bx - b0 * bz) - be * b1)
        out[i, 2] = scale * (ez + c * (b0 * by - b1 * bx) - be * b2)


def orbit_kinematics(result, index=None):
    """Velocity and acceleration of the saved states, both in units of c.

    Parameters
    ----------
    result : Result
    index : int or slice, optional
        Saved states to use (all when None).

    Returns
    -------
    beta : ndarray, shape (n, 3)
        v/c (dimensionless).
    beta_dot : ndarray, shape (n, 3), 1/s
        d(beta)/dt from the Lorentz force with the fields at (x, t) of each state;
        radiation reaction (~1e-6 of it) is neglected.
    """
    from ..result import validated_arrays

    sel = slice(None) if index is None else index
    # shapes and dtypes checked before anything reaches the compiled loop (a hand-built or
    # damaged Result must give an error, not a crash)
    arrays = validated_arrays({"t": np.atleast_1d(result.t[sel]), "x": np.atleast_2d(result.x[sel]),
                               "u": np.atleast_2d(result.u[sel])}, "result", names=("t", "x", "u"))
    t, x, u = arrays["t"], arrays["x"], arrays["u"]
    kinds, params, data = result.scenario.field_table
    particle = result.scenario.particle
    out = np.zeros_like(x)
    _beta_dot_along(kinds, params, data, particle.charge / (particle.mass * k.c), t, x, u, out)
    gamma = np.sqrt(1.0 + np.einsum("ij,ij->i", u, u))
    return u / gamma[:, None], out


def one_minus_n_dot_beta(u, directions):
    """1 - n.beta without cancellation for gamma >> 1, shape (n_states, n_directions).

    Uses 1 - n.beta = 1/(gamma^2 (1 + |beta|)) + |beta| |n - beta_hat|^2 / 2
    (exact identity; the naive difference loses ~2 log10(gamma) digits).

    Parameters
    ----------
    u : ndarray, shape (n_states, 3)
        gamma beta (dimensionless).
    directions : ndarray, shape (n_directions, 3)
        Unit vectors.
    """
    u = np.atleast_2d(u)
    umag = np.sqrt(np.einsum("ij,ij->i", u, u))
    gamma = np.sqrt(1.0 + umag * umag)
    beta = umag / gamma
    safe = np.where(umag > 0, umag, 1.0)
    bhat = u / safe[:, None]
    # |n - bhat|^2 = 2 (1 - n.bhat), computed from the difference vector
    diff = directions[None, :, :] - bhat[:, None, :]
    d2 = np.einsum("ijk,ijk->ij", diff, diff)
    d2 = np.where(umag[:, None] > 0, d2, 0.0)
    return 1.0 / (gamma * gamma * (1.0 + beta))[:, None] + 0.5 * beta[:, None] * d2


def radiation_pattern(charge, u, beta_dot, directions, per="retarded"):
    """dP/dOmega in W/sr of one charge with velocity u/gamma and acceleration beta_dot.

    Parameters
    ----------
    charge : float, C
    u : array_like, shape (3,)
        gamma beta (dimensionless).
    beta_dot : array_like, shape (3,), 1/s
    directions : array_like, shape (m, 3)
        Unit vectors n towards the observer.
    per : {"retarded", "observer"}
        Power per unit emission time t' (integrates to Lienard's power over the
        sphere) or per unit arrival time (one more factor 1/(1 - n.beta)).

    Returns
    -------
    ndarray, shape (m,), W/sr

    Notes
    -----
    Jackson 3rd ed. eq. (14.38) in SI (from memory): q^2/(16 pi^2 eps0 c)
    |n x ((n - beta) x beta_dot)|^2/(1 - n.beta)^5.
    """
    if per not in TIME_BASES:
        raise ScenarioError("per", f"must be one of {', '.join(map(repr, TIME_BASES))}, not {per!r}.")
    u = np.asarray(u, dtype=float).reshape(1, 3)
    bd = np.asarray(beta_dot, dtype=float).reshape(3)
    n = np.atleast_2d(np.asarray(directions, dtype=float))
    gamma = math.sqrt(1.0 + float(u[0] @ u[0]))
    beta = u[0] / gamma
    denom = one_minus_n_dot_beta(u, n)[0]
    # n x ((n - beta) x bd) = (n - beta)(n.bd) - bd (1 - n.beta)
    vec = (n - beta) * (n @ bd)[:, None] - bd[None, :] * denom[:, None]
    num = np.einsum("ij,ij->i", vec, vec)
    power = 5 if per == "retarded" else 6
    return charge**2 / (16.0 * math.pi**2 * k.epsilon_0 * k.c) * num / denom**power


def _axis_frame(axis, u, beta_dot):
    """Orthonormal (e1, e2, e3) with e3 the polar axis for the angles theta, phi."""
    if isinstance(axis, str):
        if axis == "z":
            return np.eye(3)
        if axis != "velocity":
            raise ScenarioError("axis", f"must be 'z', 'velocity' or a 3-vector, not {axis!r}.")
        norm = float(np.linalg.norm(u))
        if norm == 0.0:
            raise ScenarioError("axis", "'velocity' needs a moving particle; this state is at rest.")
        e3 = np.asarray(u, dtype=float) / norm
        ref = np.asarray(beta_dot, dtype=float)
    else:
        e3 = np.asarray(axis, dtype=float).reshape(-1)
        if e3.shape != (3,) or not np.all(np.isfinite(e3)) or not np.linalg.norm(e3) > 0:
            raise ScenarioError("axis", f"must be 'z', 'velocity' or a non-zero 3-vector, not {axis!r}.")
        e3 = e3 / np.linalg.norm(e3)
        ref = np.array([1.0, 0.0, 0.0])
    e1 = ref - (ref @ e3) * e3
    if np.linalg.norm(e1) < 1e-12 * max(1.0, np.linalg.norm(ref)):
        # acceleration along the axis (or none): any perpendicular will do
        trial = np.array([1.0, 0.0, 0.0]) if abs(e3[0]) < 0.9 else np.array([0.0, 1.0, 0.0])
        e1 = trial - (trial @ e3) * e3
    e1 /= np.linalg.norm(e1)
    return np.array([e1, np.cross(e3, e1), e3])


def direction_grid(theta, phi, frame=None):
    """Unit vectors for polar angles theta (from e3) and azimuths phi (from e1 towards e2).

    Parameters
    ----------
    theta : array_like, shape (n_theta,), rad
    phi : array_like, shape (n_phi,), rad
    frame : ndarray, shape (3, 3), optional
        Rows e1, e2, e3; the lab axes x, y, z when None.

    Returns
    -------
    ndarray, shape (n_theta, n_phi, 3)
    """
    theta = np.asarray(theta, dtype=float).reshape(-1)
    phi = np.asarray(phi, dtype=float).reshape(-1)
    frame = np.eye(3) if frame is None else np.asarray(frame, dtype=float)
    st, ct = np.sin(theta)[:, None], np.cos(theta)[:, None]
    sp, cp = np.sin(phi)[None, :], np.cos(phi)[None, :]
    local = np.stack([st * cp, st * sp, ct * np.ones_like(cp)], axis=-1)
    return local @ frame


def angular_distribution(result, index, theta, phi, axis="z", per="retarded"):
    """Instantaneous dP/dOmega of one saved state on a theta x phi grid, W/sr.

    Parameters
    ----------
    result : Result
    index : int
        Saved state (negative counts from the end).
    theta : array_like, shape (n_theta,), rad
        Polar angle of the observer direction n from the axis.
    phi : array_like, shape (n_phi,), rad
        Azimuth of n around the axis.
    axis : "z", "velocity" or array_like, shape (3,)
        ``"z"``: theta from lab +z, phi from +x towards +y. ``"velocity"``:
        theta from the instantaneous velocity and phi from the component of the
        acceleration normal to it (Jackson's angles for the circular case).
        A 3-vector: theta from it, phi from the part of +x (or +y) normal to it.
    per : {"retarded", "observer"}
        Per unit emission time t' (default; integrates over the sphere to the
        Liénard power ``result.power[index]``) or per unit arrival time.

    Returns
    -------
    ndarray, shape (n_theta, n_phi), W/sr
    """
    n_states = len(result.t)
    if isinstance(index, bool) or not isinstance(index, (int, np.integer)) or not -n_states <= index < n_states:
        raise ScenarioError("index", f"must be a saved-state index in [-{n_states}, {n_states - 1}], not {index!r}.")
    index = int(index) % n_states
    beta, beta_dot = orbit_kinematics(result, slice(index, index + 1))
    u = result.u[index]
    frame = _axis_frame(axis, u, beta_dot[0])
    grid = direction_grid(theta, phi, frame)
    shape = grid.shape[:2]
    values = radiation_pattern(result.scenario.particle.charge, u, beta_dot[0], grid.reshape(-1, 3), per=per)
    return values.reshape(shape)
