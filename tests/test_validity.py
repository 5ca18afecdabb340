"""Validity warnings (tracker.validity) and regime estimates (tracker.regime).

Every warning kind is raised by a scenario built to raise it and absent from a clean
one. Physical thresholds and their sources are in tracker/validity.py; the numbers
checked here were computed independently of radorbit from the formulas named beside them
(CODATA constants via scipy).
"""

import math

import pytest

from tracker import Scenario, track
from tracker import constants as k
from tracker.fields.laser import SIN2_FWHM_FRACTION
from tracker.regime import regime, regime_rows
from tracker.stops import StopReason
from tracker.validity import check_result

ALL_KINDS = {"resolution", "quantum", "radiation-dominated", "domain", "nonfinite"}


def kinds(result):
    return {w["kind"] for w in result.warnings}


def uniform_b(b, gamma, steps_per_period=100, turns=3.0, model="landau-lifshitz", **particle):
    period = 2.0 * math.pi * gamma * k.m_e / (k.e * b)
    return Scenario.from_dict({
        "run": {"duration": turns * period, "steps_per_period": steps_per_period, "radiation_reaction": model},
        "particle": {"species": "electron", "gamma": gamma, "direction": [1, 0, 0], **particle},
        "field": [{"type": "uniform", "B": [0, 0, b]}],
    })


def head_on(gamma0, a0, model="landau-lifshitz", cycles=None, fwhm=10e-15, phase=0.0):
    """Electron against a linearly polarised 0.8 um pulse; the run spans the whole pulse."""
    if cycles is not None:     # full length of the cos^2 envelope = cycles laser periods
        fwhm = SIN2_FWHM_FRACTION * cycles * 0.8e-6 / k.c
    full = fwhm / SIN2_FWHM_FRACTION
    return Scenario.from_dict({
        "run": {"duration": 0.6 * full, "steps_per_period": 100, "radiation_reaction": model,
                "pusher": "higuera-cary"},
        "particle": {"species": "electron", "gamma": gamma0, "direction": [0, 0, -1]},
        "field": [{"type": "plane-wave", "a0": a0, "wavelength": 0.8e-6, "polarization_axis": [1, 0, 0],
                   "duration": fwhm, "peak_position": [0, 0, -0.5 * full * k.c], "phase": phase}],
    })


def test_warning_records_have_kind_message_time():
    r = track(uniform_b(1.0, 3.0, steps_per_period=5))
    assert r.warnings == check_result(r)
    for w in r.warnings:
        assert set(w) == {"kind", "message", "time"}
        assert w["kind"] in ALL_KINDS and isinstance(w["message"], str) and math.isfinite(w["time"])


# ---------------------------------------------------------------------- clean scenarios
@pytest.mark.parametrize("scenario", [
    uniform_b(1.0, 2000.0),                      # storage-ring-like: chi = 4.5e-7
    head_on(200.0, 10.0),                        # chi = 0.012, R_c = 8.9e-4 (gamma (1 - n.beta) E0/E_S; Di Piazza et al. 2012)
    Scenario.from_dict({
        "run": {"duration": "20 ns", "steps_per_period": 100, "save_every": 20},
        "particle": {"species": "electron", "kinetic_energy": "1 MeV", "position": ["0.5 mm", 0, 0],
                     "direction": [0, 0.8660254037844387, 0.5]},
        "field": [{"type": "mirror", "B0": "5 T", "L": "0.2 m"}]}),
], ids=["uniform-B", "weak-laser", "mirror"])
def test_clean_scenarios_raise_no_warning(scenario):
    assert track(scenario).warnings == []


# ---------------------------------------------------------------------- resolution
def test_coarse_gyration_is_reported_with_its_steps_per_period():
    r = track(uniform_b(1.0, 3.0, steps_per_period=5))
    (w,) = [w for w in r.warnings if w["kind"] == "resolution"]
    assert "gyration" in w["message"] and "only 5 steps per period" in w["message"]
    assert "steps_per_period to >= 19" in w["message"]


def test_energy_loss_per_step_is_reported():
    # B = 1e5 T, gamma = 1000: a gyration radiates 69 % of the energy (2 pi gamma^2 m/(e B tau_B),
    # tau_B from the coth cooling law, Landau & Lifshitz vol. 2 sec. 76), so at 20 steps per gyration one step removes ~3.5 %.
    r = track(uniform_b(1e5, 1000.0, steps_per_period=20, turns=0.5))
    messages = [w["message"] for w in r.warnings if w["kind"] == "resolution"]
    loss = [m for m in messages if "removes" in m]
    assert len(loss) == 1
    assert float(loss[0].split("removes ")[1].split("%")[0]) == pytest.approx(3.46, rel=0.02)


def test_laser_period_seen_by_the_particle_is_checked():
    # head-on the electron meets the wave at omega (1 + beta) ~ 2 omega; 5 steps per seen period (above the plan floor of 4)
    s = head_on(200.0, 1.0).with_run(steps_per_period=5)
    (w,) = [w for w in track(s).warnings if w["kind"] == "resolution"]
    assert "laser period seen by the particle" in w["message"]


# ---------------------------------------------------------------------- quantum
@pytest.mark.parametrize("model, phrase", [("landau-lifshitz", "landau-lifshitz-quantum"),
                                           ("landau-lifshitz-quantum", "corrected-classical"),
                                           ("none", "landau-lifshitz-quantum")])
def test_quantum_warning_above_chi_one_tenth(model, phrase):
    # gamma0 = 1000, a0 = 50 head-on: chi0 = 0.303 (gamma (1 - n.beta) E0/E_S, computed with scipy constants)
    r = track(head_on(1000.0, 50.0, model=model))
    (w,) = [w for w in r.warnings if w["kind"] == "quantum"]
    assert phrase in w["message"] and 'radiation_reaction = "quantum-stochastic"' in w["message"]
    assert "pairs" not in w["message"]               # chi < 1
    assert r.chi.max() > 0.1
    assert "radiation-dominated" not in kinds(r)     # R_c = 0.11


def test_stochastic_model_warns_only_about_pair_creation():
    # below chi = 1 the stochastic model is the right one: no quantum warning
    assert "quantum" not in kinds(track(head_on(1000.0, 50.0, model="quantum-stochastic")))
    # gamma0 = 4000, a0 = 200: chi0 = 4.9 > CHI_PAIRS (nonlinear Breit-Wheeler, Di Piazza et al. 2012, from memory)
    r = track(head_on(4000.0, 200.0, model="quantum-stochastic"))
    (w,) = [w for w in r.warnings if w["kind"] == "quantum"]
    assert "pair creation is not modelled" in w["message"]


# ---------------------------------------------------------------------- radiation-dominated
def test_radiation_dominated_laser():
    # gamma0 = 4000, a0 = 200: chi0 = 4.9, R_c = alpha a0 chi0 = 7 (Di Piazza et al. 2012)
    r = track(head_on(4000.0, 200.0))
    assert {"radiation-dominated", "quantum"} <= kinds(r)
    (w,) = [w for w in r.warnings if w["kind"] == "radiation-dominated"]
    assert "R_c = alpha a0 chi" in w["message"]


def test_radiation_dominated_static_field_without_quantum_warning():
    # Energy radiated per gyration over the energy: (4 pi/3) alpha gamma chi [derived from
    # the Lienard power and the gyration period]; gamma = 1000, B = 2.2e5 T: chi = 0.050, ratio = 1.52.
    r = track(uniform_b(2.2e5, 1000.0, steps_per_period=200, turns=1.0))
    assert "radiation-dominated" in kinds(r) and "quantum" not in kinds(r)
    (w,) = [w for w in r.warnings if w["kind"] == "radiation-dominated"]
    ratio = float(w["message"].split("radiates ")[1].split(" times")[0])
    chi = 1000.0 * 2.2e5 / (k.E_schwinger / k.c)
    assert ratio == pytest.approx(4.0 * math.pi / 3.0 * k.alpha * 1000.0 * chi, rel=0.01)


# ---------------------------------------------------------------------- domain
@pytest.mark.parametrize("field, particle, phrase", [
    ({"type": "mirror", "B0": "1 T", "L": "0.2 m"},
     {"kinetic_energy": "1 MeV", "position": [0.05, 0, 0], "direction": [0, 0.866, 0.5]}, "r/L"),
    ({"type": "undulator", "B0": "0.5 T", "period": "2 cm", "length": "0.1 m"},
     {"kinetic_energy": "100 MeV", "position": [0, 0.002, -0.01], "direction": [0, 0, 1]}, "|k_u y|"),
    ({"type": "tokamak", "R0": "1.7 m", "B0": "2.5 T", "q": 2},
     {"kinetic_energy": "20 MeV", "position": [2.6, 0, 0], "direction": [0.05, -1, 0.02]}, "minor radius"),
], ids=["mirror", "undulator", "tokamak"])
def test_leaving_the_model_domain_is_reported(field, particle, phrase):
    s = Scenario.from_dict({"run": {"duration": 4e-10, "steps_per_period": 50, "save_every": 10},
                            "particle": {"species": "electron", **particle}, "field": [field]})
    r = track(s)
    (w,) = [w for w in r.warnings if w["kind"] == "domain"]
    assert phrase in w["message"] and "field[0]" in w["message"]


def test_undulator_on_axis_is_inside_its_domain():
    s = Scenario.from_dict({"run": {"duration": 4e-10, "steps_per_period": 50, "save_every": 10},
                            "particle": {"species": "electron", "kinetic_energy": "100 MeV",
                                         "position": [0, 0, -0.01], "direction": [0, 0, 1]},
                            "field": [{"type": "undulator", "B0": "0.5 T", "period": "2 cm", "length": "0.1 m"}]})
    assert "domain" not in kinds(track(s))


def dipole_hit():
    """Electron along the axis of a dipole (no force there) landing exactly on the centre.

    u = 0.75 gives gamma = 1.25 and a step length of exactly 2^-10 m, so the position
    reaches 0 exactly, where the point-dipole field is 0/0.
    """
    target = 2.0**-10
    dt = target / (0.6 * k.c)
    while 0.75 * (k.c * dt / 1.25) != target:
        dt = math.nextafter(dt, math.inf if 0.75 * (k.c * dt / 1.25) < target else 0.0)
    return Scenario.from_dict({
        "run": {"duration": 40 * dt, "dt": dt, "radiation_reaction": "none"},
        "particle": {"species": "electron", "u": [0, 0, -0.75], "position": [0, 0, 20 * target]},
        "field": [{"type": "dipole", "moment": [0, 0, 1.0]}],
    })


def test_nonfinite_stop_and_dipole_centre():
    r = track(dipole_hit())
    assert r.meta["stop_reason"] == StopReason.NONFINITE
    assert {"nonfinite", "domain"} <= kinds(r)
    (w,) = [w for w in r.warnings if w["kind"] == "nonfinite"]
    assert w["time"] == pytest.approx(r.t[-1])
    assert len(r.t) == 20       # the states before the centre are kept


# ---------------------------------------------------------------------- regime estimates
def test_regime_laser_numbers_match_the_exact_plane_wave_solution():
    # exact LL plane-wave solution (Di Piazza, Lett. Math. Phys. 83, 305 (2008)), h_f computed
    # by quadrature with scipy: gamma0 = 1000, a0 = 10, 0.8 um, sin^2 envelope of N = 10 cycles
    # (carrier sin(phi): phase -pi/2 here): chi0 = 0.06066, R_c = 4.4264e-3, h_f = 1.0348808197.
    s = head_on(1000.0, 10.0, cycles=10, phase=-math.pi / 2)
    (laser,) = regime(s)["lasers"]
    assert laser["a0"] == 10.0
    assert laser["chi"] == pytest.approx(0.06066, rel=1e-3)
    assert laser["R_c"] == pytest.approx(4.4264e-3, rel=1e-3)
    assert laser["h"] == pytest.approx(1.0348808197, rel=1e-8)
    # and the run agrees: u^-_f = u^-_0/h (Di Piazza 2008)
    r = track(s)
    assert r.gamma[-1] - r.u[-1, 2] == pytest.approx(laser["eta0"] / laser["h"], rel=1e-5)


def test_regime_rows_for_a_laser():
    rows = dict(regime_rows(head_on(1000.0, 50.0)))
    assert rows["a0 (field[0])"] == "50"
    assert "quantum regime" in rows
    assert rows["recommended pusher"].startswith("higuera-cary")


def test_regime_static_field_cooling_time():
    # Lienard power, chi = gamma B/B_S and tau_B (Landau & Lifshitz vol. 2 sec. 76), computed with
    # scipy constants: gamma = 1000 in 1 T: P = 1.587057e-8 W, chi = 2.265515e-7,
    # t_cool = gamma m c^2/P = tau_B/gamma0 = 5.158666e-3 s.
    st = regime(uniform_b(1.0, 1000.0))["static"]
    assert st["power"] == pytest.approx(1.587057e-8, rel=1e-6)
    assert st["chi"] == pytest.approx(2.265515e-7, rel=1e-6)
    assert st["t_cool"] == pytest.approx(5.158666e-3, rel=1e-6)
    rows = dict(regime_rows(uniform_b(1.0, 1000.0)))
    assert rows["recommended pusher"].startswith("boris")
    assert "quantum regime" not in rows


def test_regime_recommends_adaptive_steps_for_strong_cooling():
    s = uniform_b(1e4, 1000.0, turns=700.0)
    rows = dict(regime_rows(s))
    assert "adaptive = true" in rows["recommended resolution"]
    assert "gamma ~ " in rows["radiative cooling time"]
