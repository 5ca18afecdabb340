"""Landau-Lifshitz radiation reaction against exact solutions and handbook values.

Sources
- Landau & Lifshitz, The Classical Theory of Fields, sec. 76 (force; eq. numbers from memory).
- Uniform B, p perpendicular to B: d gamma/dt = -(gamma^2 - 1)/tau_B, tau_B = m^2/(q^2 tau0 B^2), so
  gamma(t) = coth(t/tau_B + arcoth gamma0) (derived from the LL force; see physics reference sec. 4).
- Plane wave: A. Di Piazza, Lett. Math. Phys. 83, 305 (2008), exact light-front solution:
  eta = gamma - n.u falls as eta0/h, h = 1 + eps eta0 int a'^2 dphi, eps = tau0 omega0.
- Energy loss per turn U0 = C_gamma E^4/rho, C_gamma = 4 pi r_e/(3 (m c^2)^3) = 8.846e-5 m/GeV^3
  (M. Sands, The Physics of Electron Storage Rings, SLAC-121 (1970), ch. 4; X-ray Data Booklet sec. 2.1;
  chapter and section numbers from memory).
"""

import math

import numpy as np
import pytest
from scipy import constants as sc

from builders import electron, scenario
from tracker import compare, track

M, C, Q, EPS0 = sc.m_e, sc.c, sc.e, sc.epsilon_0
TAU0 = Q**2 / (6 * math.pi * EPS0 * M * C**3)
R_E = sc.physical_constants["classical electron radius"][0]


def test_energy_radiated_per_turn_matches_storage_ring_handbook():
    energy_gev = 3.0
    rho = 7.0
    gamma = energy_gev * 1e9 * Q / (M * C**2)
    p = M * C * math.sqrt(gamma**2 - 1)
    b_field = p / (Q * rho)
    period = 2 * math.pi * gamma * M / (Q * b_field)
    result = track(scenario([{"type": "uniform", "B": [0, 0, b_field]}], duration=period,
                            particle=electron(gamma=gamma, direction=[1, 0, 0]), steps_per_period=1000,
                            save_every=100))
    c_gamma = 4 * math.pi * R_E / (3 * (M * C**2 / Q / 1e9) ** 3)   # m/GeV^3
    assert c_gamma == pytest.approx(8.846e-5, rel=1e-3)
    u0_gev = c_gamma * energy_gev**4 / rho
    radiated_gev = result.radiated_energy[-1] / Q / 1e9
    assert radiated_gev == pytest.approx(u0_gev, rel=5e-3)
    # and the orbit really lost it: kinetic energy fell by the radiated amount
    assert (result.kinetic_energy[0] - result.kinetic_energy[-1]) == pytest.approx(result.radiated_energy[-1], rel=1e-3)


def coth_solution(t, gamma0, tau_b):
    return 1.0 / np.tanh(t / tau_b + np.arctanh(1.0 / gamma0))   # arcoth(g) = artanh(1/g)


def test_ll_uniform_b_follows_exact_coth_cooling():
    # B = 1e6 T makes tau_B = 5.2e-12 s short enough to follow ~1400 gyrations; gamma(t/tau_B) is universal
    b_field, gamma0 = 1e6, 10.0
    tau_b = M**2 / (Q**2 * TAU0 * b_field**2)
    duration = 0.1 * tau_b
    result = track(scenario([{"type": "uniform", "B": [0, 0, b_field]}], duration=duration,
                            particle=electron(gamma=gamma0, direction=[1, 0, 0]), rr="landau-lifshitz",
                            steps_per_period=1000, save_every=1000))
    exact = coth_solution(result.t, gamma0, tau_b)
    # physics reference table: gamma0 = 10 at 0.1 tau_B gives 5.0582307964
    assert exact[-1] == pytest.approx(5.0582307964, rel=1e-6)
    assert result.t[-1] == pytest.approx(duration, rel=1e-12)
    # measured 8e-12: the kick acts along the rotated momentum, so the split step keeps the energy law
    assert np.max(np.abs(result.gamma / exact - 1.0)) < 1e-8
    # radiated energy equals the kinetic energy lost (p perpendicular to B: LL power = Lienard power)
    lost = result.kinetic_energy[0] - result.kinetic_energy[-1]
    assert result.radiated_energy[-1] == pytest.approx(lost, rel=1e-4)


def di_piazza_final_gamma(gamma0, a0, cycles, wavelength):
    """Final gamma after a sin^2 pulse a = a0 sin^2(phi/2N) sin(phi), head-on, u_perp0 = 0."""
    omega0 = 2 * math.pi * C / wavelength
    eps = TAU0 * omega0
    eta0 = gamma0 + math.sqrt(gamma0**2 - 1)
    int_a2 = math.pi * a0**2 / 8 * (3 * cycles + 1 / cycles)      # exact for integer N >= 2
    eta_f = eta0 / (1 + eps * eta0 * int_a2)
    return 0.5 * (eta_f + 1 / eta_f)                              # u_perp = 0 after this pulse


@pytest.mark.parametrize("gamma0,a0,reference", [(1000.0, 10.0, 966.29486095), (1000.0, 50.0, 534.18252127)])
def test_ll_plane_wave_pulse_matches_exact_light_front_solution(gamma0, a0, reference):
    cycles, wavelength = 10, 0.8e-6
    expected = di_piazza_final_gamma(gamma0, a0, cycles, wavelength)
    assert expected == pytest.approx(reference, rel=1e-9)        # physics reference table (closed form)
    full_length = cycles * wavelength / C
    fwhm = full_length * 2 / math.pi * math.acos(2 ** -0.25)      # intensity FWHM of cos^2 amplitude
    pulse = {"type": "plane-wave", "a0": a0, "wavelength": wavelength, "direction": [0, 0, 1],
             "polarization_axis": [1, 0, 0], "envelope": "sin2", "duration": fwhm,
             "peak_position": [0, 0, -C * full_length / 2], "phase": -math.pi / 2}
    result = track(scenario([pulse], duration=0.6 * full_length,
                            particle=electron(gamma=gamma0, direction=[0, 0, -1]), rr="landau-lifshitz",
                            steps_per_period=200, save_every=100))
    # measured: 2e-7 at 200 steps per seen laser period (second order in dt)
    assert result.gamma[-1] == pytest.approx(expected, rel=2e-6)
    assert np.linalg.norm(result.u[-1, :2]) < 1e-3 * a0   # transverse momentum returns to ~0


def test_energy_balance_closes_in_a_laser_collision():
    # Delta KE = work by E - radiated energy, to the integrator's accuracy; halving dt shrinks the error
    pulse = {"type": "plane-wave", "a0": 30.0, "wavelength": 0.8e-6, "direction": [0, 0, 1],
             "envelope": "gaussian", "duration": 20e-15, "peak_position": [0, 0, -20e-6]}
    errors = []
    for spp in (100, 200):
        result = track(scenario([pulse], duration=200e-15, particle=electron(gamma=1000.0, direction=[0, 0, -1]),
                                rr="landau-lifshitz", steps_per_period=spp, save_every=50))
        errors.append(abs(result.energy_balance_error()) / result.radiated_energy[-1])
    assert result.radiated_energy[-1] > 0.1 * result.kinetic_energy[0]   # a strongly damped case
    assert errors[1] < 1e-4
    assert errors[1] < errors[0]


def test_energy_balance_with_loop_voltage_work():
    # tokamak field with a loop voltage: E does work while the electron radiates
    result = track(scenario([{"type": "tokamak", "R0": 1.0, "B0": 50.0, "q": 2.0, "loop_voltage": 5e4}],
                            duration=2e-8, particle={"species": "electron", "position": [1.05, 0, 0],
                                                     "kinetic_energy": "50 MeV", "direction": [0, -1, 0.05]},
                            rr="landau-lifshitz", steps_per_period=200, save_every=100))
    assert result.field_work[-1] > 0 and result.radiated_energy[-1] > 0
    scale = max(result.field_work[-1], result.radiated_energy[-1])
    assert abs(result.energy_balance_error()) < 1e-3 * scale


def test_compare_runs_damped_and_undamped_versions():
    s = scenario([{"type": "uniform", "B": [0, 0, 1e6]}], duration=1e-12,
                 particle=electron(gamma=10.0, direction=[1, 0, 0]), steps_per_period=200, save_every=100)
    pair = compare(s)
    assert pair.damped.scenario.run.radiation_reaction == "landau-lifshitz"
    assert pair.undamped.scenario.run.radiation_reaction == "none"
    # the undamped orbit keeps its energy but still reports what it would radiate
    assert pair.undamped.gamma[-1] == pytest.approx(10.0, rel=1e-12)
    assert pair.undamped.radiated_energy[-1] > pair.damped.radiated_energy[-1] > 0


def test_work_energy_theorem_from_rest_in_a_uniform_electric_field():
    # Delta KE = q Int E.v dt (work-energy theorem); exact solution gamma(t) = sqrt(1 + (qEt/mc)^2)
    e_field, duration = 1e6, 1e-9
    result = track(scenario([{"type": "uniform", "E": [e_field, 0, 0]}], duration=duration,
                            particle=electron(u=[0.0, 0.0, 0.0]), rr="landau-lifshitz", dt=1e-12))
    exact_gamma = math.sqrt(1 + (Q * e_field * duration / (M * C)) ** 2)
    # the synchronous gamma is the mean of the two half-step values: O(dt^2), measured 2.4e-8 here
    assert result.gamma[-1] == pytest.approx(exact_gamma, rel=1e-7)
    assert abs(result.energy_balance_residual()) < 1e-5
