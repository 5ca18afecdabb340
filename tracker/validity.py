"""Validity checks on a finished run: warnings with advice, computed from the Result alone.

``check_result(result)`` returns a list of ``dict(kind, message, time)`` (time in s
of the worst or first offending saved state). The engine calls it after every run
and stores the list in ``Result.warnings``; the CLI prints it and the lab shows it.

Kinds
-----
resolution
    A local time scale (gyration, electric-field rotation, laser period seen by
    the particle, undulator period transit) is resolved by fewer than
    ``MIN_STEPS_PER_PERIOD`` steps, or radiation reaction removes more than
    ``MAX_LOSS_PER_STEP`` of the energy in one step.
quantum
    The quantum parameter chi exceeds ``CHI_QUANTUM``: classical emission is
    wrong and emission is stochastic (use ``quantum-stochastic``); at chi above
    ``CHI_PAIRS`` pair creation by the emitted photons matters, which no model here includes.
radiation-dominated
    R_c = alpha a0 chi >= 1 in a laser (Di Piazza et al. 2012), or the particle
    radiates more than its energy per period of its motion.
domain
    The particle left the region where a field model holds (paraxial mirror,
    undulator mid-plane, large-aspect-ratio tokamak, far field of a dipole).
nonfinite
    The run stopped on a NaN or Inf; the last good state is kept.
energy-balance
    Delta KE - (field work - radiated energy) exceeds ``ENERGY_BALANCE_LIMIT`` of the
    largest energy in the balance: the integration is wrong, not merely inexact. Such a
    result is not complete (``Result.complete`` is False; the CLI exits 3).
precision
    The damped run radiated less than double precision can resolve in gamma: the orbit
    cannot show the damping, although the radiated energy is still computed correctly.

The plan's own warnings (``RunPlan.warnings``: the step against the fastest initial time
scale, from the same resolution the plan chose) are carried by every run whose saved
states did not already show the under-resolution.

Checks see only the saved states (``run.save_every``): an excursion between two
saved states goes unnoticed. Fields are recomputed at the saved states with the
same compiled evaluator as the run.

References
----------
.. [1] A. Di Piazza, C. Mueller, K. Z. Hatsagortsyan and C. H. Keitel, "Extremely
   high-intensity laser interactions with fundamental quantum systems",
   Rev. Mod. Phys. 84, 1177 (2012): chi, and R_c = alpha a0 chi as the
   parameter of the radiation-dominated regime (section from memory).
.. [2] C. P. Ridgers et al., J. Plasma Phys. 83, 715830502 (2017); C. Niel et al.,
   Phys. Rev. E 97, 043209 (2018): stochastic emission matters for chi >~ 0.1.
"""

import math

import numpy as np

from . import constants as k
from .stops import StopReason
from .timescales import describe

#: largest accepted gyration-phase error per period. The Boris rotation turns by
#: 2 arctan(theta/2) instead of theta = omega dt, a relative frequency error of
#: theta^2/12 [derived]; 1 % per period is common practice, no source.
MAX_PHASE_ERROR = 0.01
#: steps per period below which "resolution" is raised: 2 pi/sqrt(12 MAX_PHASE_ERROR) ~ 18.
MIN_STEPS_PER_PERIOD = 2.0 * math.pi / math.sqrt(12.0 * MAX_PHASE_ERROR)
#: largest energy fraction radiation reaction may remove in one step: the damping is
#: split from the Lorentz push, which needs a small change per step (common practice,
#: no source).
MAX_LOSS_PER_STEP = 0.01
#: chi above which quantum emission matters: g(0.1) = 0.65, and emission is
#: stochastic (Ridgers et al. 2017; Niel et al. 2018; common practice).
CHI_QUANTUM = 0.1
#: chi from which the photons' own chi is of order one and pair creation by them (nonlinear
#: Breit-Wheeler) matters (Di Piazza et al. 2012, from memory; common practice).
CHI_PAIRS = 1.0
#: R_c = alpha a0 chi at which radiation reaction dominates (Di Piazza et al. 2012).
R_C_DOMINATED = 1.0
#: energy radiated per period of the motion, as a fraction of the energy, at which the
#: damping dominates a static-field orbit (common practice, no source; for a head-on
#: laser collision this ratio is (4 pi/3) R_c [derived]).
LOSS_PER_PERIOD_DOMINATED = 1.0
#: a laser counts as present where its field exceeds this fraction of its peak.
LASER_PRESENT = 1e-2

#: paraxial mirror: largest r/L. The next order of the paraxial expansion of a vacuum
#: field with Bz(0, z) = B0 (1 + z^2/L^2) adds -B0 r^2/(2 L^2) to Bz [derived from
#: div B = 0 and curl B = 0 to second order in r], 0.5 % of B0 at r/L = 0.1.
MIRROR_MAX_R_OVER_L = 0.1
#: undulator: largest |k y|; cosh(k y) - 1 = 10 % there (common practice, no source).
UNDULATOR_MAX_KY = math.acosh(1.1)
#: tokamak: largest minor radius over major radius, inverse aspect ratio 1/3 of a
#: typical device (common practice, no source); the model is a large-aspect-ratio one.
TOKAMAK_MAX_EPSILON = 1.0 / 3.0
#: dipole: closest approach as a fraction of the starting distance from the centre
#: (field 1000 times the starting one; the point dipole stands for a body of
#: unknown size; common practice, no source).
DIPOLE_MIN_FRACTION = 0.1

#: energy-balance residual (relative to the largest energy in the balance) above which a
#: run is flagged and not complete. Runs that resolve their time scales close the balance
#: to 1e-6 or better (bundled scenarios: tests/test_trust_run.py); 1 % means the step or the
#: damping went wrong (common practice, no source).
ENERGY_BALANCE_LIMIT = 1e-2
#: smallest radiated fraction of the energy the orbit can show: each step rounds gamma
#: with a relative error ~ eps = 2.2e-16 and the errors add like a random walk, ~ sqrt(N)
#: eps after N steps [derived]; the damping must exceed that by ``PRECISION_MARGIN`` to be
#: seen, and never less than ``PRECISION_FLOOR`` = 1e4 eps ~ 2e-12 (common practice, no
#: source; on the bundled radiation-belt scenario gamma rose by 1.5e-14 while 2e-13 of
#: the energy was radiated).
PRECISION_FLOOR = 1e4 * float(np.finfo(float).eps)
PRECISION_MARGIN = 10.0
#: warning kinds after which a result is not complete (see ``Result.complete``).
FAILING_KINDS = ("energy-balance",)


def warning(kind, message, time):
    """One warning record: kind (str), message (str), time (s, float)."""
    return {"kind": kind, "message": message, "time": float(time)}


def format_count(x):
    """A step count or steps-per-period for a message: a whole number when it is one a
    person would type, else 3 significant digits (never a 70-digit integer)."""
    if not math.isfinite(x):
        return str(x)
    if abs(x) < 1e6:
        return f"{math.ceil(x):d}"
    return f"{x:.3g}"


def format_fraction(x):
    """A fraction as a percentage up to 1000 %, beyond that as 'N times'."""
    if not math.isfinite(x):
        return str(x)
    if abs(x) <= 10.0:
        return f"{x:.2%}"
    return f"{x:.3g} times"


def laser_rows(scenario):
    """[(row, omega rad/s, n (3,), peak |E| V/m, a0)] of the plane-wave fields of a scenario."""
    from .fields.laser import a0_of, polarization_vectors

    rows = []
    for i, f in enumerate(scenario.fields):
        if f.type not in ("plane-wave", "gaussian-beam"):
            continue
        v = f.params
        omega = 2.0 * math.pi * k.c / v["wavelength"]
        a0 = a0_of(v)
        n, _, _ = polarization_vectors(v)
        rows.append((i, omega, np.array(n), a0 * k.m_e * k.c * omega / k.e, a0))
    return rows


def species_a0(a0, scenario):
    """a0 for the tracked species: a0 (defined with e, m_e) times (|q|/e)(m_e/m)."""
    p = scenario.particle
    return a0 * abs(p.charge) / k.e * k.m_e / p.mass


def rates_along(result):
    """(omega rad/s (n,), source codes (n,)) of the fastest local time scale at the saved states.

    The same compiled routine as the plan and adaptive steps (``tracker.timescales``).
    """
    from .timescales import rates

    scenario = result.scenario
    x = np.where(np.isfinite(result.x), result.x, 0.0)
    u = np.where(np.isfinite(result.u), result.u, 0.0)
    t = np.where(np.isfinite(result.t), result.t, 0.0)
    return rates(scenario.field_table, scenario.species_charge / scenario.species_mass, 0.0, t, x, u)


# ---------------------------------------------------------------------- the checks
def check_result(result):
    """Validity warnings of a finished run.

    Parameters
    ----------
    result : Result

    Returns
    -------
    list of dict
        ``{"kind": str, "message": str, "time": float (s)}``, kinds "resolution",
        "quantum", "radiation-dominated", "domain", "nonfinite".
    """
    found = check_nonfinite(result) + check_outside(result) + field_advice(result.scenario)
    good = _finite_states(result)
    if not np.any(good):
        return found + plan_warnings(result, [])
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        rates = rates_along(result)
        resolution = check_resolution(result, rates, good)
        found += plan_warnings(result, resolution) + resolution
        found += check_energy_balance(result)
        found += check_precision(result)
        found += check_quantum(result, good)
        found += check_radiation_dominated(result, rates, good)
        found += check_domain(result, good)
    return found


def plan_warnings(result, resolution):
    """The plan's warnings (step against the fastest initial time scale), unless the
    saved states already showed an under-resolved period (a more precise warning)."""
    if any("steps per period" in w["message"] for w in resolution):
        return []
    try:
        plan = result.scenario.plan()
    except ValueError:
        return []
    return [dict(w) for w in getattr(plan, "warnings", ())]


def check_energy_balance(result):
    """'energy-balance': Delta KE - (field work - radiated) above ``ENERGY_BALANCE_LIMIT``."""
    residual = result.energy_balance_residual()
    if not (math.isfinite(residual) and abs(residual) <= ENERGY_BALANCE_LIMIT):
        ke = result.kinetic_energy
        return [warning(
            "energy-balance",
            f"the energy balance fails: the kinetic energy changed by {_joules(ke[-1] - ke[0])} while the "
            f"fields did {_joules(result.field_work[-1])} of work and {_joules(result.radiated_energy[-1])} "
            f"was radiated (residual {residual:.3g} of the largest energy, limit {ENERGY_BALANCE_LIMIT:g}). "
            "The integration is wrong, typically a step far too coarse for the radiation-reaction kick: "
            "the result is marked not complete. Advice: refine the step (run.steps_per_period, run.dt or "
            "run.dt_max) until the residual is small.",
            result.t[-1])]
    return []


def _joules(value):
    from .plausibility import format_ev

    return format_ev(value / k.e, 4)


def check_precision(result):
    """'precision': a damped run whose radiated fraction is below what gamma can resolve."""
    if result.scenario.run.radiation_reaction == "none" or len(result.t) < 2:
        return []
    energy = float(result.gamma[0]) * result.rest_energy
    radiated = float(result.radiated_energy[-1])
    steps = max(1, int(result.meta.get("steps", len(result.t))))
    floor = max(PRECISION_FLOOR, PRECISION_MARGIN * math.sqrt(steps) * float(np.finfo(float).eps))
    if not (energy > 0 and 0.0 < radiated < floor * energy):
        return []
    return [warning(
        "precision",
        f"the particle radiates only {radiated / energy:.3g} of its energy, below what double precision "
        f"resolves in gamma after {steps:,} steps (~{floor:.1g}): the orbit and gamma(t) cannot show the "
        "damping (round-off dominates their change), but the radiated energy and power are computed "
        "correctly. Compare radiated energies, not orbits, at this level.",
        result.t[-1])]


def _finite_states(result):
    """Saved states whose t, x, u, gamma, power and chi are all finite (bool (n,))."""
    if len(result.t) == 0:
        return np.zeros(0, dtype=bool)
    arrays = (result.t, result.gamma, result.power, result.chi, result.dt)
    good = np.all(np.isfinite(result.x), axis=1) & np.all(np.isfinite(result.u), axis=1)
    for a in arrays:
        good &= np.isfinite(a)
    return good


def check_outside(result):
    """'domain' when the run stopped because the particle left a field's domain (e.g. a map's grid)."""
    if StopReason.of(result.meta.get("stop_reason")) is not StopReason.LEFT_DOMAIN:
        return []
    reason = result.meta.get("stop_detail") or StopReason.LEFT_DOMAIN.description
    t_last = float(result.t[-1]) if len(result.t) else 0.0
    return [warning("domain", f"the run stopped at t = {t_last:.4g} s: {reason}. Enlarge the map, or choose "
                              "outside = \"zero\" to continue without its field.", t_last)]


def field_advice(scenario):
    """Warnings the field models give before any run (``FieldModel.advice``), dated t = 0."""
    found = []
    for i, f in enumerate(scenario.fields):
        if f.model.advice is None:
            continue
        for kind, message in f.model.advice(f.params, scenario):
            found.append(warning(kind, f"field[{i}] ({f.model.label}): {message}", 0.0))
    return found


def check_nonfinite(result):
    """'nonfinite' when the engine stopped on NaN or Inf (``meta["stop_reason"]``)."""
    if StopReason.of(result.meta.get("stop_reason")) is not StopReason.NONFINITE:
        return []
    t_last = float(result.t[-1]) if len(result.t) else 0.0
    return [warning(
        "nonfinite",
        f"the run stopped at t = {t_last:.4g} s because the next state was not finite (NaN or Inf); "
        "the states up to there are kept. Usual causes: a singular field (the centre of a dipole, "
        "the axis R = 0 of a tokamak), a field far beyond any physical value, or a step so coarse "
        "that the momentum overflows. See the other warnings for where the orbit went.",
        t_last)]


def _advice_for_step(result, factor, dt_bound=None, dt_used=None):
    """How to refine the step of this run by ``factor``, or below ``dt_bound`` (s).

    ``dt_used`` (s) is the step at the offending state; an adaptive step that sat at
    its floor needs a lower ``run.dt_min`` rather than more steps per period.
    """
    run = result.scenario.run
    plan = result.scenario.plan()   # the resolution the run used, from the plan itself
    spp = plan.steps_per_period
    if dt_bound is not None:
        if run.adaptive:
            return (f"set run.dt_max <= {dt_bound:.3g} s (the adaptive step follows the orbit's time scales, "
                    "not the cooling)")
        if run.dt is None and spp:
            return (f"use a step <= {dt_bound:.3g} s: raise run.steps_per_period to >= "
                    f"{format_count(spp * plan.dt / dt_bound)} (now {spp:.3g})")
        return f"set run.dt <= {dt_bound:.3g} s"
    if run.adaptive:
        floor = plan.dt_min
        if dt_used is not None and dt_used <= floor * (1.0 + 1e-9):
            return (f"the step sat at its floor run.dt_min = {floor:.3g} s; lower dt_min to <= "
                    f"{floor / factor:.3g} s")
        return f"raise run.steps_per_period to >= {format_count(spp * factor) if spp else 'more'}"
    if run.dt is not None:
        return (f"lower run.dt to <= {run.dt / factor:.3g} s, or set run.adaptive = true so that the step "
                "follows the local time scale")
    target = format_count(spp * factor) if spp else "more"
    return (f"raise run.steps_per_period to >= {target} (now {spp:.3g}), or set run.adaptive = true so that "
            "the step follows the local time scale as it changes")


def check_resolution(result, rates, good):
    """'resolution': worst steps per local period, and the energy radiated per step."""
    found = []
    dt = result.dt
    omega, source = rates
    usable = good & (dt > 0) & (omega > 0)
    if np.any(usable):
        spp = np.full(len(dt), np.inf)
        spp[usable] = 2.0 * math.pi / (omega[usable] * dt[usable])
        worst = int(np.argmin(spp))
        if spp[worst] < MIN_STEPS_PER_PERIOD:
            below = np.count_nonzero(spp < MIN_STEPS_PER_PERIOD) / np.count_nonzero(usable)
            first = int(np.argmax(spp < MIN_STEPS_PER_PERIOD))
            factor = MIN_STEPS_PER_PERIOD / spp[worst]
            damped = result.scenario.run.radiation_reaction != "none"
            consequence = "and the damping is misplaced" if damped else "and the orbit drifts out of phase"
            found.append(warning(
                "resolution",
                f"the {describe(int(source[worst]), result.scenario.fields)} is resolved by only {spp[worst]:.3g} steps per period at "
                f"t = {result.t[worst]:.4g} s (worst; {below:.0%} of saved states are below "
                f"{MIN_STEPS_PER_PERIOD:.0f}, first at t = {result.t[first]:.4g} s). The phase error then exceeds "
                f"{MAX_PHASE_ERROR:.0%} per period {consequence}. Advice: "
                + _advice_for_step(result, factor, dt_used=dt[worst]) + ".",
                result.t[worst]))
    if result.scenario.run.radiation_reaction != "none":
        energy = result.gamma * result.rest_energy
        loss = np.zeros(len(dt))
        ok = good & (dt > 0) & (energy > 0)
        if result.scenario.run.radiation_reaction == "quantum-stochastic":
            # photons are sampled with sub-steps there, not applied as a split kick
            from .radiation.stochastic import CHI_STOCHASTIC_MIN

            ok &= result.chi < CHI_STOCHASTIC_MIN
        loss[ok] = result.power[ok] * dt[ok] / energy[ok]
        worst = int(np.argmax(loss))
        if loss[worst] > MAX_LOSS_PER_STEP:
            bound = MAX_LOSS_PER_STEP * energy[worst] / result.power[worst]
            found.append(warning(
                "resolution",
                f"radiation reaction removes {format_fraction(loss[worst])} of the particle's energy in one step at "
                f"t = {result.t[worst]:.4g} s (limit {MAX_LOSS_PER_STEP:.0%}); the damping is applied as a "
                "split kick and needs a small change per step. Advice: "
                + _advice_for_step(result, 1.0, dt_bound=bound) + ".",
                result.t[worst]))
    return found


def check_quantum(result, good):
    """'quantum': peak chi above ``CHI_QUANTUM``."""
    from .radiation.quantum import gaunt_factor

    chi = np.where(good, result.chi, -np.inf)
    i = int(np.argmax(chi))
    chi_max = float(chi[i])
    if not chi_max > CHI_QUANTUM:
        return []
    g = gaunt_factor(chi_max)
    model = result.scenario.run.radiation_reaction
    pairs = (f" At chi >= {CHI_PAIRS:g} the emitted photons themselves have chi of order one and a fraction of "
             "them would create electron-positron pairs (nonlinear Breit-Wheeler; Di Piazza et al. 2012, from "
             "memory): pair creation is not modelled, so photon numbers and the energy balance are upper "
             "bounds there." if chi_max >= CHI_PAIRS else "")
    if model == "quantum-stochastic":
        if not pairs:
            return []
        return [warning("quantum", f"chi peaks at {chi_max:.3g} at t = {result.t[i]:.4g} s." + pairs, result.t[i])]
    if model == "landau-lifshitz-quantum":
        what = (f"the corrected-classical model already scales the emitted power by g(chi) = {g:.3g} there, "
                "but it keeps emission continuous: it misses the stochastic photon emission that broadens "
                "the energy spread and lets some particles lose much less (straggling)")
    else:
        what = (f"the classical emitted power is {1.0 / g:.3g} times the quantum one there (g(chi) = {g:.3g}); "
                "use radiation_reaction = \"landau-lifshitz-quantum\" for the mean loss. Emission is also "
                "stochastic (energy spread, straggling)")
    return [warning(
        "quantum",
        f"chi peaks at {chi_max:.3g} at t = {result.t[i]:.4g} s (> {CHI_QUANTUM}): {what}. For the energy "
        "spread, straggling and the photon spectrum use radiation_reaction = \"quantum-stochastic\" "
        "(Monte-Carlo photon emission, tracker.radiation.stochastic)." + pairs,
        result.t[i])]


def check_radiation_dominated(result, rates, good):
    """'radiation-dominated': R_c = alpha a0 chi >= 1 in a laser, or loss per period >= 1 otherwise."""
    scenario = result.scenario
    if scenario.run.radiation_reaction == "none":
        what_run = "this run has radiation reaction off, so its orbit ignores the dominant force"
    else:
        what_run = ("the orbit is set by the damping: results depend on the radiation-reaction model and "
                    "on resolving the cooling; halve the step and compare")
    lasers = laser_rows(scenario)
    chi = np.where(good, result.chi, -np.inf)
    i = int(np.argmax(chi))
    if lasers:
        a0 = max(species_a0(row[4], scenario) for row in lasers)
        r_c = k.alpha * a0 * chi[i]
        if r_c >= R_C_DOMINATED:
            return [warning(
                "radiation-dominated",
                f"R_c = alpha a0 chi = {r_c:.3g} at t = {result.t[i]:.4g} s (a0 = {a0:.3g}, chi = {chi[i]:.3g}): "
                "the radiation-dominated regime (R_c >~ 1; Di Piazza et al., Rev. Mod. Phys. 84, 1177 (2012)); "
                + what_run + ".",
                result.t[i])]
        return []
    omega, source = rates
    energy = result.gamma * result.rest_energy
    ok = good & (omega > 0) & (energy > 0)
    if not np.any(ok):
        return []
    ratio = np.zeros(len(omega))
    ratio[ok] = result.power[ok] * 2.0 * math.pi / (omega[ok] * energy[ok])
    j = int(np.argmax(ratio))
    if ratio[j] < LOSS_PER_PERIOD_DOMINATED:
        return []
    return [warning(
        "radiation-dominated",
        f"the particle radiates {ratio[j]:.3g} times its energy per period of its "
        f"{describe(int(source[j]), scenario.fields)} at t = {result.t[j]:.4g} s: radiation reaction dominates "
        f"(the static-field analogue of R_c >~ 1, Di Piazza et al. 2012); " + what_run + ".",
        result.t[j])]


# ---------------------------------------------------------------------- domain of the field models
def _mirror_excess(v, x, _x0):
    c = v["center"]
    r = np.hypot(x[:, 0] - c[0], x[:, 1] - c[1])
    return r / v["L"] / MIRROR_MAX_R_OVER_L, "r/L", r / v["L"], MIRROR_MAX_R_OVER_L


def _undulator_excess(v, x, _x0):
    ku = 2.0 * math.pi / v["period"]
    s = x[:, 2] - v["start"]
    inside = (s >= 0.0) & (s <= v["length"])
    ky = np.where(inside, np.abs(ku * x[:, 1]), 0.0)
    return ky / UNDULATOR_MAX_KY, "|k_u y| inside the undulator", ky, UNDULATOR_MAX_KY


def _tokamak_excess(v, x, _x0):
    big_r = np.hypot(x[:, 0], x[:, 1])
    eps = np.hypot(big_r - v["R0"], x[:, 2]) / v["R0"]
    return eps / TOKAMAK_MAX_EPSILON, "minor radius / R0", eps, TOKAMAK_MAX_EPSILON


def _dipole_excess(v, x, x0):
    c = np.asarray(v["center"])
    r = np.linalg.norm(x - c, axis=1)
    r0 = np.linalg.norm(np.asarray(x0, dtype=float) - c, axis=-1)   # (3,) -> scalar, (n, 3) -> per state
    with np.errstate(divide="ignore", invalid="ignore"):
        frac = np.where(r0 > 0, r / np.where(r0 > 0, r0, 1.0), np.inf)
    with np.errstate(divide="ignore"):
        excess = DIPOLE_MIN_FRACTION / frac
    return excess, "distance from the centre / starting distance", frac, DIPOLE_MIN_FRACTION


#: field type -> function(values, x (n, 3), x0 (3,) or (n, 3)) -> (excess > 1 where outside,
#: quantity name, quantity values, limit)
DOMAIN_CHECKS = {"mirror": _mirror_excess, "undulator": _undulator_excess, "tokamak": _tokamak_excess,
                 "dipole": _dipole_excess}

#: how the limit is crossed: quantities that must stay below vs above their limit
STAYS_ABOVE = {"dipole"}


def check_domain(result, good):
    """'domain': the particle left the region where a field model holds (one warning per field)."""
    found = []
    x = result.x
    for i, f in enumerate(result.scenario.fields):
        check = DOMAIN_CHECKS.get(f.type)
        if check is None:
            continue
        excess, name, values, limit = check(f.params, x, x[0])
        outside = good & (excess > 1.0)
        if not np.any(outside):
            continue
        first = int(np.argmax(outside))
        pick = np.where(outside, values, np.nan)
        worst = int(np.nanargmin(pick) if f.type in STAYS_ABOVE else np.nanargmax(pick))
        relation = "below" if f.type in STAYS_ABOVE else "above"
        described = ""
        if f.model.domain is not None:
            _, text = f.model.domain(f.params)
            described = f" The model holds for: {text}."
        found.append(warning(
            "domain",
            f"field[{i}] ({f.model.label}): {name} = {values[worst]:.3g} at t = {result.t[worst]:.4g} s, "
            f"{relation} the limit {limit:.3g} (first at t = {result.t[first]:.4g} s).{described} "
            "The orbit after that uses the field outside its range; treat it as qualitative, or start the "
            "particle where it stays inside.",
            result.t[first]))
    return found
