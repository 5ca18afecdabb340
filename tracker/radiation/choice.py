"""Which spectrum method is valid for an orbit, and the photon energies worth showing.

Two methods compute what a distant detector sees from a tracked orbit:

* the radiation integral (``spectrum``, "nufft"/"direct"): exact in one direction, but
  only up to the frequency the saved states sample (Nyquist; ``resolved_band``);
* the synchrotron formula (``synchrotron_spectrum``): the universal function with the
  local critical frequency, summed over directions. It assumes that the particle's
  velocity sweeps across the observer fast compared with the change of the orbit, i.e.
  that the orbit turns through many emission cones 1/gamma: a deflection parameter
  K = gamma theta_max >> 1 (wiggler, bend, intense laser). For K <~ 1 (an undulator) the
  emission is a line spectrum the formula does not describe (J. D. Jackson, Classical
  Electrodynamics, 3rd ed., sec. 14.7; X-ray Data Booklet sec. 2.1, from memory).

``choose_method(result)`` picks by that physics and says why in one line:

1. an open orbit whose saved sampling resolves the radiation integral up to
   ``COVERAGE`` times the largest critical frequency, recorded long enough that its
   frequency resolution is below that critical frequency: the radiation integral
   (exact; nothing is assumed about the orbit);
2. else a synchrotron-like orbit (K >= ``SYNCHROTRON_MIN_K``, or closed): the
   synchrotron formula;
3. else neither is valid: ScenarioError with what to change.

The photon-energy grid never exceeds the particle's largest kinetic energy (a photon
cannot carry more), and ``quantum_note`` says when hbar omega_c is a sizable fraction of
the particle's energy: the classical spectrum is then outside its validity (hbar
omega_c/E = (3/2) chi on a bend [derived from omega_c = (3/2) gamma^3 c/rho and
chi = gamma^2 hbar/(m c rho) for circular motion]).
"""

import math

import numpy as np

from .. import constants as k
from ..errors import ScenarioError

#: deflection parameter K = gamma theta_max from which an orbit counts as synchrotron-like
#: (wiggler regime; K <~ 1 is an undulator). Common practice, no source.
SYNCHROTRON_MIN_K = 5.0
#: the radiation integral covers the emission when it resolves this many critical
#: frequencies: F(x) has fallen to ~1e-4 of its peak at x = 10 [computed from the
#: universal function table of ``synchrotron.py``]; 3 keeps 99 % of the power
#: (common practice, no source).
COVERAGE = 3.0
#: an orbit is closed when its mean velocity is below this fraction of its speed
#: (the velocity turned through about a full circle).
CLOSED_MEAN_FRACTION = 0.1
#: hbar omega_c above this fraction of the particle's energy: quantum regime
#: (chi >~ 0.1, as in ``validity.CHI_QUANTUM``).
QUANTUM_FRACTION = 0.1
METHODS = ("auto", "nufft", "direct", "synchrotron")


def deflection_parameter(result):
    """K = gamma theta_max: the largest angle between the velocity and its mean direction,
    in units of the emission cone 1/gamma (median gamma of the record). inf for a closed orbit."""
    u = np.asarray(result.u, dtype=float)
    speed = np.linalg.norm(u, axis=1)
    moving = speed > 0
    if not np.any(moving):
        return 0.0
    unit = u[moving] / speed[moving, None]
    mean = unit.mean(axis=0)
    norm = float(np.linalg.norm(mean))
    if norm < CLOSED_MEAN_FRACTION:
        return math.inf
    cos = np.clip(unit @ (mean / norm), -1.0, 1.0)
    theta = float(np.arccos(cos).max())
    gamma = float(np.median(np.sqrt(1.0 + speed[moving] ** 2)))
    return gamma * theta


def is_closed(result):
    """True when the velocity turns through about a full circle (mean velocity ~ 0)."""
    return math.isinf(deflection_parameter(result))


def photon_ceiling(result):
    """Largest meaningful photon angular frequency (rad/s): the particle's largest
    kinetic energy over hbar (a photon cannot carry more energy than the particle has)."""
    ke = float(np.max(result.kinetic_energy))
    return ke / k.hbar if ke > 0 else math.inf


def largest_critical_frequency(result):
    """max over saved states of the local critical frequency (3/2) gamma^3 c/rho, rad/s."""
    from .synchrotron import critical_frequency

    wc = critical_frequency(result)
    wc = wc[np.isfinite(wc)]
    return float(wc.max()) if wc.size else 0.0


def quantum_note(result):
    """'' or one sentence when hbar omega_c exceeds ``QUANTUM_FRACTION`` of the particle's energy."""
    wc = largest_critical_frequency(result)
    energy = float(np.max(result.gamma)) * result.rest_energy
    if not (wc > 0 and energy > 0):
        return ""
    ratio = k.hbar * wc / energy
    if ratio < QUANTUM_FRACTION:
        return ""
    return (f"hbar omega_c reaches {ratio:.2g} of the particle's energy: the classical spectrum is outside its "
            "validity there (quantum regime; photon recoil and the spin term change it)")


def check_synchrotron(result):
    """Refuse the synchrotron formula for an orbit that is not synchrotron-like (K < ``SYNCHROTRON_MIN_K``)."""
    kappa = deflection_parameter(result)
    if kappa < SYNCHROTRON_MIN_K:
        raise ScenarioError("method", f"the synchrotron formula does not hold for this orbit: it turns through "
                                      f"only gamma theta = {kappa:.2g} emission cones (needs >= "
                                      f"{SYNCHROTRON_MIN_K:g}; an undulator with K <~ 1 radiates lines, not a "
                                      "synchrotron continuum). Use the radiation integral (method nufft or auto).")
    return kappa


def choose_method(result, directions=None):
    """(method, reason): the spectrum method that is valid for this orbit, by the rules in
    the module docstring; raises ScenarioError("method") when neither is.

    Parameters
    ----------
    result : Result
    directions : array_like (n, 3), optional
        Observer directions for the radiation integral (default: the mean velocity).
    """
    from .spectrum import default_direction, resolved_band

    kappa = deflection_parameter(result)
    wc = largest_critical_frequency(result)
    closed = math.isinf(kappa)
    resolved, finest = 0.0, math.inf
    if not closed:
        n = (np.atleast_2d(np.asarray(directions, dtype=float)) if directions is not None
             else default_direction(result)[None, :])
        low, high = resolved_band(result, n)
        resolved, finest = float(np.min(high)), float(np.max(low))
    kappa_text = "a closed orbit" if closed else f"gamma theta = {kappa:.2g}"
    bound = "" if closed else f" >= {SYNCHROTRON_MIN_K:g}"
    if not closed and wc > 0 and resolved >= COVERAGE * wc and finest <= wc:
        return "nufft", (f"radiation integral: the saved states resolve it up to {resolved / wc:.3g} omega_c "
                         f"({kappa_text}); exact in the chosen direction")
    if wc <= 0:
        raise ScenarioError("method", "the orbit never bends (no transverse acceleration): it radiates nothing.")
    if kappa >= SYNCHROTRON_MIN_K:
        why = ("a closed orbit has no single forward direction" if closed else
               f"the saved states resolve the radiation integral only to {resolved / wc:.2g} omega_c")
        return "synchrotron", f"synchrotron formula: the orbit is synchrotron-like ({kappa_text}{bound}) and {why}"
    if finest > wc:
        sampling = (f"the record is too short for the radiation integral (its frequency resolution is "
                    f"{finest / wc:.2g} omega_c). Track for longer")
    else:
        sampling = (f"the saved states resolve the radiation integral only to {resolved / wc:.2g} omega_c. "
                    "Track with save_every = 1 and a smaller dt")
    raise ScenarioError("method", f"neither spectrum method is valid for this run: the orbit is not "
                                  f"synchrotron-like ({kappa_text} < {SYNCHROTRON_MIN_K:g}), where the synchrotron "
                                  f"formula fails, and {sampling}.")


def clip_to_ceiling(result, omega):
    """(omega (m,), note): the grid without frequencies above ``photon_ceiling``; note '' if none cut."""
    omega = np.asarray(omega, dtype=float)
    top = photon_ceiling(result)
    keep = omega <= top
    if np.all(keep):
        return omega, ""
    if np.count_nonzero(keep) < 2:
        raise ScenarioError("omega", f"the frequencies lie above the particle's kinetic energy "
                                     f"({k.hbar * top / k.e:.4g} eV): no photon can carry that much.")
    return omega[keep], (f"frequencies above the particle's kinetic energy ({k.hbar * top / k.e:.4g} eV) "
                         "were left out")
