"""Regime of a scenario before it runs: a0, chi, radiation-reaction strength, advice.

``regime_rows(scenario)`` gives ``[(label, text)]`` for ``radorbit check`` and the
lab. ``regime(scenario)`` returns the numbers behind them. Every estimate uses the
initial state and the fields' parameters; none runs the orbit.

Estimates
---------
* a0 of each plane wave, for the tracked species: |q| E0/(m c omega).
* chi: in a plane wave chi = gamma (1 - n.beta) E0/E_S exactly (E_S = m^2 c^3/(|q| hbar);
  Di Piazza et al. 2012, from memory), at the peak of the pulse and the initial momentum; in
  the static fields at the start, chi = gamma sqrt(|E + v x B|^2 - (E.v)^2/c^2)/E_S.
* Radiation-reaction strength. Laser: R_c = alpha a0 chi (Di Piazza et al.,
  Rev. Mod. Phys. 84, 1177 (2012), section from memory) and the classical loss
  across the whole pulse from the exact Landau-Lifshitz solution in a plane wave,
  u^-_f = u^-_0/h, h = 1 + tau0 omega u^-_0 Int |a'(phi)|^2 dphi (A. Di Piazza,
  Lett. Math. Phys. 83, 305 (2008)). Static fields: the
  radiative cooling time t_cool = gamma m c^2/P at the start against the run
  duration; for P ~ gamma^2 (ultra-relativistic) gamma(t) = gamma0/(1 + t/t_cool)
  [derived from d gamma/dt = -gamma^2/(gamma0 t_cool)].
* Pusher: Higuera-Cary where strong electric and magnetic forces nearly cancel
  on a relativistic particle (lasers, crossed fields; Vay 2008, Higuera & Cary
  2017), Boris otherwise (fastest; all three are exact in pure B rotation).
* Resolution: at least ``validity.MIN_STEPS_PER_PERIOD`` steps per period; an
  adaptive step when gamma is expected to change several-fold (periods scale
  with gamma); a step below ``validity.MAX_LOSS_PER_STEP`` of the cooling time.
"""

import math

import numpy as np

from . import constants as k
from .validity import (CHI_QUANTUM, MAX_LOSS_PER_STEP, MIN_STEPS_PER_PERIOD, R_C_DOMINATED, format_count,
                       laser_rows, species_a0)

#: sampling of a laser pulse for Int |a'|^2 dphi (points per carrier period)
POINTS_PER_CYCLE = 64
#: a Gaussian envelope is integrated over +-this many intensity FWHM
GAUSSIAN_SPAN = 3.0
#: longer pulses (in carrier cycles) use the cycle-averaged integral instead of sampling
#: (sampling a 1 s pulse of a 1 um laser would need 1e16 points)
MAX_SAMPLED_CYCLES = 20_000
#: R_c below which radiation reaction is a small correction (common practice, no source)
R_C_WEAK = 1e-2
#: E/(c B) above which crossed fields count as strong for the pusher choice
#: (common practice, no source)
CROSSED_RATIO = 0.1
#: gamma above which the Boris force-free error matters (Vay 2008: it grows with gamma)
GAMMA_RELATIVISTIC = 10.0


def schwinger_field(scenario):
    """E_S = m^2 c^3/(|q| hbar) for the tracked species, V/m."""
    p = scenario.particle
    return p.mass**2 * k.c**3 / (abs(p.charge) * k.hbar)


def pulse_derivative_squared(values, omega):
    """Int |da/dphi|^2 dphi over a plane-wave pulse, per a0^2 (dimensionless).

    Uses the potential of ``tracker.fields.laser``: a(s) = a0 g(s) [e1 cos(w s + phase)
    + h e2 sin(w s + phase)] with a cos^2 (full length T = duration/0.364) or Gaussian
    amplitude envelope; phi = w s.
    """
    from .fields.envelope import SIN2_FWHM_FRACTION

    circular = values["polarization"] == "circular"
    if values["envelope"] == "sin2":
        full = values["duration"] / SIN2_FWHM_FRACTION
        half = 0.5 * full
    else:
        half = GAUSSIAN_SPAN * values["duration"]
    cycles = 2.0 * half * omega / (2.0 * math.pi)
    if cycles > MAX_SAMPLED_CYCLES:
        return _long_pulse_derivative_squared(values, omega, circular)
    n = int(max(2000, POINTS_PER_CYCLE * cycles))
    s = np.linspace(-half, half, n)
    if values["envelope"] == "sin2":
        g = np.cos(math.pi * s / full) ** 2
        dg = -(math.pi / full) * np.sin(2.0 * math.pi * s / full)
    else:
        c4 = 4.0 * math.log(2.0) / values["duration"] ** 2
        g = np.exp(-0.5 * c4 * s * s)
        dg = -c4 * s * g
    ph = omega * s + values["phase"]
    # da/dphi = (1/w) da/ds, per a0
    d1 = (dg * np.cos(ph) - g * omega * np.sin(ph)) / omega
    d2 = (dg * np.sin(ph) + g * omega * np.cos(ph)) / omega if circular else 0.0 * d1
    integrand = d1 * d1 + d2 * d2
    peak = float(np.sqrt(integrand.max()))
    return float(np.trapezoid(integrand, omega * s)), peak


def _long_pulse_derivative_squared(values, omega, circular):
    """``pulse_derivative_squared`` for a pulse of many cycles: the carrier averages out,
    |da/dphi|^2 -> g^2 (1/2 linear, 1 circular) up to O(1/(omega T)^2) [derived], so
    Int |a'|^2 dphi = omega Int g^2 ds with Int cos^4(pi s/T) ds = 3T/8 and
    Int exp(-c4 s^2) ds = sqrt(pi/c4); the peak of |a'| is 1."""
    from .fields.envelope import SIN2_FWHM_FRACTION

    if values["envelope"] == "sin2":
        g2 = 3.0 / 8.0 * values["duration"] / SIN2_FWHM_FRACTION
    else:
        g2 = math.sqrt(math.pi * values["duration"] ** 2 / (4.0 * math.log(2.0)))
    return omega * g2 * (1.0 if circular else 0.5), 1.0


def regime(scenario):
    """Numbers behind ``regime_rows`` (SI; dimensionless where not stated).

    Returns
    -------
    dict
        ``lasers``: list of dicts (field index, a0, chi, R_c, h, loss fraction of u^-);
        ``static``: dict (chi, power W, t_cool s, expected final gamma) at the start;
        ``chi``: largest estimate; ``pusher``: (name, reason); ``resolution``: list of str.
    """
    p = scenario.particle
    u0 = p.u
    gamma0 = math.sqrt(1.0 + float(u0 @ u0))
    beta0 = u0 / gamma0
    tau0 = k.tau0(p.charge, p.mass)
    rest = p.mass * k.c**2
    duration = scenario.run.duration

    lasers = []
    for i, omega, n, _, a0 in laser_rows(scenario):
        f = scenario.fields[i].params
        eta0 = gamma0 * (1.0 - float(beta0 @ n))   # light-front momentum u^- = gamma - n.u
        a0s = species_a0(a0, scenario)
        integral, peak = pulse_derivative_squared(f, omega)
        # chi = u^- |a'|_max hbar omega/(m c^2) = gamma (1 - n.beta) E_peak/E_S (Di Piazza 2008; Di Piazza et al. 2012)
        chi = eta0 * a0s * peak * k.hbar * omega / rest
        h = 1.0 + tau0 * omega * eta0 * a0s**2 * integral
        lasers.append({"field": i, "a0": a0, "a0_species": a0s, "chi": chi, "R_c": k.alpha * a0s * chi,
                       "h": h, "loss": 1.0 - 1.0 / h, "eta0": eta0})

    e, b = scenario.fields_at(np.array([p.position], dtype=float), 0.0)
    e, b = e[0], b[0]
    force = e + k.c * np.cross(beta0, b)
    f2 = max(float(force @ force) - float(e @ beta0) ** 2, 0.0)
    chi_static = gamma0 * math.sqrt(f2) / schwinger_field(scenario)
    power = p.charge**2 * tau0 / p.mass * gamma0**2 * f2
    t_cool = gamma0 * rest / power if power > 0 else math.inf
    static = {"chi": chi_static, "power": power, "t_cool": t_cool,
              "gamma_final": gamma0 / (1.0 + duration / t_cool) if power > 0 else gamma0,
              "E": float(np.linalg.norm(e)), "B": float(np.linalg.norm(b))}

    chi_max = max([static["chi"]] + [las["chi"] for las in lasers])
    return {"gamma0": gamma0, "lasers": lasers, "static": static, "chi": chi_max,
            "pusher": recommend_pusher(gamma0, lasers, static),
            "resolution": recommend_resolution(scenario, lasers, static)}


def recommend_pusher(gamma0, lasers, static):
    """(pusher name, reason) for the scenario."""
    crossed = static["B"] > 0 and static["E"] >= CROSSED_RATIO * k.c * static["B"]
    if lasers or (crossed and gamma0 >= GAMMA_RELATIVISTIC) or (static["B"] == 0 and static["E"] > 0):
        return ("higuera-cary", "strong electric and magnetic forces on a relativistic particle: Boris errs where "
                                "E + v x B nearly cancels (Vay 2008); Higuera-Cary keeps that cancellation and "
                                "is volume-preserving (Higuera & Cary 2017)")
    return ("boris", "magnetic forces dominate: all three pushers rotate u exactly; Boris is the fastest and "
                     "volume-preserving")


def recommend_resolution(scenario, lasers, static):
    """Advice lines on the step (list of str)."""
    run = scenario.run
    plan = scenario.plan()
    out = []
    spp = plan.steps_per_period   # the plan's own resolution: check and run read the same number
    speedup = mirror_speedup(scenario, plan)
    if spp is not None and spp / speedup < MIN_STEPS_PER_PERIOD:
        target = format_count(spp * MIN_STEPS_PER_PERIOD / (spp / speedup))
        where = (f"; only {spp / speedup:.3g} where the particle mirrors: the gyration speeds up by "
                 f"u^2/u_perp^2 = {speedup:.3g} there (conserved magnetic moment)" if speedup > 1.0 else "")
        key = "dt" if run.dt is not None else "steps_per_period"
        if key == "dt":
            out.append(f"dt <= {plan.dt * spp / speedup / MIN_STEPS_PER_PERIOD:.3g} s (now {spp:.3g} steps per "
                       f"period at the start{where})")
        else:
            out.append(f"raise steps_per_period to >= {target} (now {spp:.3g} at the start{where})")
    gamma_drop = static["gamma_final"] / max(1.0, math.sqrt(1.0 + float(scenario.particle.u @ scenario.particle.u)))
    for las in lasers:
        gamma_drop = min(gamma_drop, 1.0 / las["h"])
    if run.radiation_reaction != "none" and gamma_drop < 0.5 and not run.adaptive:
        out.append(f"adaptive = true: gamma may fall to ~{gamma_drop:.2g} of its start and the periods "
                   "shrink with it")
    if run.radiation_reaction != "none" and static["power"] > 0:
        bound = MAX_LOSS_PER_STEP * static["t_cool"]
        if plan.dt > bound:
            key = "dt_max" if run.adaptive else "dt"
            out.append(f"{key} <= {bound:.3g} s ({MAX_LOSS_PER_STEP:.0%} of the cooling time; now {plan.dt:.3g} s)")
    if not out:
        out.append(f"as planned ({spp:.3g} steps per period)" if spp else "as planned")
    return out


#: static magnetic models whose strength varies along field lines (mirror points exist)
MIRRORING_FIELDS = ("mirror", "dipole", "tokamak")


def mirror_speedup(scenario, plan):
    """How much faster than at the start the gyration can become, >= 1.

    In a static magnetic field that varies slowly, |u| and the magnetic moment
    u_perp^2/B are conserved (first adiabatic invariant; T. G. Northrop, The Adiabatic
    Motion of Charged Particles (1963), ch. 1, from memory), so B -- and the gyration
    rate -- grow at most by u^2/u_perp^2 = 1/sin^2(pitch) before the particle mirrors.
    Applies when the plan's fastest scale is the gyration, the fields are static magnetic
    ones of ``MIRRORING_FIELDS`` (plus uniform ones) and there is no E at the start; else 1.
    """
    types = {f.type for f in scenario.fields}
    if "gyration" not in str(plan.period_source) or not types & set(MIRRORING_FIELDS):
        return 1.0
    if not types <= set(MIRRORING_FIELDS) | {"uniform"}:
        return 1.0
    p = scenario.particle
    e, b = scenario.fields_at(np.array([p.position], dtype=float), 0.0)
    e, b = e[0], b[0]
    u = np.asarray(p.u, dtype=float)
    b2, u2 = float(b @ b), float(u @ u)
    if float(e @ e) > 0 or not (b2 > 0 and u2 > 0):
        return 1.0
    u_perp2 = u2 - float(u @ b) ** 2 / b2
    if not u_perp2 > 0:
        return 1.0   # moving along B: no gyration to speed up
    return max(1.0, u2 / u_perp2)


def _strength(r_c):
    if r_c >= R_C_DOMINATED:
        return "radiation-dominated"
    if r_c >= R_C_WEAK:
        return "significant"
    return "weak"


def regime_rows(scenario):
    """[(label, text)] describing the regime of a scenario (for ``radorbit check`` and the lab)."""
    r = regime(scenario)
    rows = []
    for las in r["lasers"]:
        i = las["field"]
        a0_text = f"{las['a0']:.4g}"
        if abs(las["a0_species"] - las["a0"]) > 1e-9 * las["a0"]:
            a0_text += f" ({las['a0_species']:.4g} for this particle)"
        rows.append((f"a0 (field[{i}])", a0_text))
        rows.append((f"chi at the pulse peak (field[{i}])",
                     f"{las['chi']:.3g} at the initial momentum"))
        rows.append((f"radiation reaction (field[{i}])",
                     f"R_c = alpha a0 chi = {las['R_c']:.3g}: {_strength(las['R_c'])}; the classical loss across "
                     f"the whole pulse is {las['loss']:.1%} of u^- = gamma - n.u (exact LL plane-wave solution)"))
    st = r["static"]
    if st["power"] > 0:
        rows.append(("chi at the start", f"{st['chi']:.3g}"))
        ratio = scenario.run.duration / st["t_cool"]
        rows.append(("radiative cooling time",
                     f"{st['t_cool']:.3g} s = {1.0 / ratio:.3g} run durations; gamma ~ {st['gamma_final']:.4g} "
                     f"at the end if P ~ gamma^2 (from {r['gamma0']:.4g})"))
    if r["chi"] > CHI_QUANTUM:
        rows.append(("quantum regime",
                     f"chi ~ {r['chi']:.3g} > {CHI_QUANTUM}: radiation_reaction = \"landau-lifshitz-quantum\" for "
                     "the mean loss, \"quantum-stochastic\" for the spread and the photons"
                     + ("; pair creation (chi >= 1) is not modelled" if r["chi"] >= 1.0 else "")))
    name, reason = r["pusher"]
    current = scenario.run.pusher
    rows.append(("recommended pusher", f"{name}" + ("" if name == current else f" (now {current})") + f": {reason}"))
    rows.append(("recommended resolution", "; ".join(r["resolution"])))
    return rows
