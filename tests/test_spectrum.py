"""Far-field radiation spectra of tracked orbits: undulator lines, energy balance, NUFFT vs direct sum.

Sources:
- X-ray Data Booklet (LBNL), sec. 2.1 (K.-J. Kim): K = 0.934 lambda_u[cm] B0[T],
  lambda_n = lambda_u/(2 n gamma^2) (1 + K^2/2 + gamma^2 theta^2), relative line width ~ 1/(nN),
  on-axis d2I/domega dOmega = (q^2/(4 pi eps0 c)) N^2 gamma^2 F_n(K) (printed forms from memory --
  verify; check values computed from these formulas with scipy constants and scipy.special.jv).
- J. D. Jackson, Classical Electrodynamics, 3rd ed., sec. 14.5, eqs. (14.65)-(14.67): the radiation
  integral and its beta-dot form; sec. 14.3 eq. (14.38) for dP/dOmega (numbers from memory -- verify).
- Parseval's theorem (energy per solid angle = time integral of dP(t')/dOmega; Jackson sec. 14.5).
"""

import math
from pathlib import Path

import numpy as np
import pytest
from scipy.special import jv

from tracker import Scenario, ScenarioError, compare, load_scenario, track
from tracker import constants as k
from tracker.cli import main
from tracker.radiation import angular_distribution, radiation_amplitudes, resolved_band, spectrum
from tracker.radiation.angular import direction_grid, orbit_kinematics

SCENARIOS = Path(__file__).resolve().parent.parent / "scenarios"
N_PERIODS = 50
PERIOD = 0.02
B0 = 0.5


@pytest.fixture(scope="module")
def undulator():
    """The bundled 1 GeV, 50-period undulator, tracked without damping (200 steps per period)."""
    return track(load_scenario(SCENARIOS / "undulator_1gev.toml").with_run(radiation_reaction="none"))


@pytest.fixture(scope="module")
def helix():
    """Electron, gamma = 5, pitch angle 40 deg, uniform B = 0.2 T, three turns, 600 states per turn."""
    gamma, B, pitch = 5.0, 0.2, math.radians(40.0)
    period = 2 * math.pi * gamma * k.m_e / (k.e * B)
    return track(Scenario.from_dict({
        "run": {"duration": 3 * period, "dt": period / 600, "radiation_reaction": "none"},
        "particle": {"species": "electron", "position": [0.0, 0.0, 0.0], "gamma": gamma,
                     "direction": [math.sin(pitch), 0.0, math.cos(pitch)]},
        "field": [{"type": "uniform", "B": [0.0, 0.0, B]}],
    }))


@pytest.fixture(scope="module")
def laser_kick():
    """Electron at rest hit by a 20 fs (intensity FWHM), a0 = 0.5, 0.8 um plane-wave pulse; 100 steps/cycle.

    The field is zero with its derivative at both ends of the sin^2 envelope, so the record starts
    and ends in uniform motion and needs no window.
    """
    return track(Scenario.from_dict({
        "run": {"duration": "200 fs", "steps_per_period": 100, "radiation_reaction": "none"},
        "particle": {"species": "electron", "position": [0.0, 0.0, 0.0], "gamma": 1.0, "direction": [1, 0, 0]},
        "field": [{"type": "plane-wave", "a0": 0.5, "wavelength": "0.8 um", "duration": "20 fs",
                   "peak_position": ["0 um", "0 um", "-30 um"]}],
    }))


def booklet_k(b0_tesla, period_m):
    """K = 0.934 lambda_u[cm] B0[T] (X-ray Data Booklet sec. 2.1)."""
    return 0.934 * period_m * 100.0 * b0_tesla


def on_axis_peak(n, K, gamma, periods):
    """(q^2/(4 pi eps0 c)) N^2 gamma^2 F_n(K), X-ray Data Booklet sec. 2.1, J s/sr."""
    xi = n * K**2 / (4 * (1 + K**2 / 2))
    f_n = n**2 * K**2 / (1 + K**2 / 2) ** 2 * (jv((n - 1) // 2, xi) - jv((n + 1) // 2, xi)) ** 2
    return k.e**2 / (4 * math.pi * k.epsilon_0 * k.c) * periods**2 * gamma**2 * f_n


def line_profile(values, x):
    """(position of the maximum, full width at half maximum) of a sampled line, linear interpolation."""
    i = int(np.argmax(values))
    half = values[i] / 2
    lo = i
    while lo > 0 and values[lo - 1] >= half:
        lo -= 1
    hi = i
    while hi < len(values) - 1 and values[hi + 1] >= half:
        hi += 1
    left = np.interp(half, [values[lo - 1], values[lo]], [x[lo - 1], x[lo]])
    right = np.interp(half, [values[hi + 1], values[hi]], [x[hi + 1], x[hi]])
    return x[i], right - left


# ---------------------------------------------------------------------- undulator lines
@pytest.mark.parametrize("n", [1, 3])
def test_undulator_on_axis_harmonics(undulator, n):
    gamma = float(undulator.gamma[0])
    K_exact = k.e * B0 * PERIOD / (2 * math.pi * k.m_e * k.c)
    K = booklet_k(B0, PERIOD)
    assert K_exact == pytest.approx(K, rel=1e-3)     # booklet coefficient printed to 3 digits
    wavelength = PERIOD / (2 * n * gamma**2) * (1 + K_exact**2 / 2)       # booklet lambda_n, theta = 0
    omega_n = 2 * math.pi * k.c / wavelength
    x = np.linspace(1 - 0.05 / n, 1 + 0.05 / n, 2001)
    values = spectrum(undulator, [[0.0, 0.0, 1.0]], x * omega_n)[0]
    position, width = line_profile(values, x)
    # line position: measured 0.99988 (n = 1) and 0.99992 (n = 3); the finite-N line is
    # also pulled by the end fields, well inside 5e-4 = 2.5 % of the line width
    assert position == pytest.approx(1.0, abs=5e-4)
    # The end poles of this undulator run at half strength over half a period: together they add
    # about half a period at the fundamental and almost nothing at n = 3 (F_3 ~ K^6 at small K), so
    # N_eff = N - 1/2 (n = 1) and N - 1 (n = 3) [derived]; line shape sin^2(pi N x)/(pi N x)^2 has a
    # FWHM of 0.886/(n N_eff) [derived], the booklet's "~ 1/(nN)".
    n_eff = N_PERIODS - (0.5 if n == 1 else 1.0)
    assert values.max() == pytest.approx(on_axis_peak(n, K_exact, gamma, n_eff), rel=1e-2)
    assert width * n * n_eff == pytest.approx(0.886, rel=3e-2)
    assert 0.8 < width * n * N_PERIODS < 1.0


def test_undulator_fundamental_check_value(undulator):
    # computed from the booklet formulas with scipy constants: 1 GeV, lambda_u = 2 cm, B0 = 0.5 T: lambda_1(0) = 3.749486 nm (330.670 eV);
    # ideal N = 50 peak 2.628721e-27 J s/sr, times (49.5/50)^2 for the half-strength end poles [derived]
    omega_1 = 2 * math.pi * k.c / 3.749486e-9
    assert k.hbar * omega_1 / k.e == pytest.approx(330.670, rel=1e-5)
    x = np.linspace(0.99, 1.01, 401)
    values = spectrum(undulator, [[0.0, 0.0, 1.0]], x * omega_1)[0]
    assert values.max() == pytest.approx(2.628721e-27 * (49.5 / 50) ** 2, rel=1e-2)


def test_undulator_line_moves_off_axis_as_booklet_says(undulator):
    # lambda_1(theta) = lambda_u/(2 gamma^2) (1 + K^2/2 + gamma^2 theta^2), evaluated with
    # scipy constants:
    # theta = 1/gamma gives 6.36069 nm. Measured in the plane normal to the wiggle (y-z), where the
    # line stays a clean single peak.
    gamma = float(undulator.gamma[0])
    theta = 1.0 / gamma
    omega = 2 * math.pi * k.c / 6.36069e-9
    x = np.linspace(0.95, 1.05, 1001)
    values = spectrum(undulator, [[0.0, math.sin(theta), math.cos(theta)]], x * omega)[0]
    position, _ = line_profile(values, x)
    assert position == pytest.approx(1.0, abs=1e-3)


def test_planar_undulator_is_polarized_in_the_wiggle_plane_on_axis(undulator):
    # derived: the orbit lies in the x-z plane, so beta and beta-dot have no y component and neither
    # has n x ((n - beta) x beta_dot) for n = z (Jackson eq. 14.65). e1 = x, e2 = y on axis.
    omega_1 = 2 * math.pi * k.c / 3.749486e-9
    amps, basis = radiation_amplitudes(undulator, [[0.0, 0.0, 1.0]], omega_1 * np.linspace(0.98, 1.02, 41))
    np.testing.assert_allclose(basis[0], [[1, 0, 0], [0, 1, 0]], atol=1e-15)
    assert np.max(np.abs(amps[0, 1])) <= 1e-12 * np.max(np.abs(amps[0, 0]))


# ---------------------------------------------------------------------- two evaluators
def test_direct_sum_and_nufft_agree_on_the_undulator(undulator):
    # same discrete sum evaluated two ways; finufft's tolerance eps = 1e-9 bounds the difference
    # (Barnett et al. 2019); stated tolerance 1e-6 of the peak
    gamma = float(undulator.gamma[0])
    directions = direction_grid([0.0, 0.4 / gamma, 1.0 / gamma], [0.0, 1.2])[[0, 1, 2], :].reshape(-1, 3)
    omega_1 = 2 * math.pi * k.c / 3.749486e-9
    omega = np.linspace(0.4, 3.5, 300) * omega_1
    direct = spectrum(undulator, directions, omega, method="direct")
    fast = spectrum(undulator, directions, omega, method="nufft")
    assert np.max(np.abs(direct - fast)) <= 1e-6 * np.max(direct)


def test_direct_sum_and_nufft_agree_on_a_helix(helix):
    u_end = helix.u[-1] / np.linalg.norm(helix.u[-1])
    directions = [[0.0, 0.0, 1.0], u_end, [0.6, 0.0, 0.8], [0.0, -0.8, 0.6]]
    low, high = resolved_band(helix, directions)
    omega = np.geomspace(max(low), 0.9 * min(high), 400)
    direct = spectrum(helix, directions, omega, method="direct")
    fast = spectrum(helix, directions, omega, method="nufft")
    assert np.max(np.abs(direct - fast)) <= 1e-6 * np.max(direct)


# ---------------------------------------------------------------------- energy
def sphere_directions(n_theta=24, n_phi=16):
    """Gauss-Legendre in cos(theta) x trapezoid in phi: directions (m, 3) and weights (m,) in sr."""
    ct, wct = np.polynomial.legendre.leggauss(n_theta)
    phi = 2 * np.pi * np.arange(n_phi) / n_phi
    grid = direction_grid(np.arccos(ct), phi).reshape(-1, 3)
    return grid, np.repeat(wct, n_phi) * (2 * np.pi / n_phi)


def test_spectrum_integrates_to_the_radiated_energy(laser_kick):
    # Parseval + Jackson (14.65): Int_0^inf domega Int dOmega d2W/domega dOmega = Int P dt (Lienard).
    # Measured difference 4.8e-5 at 100 steps per laser cycle (1.1e-5 at 200): it is the O(dt^2)
    # difference between the engine's trapezoid of P and the sampled integral, not the quadrature.
    omega0 = 2 * math.pi * k.c / 0.8e-6
    directions, weights = sphere_directions()
    omega = np.linspace(5e-4, 10.0, 4000) * omega0
    values = spectrum(laser_kick, directions, omega)
    per_direction = np.trapezoid(values, omega, axis=1)
    assert weights @ per_direction == pytest.approx(laser_kick.radiated_energy[-1], rel=2e-4)


def test_parseval_in_one_direction(laser_kick):
    # Parseval (Jackson sec. 14.5): Int d2W/domega dOmega domega = Int dP(t')/dOmega dt'
    # (dP/dOmega per unit retarded time, Jackson 14.38).
    omega0 = 2 * math.pi * k.c / 0.8e-6
    theta, phi = 0.6, 0.3
    n = direction_grid([theta], [phi])[0]
    omega = np.linspace(5e-4, 10.0, 4000) * omega0
    energy_per_sr = float(np.trapezoid(spectrum(laser_kick, n, omega)[0], omega))
    _, beta_dot = orbit_kinematics(laser_kick)
    active = np.flatnonzero(np.linalg.norm(beta_dot, axis=1) > 0)
    t = laser_kick.t
    weights = np.zeros_like(t)
    weights[:-1] += 0.5 * np.diff(t)
    weights[1:] += 0.5 * np.diff(t)
    power = np.array([angular_distribution(laser_kick, int(i), [theta], [phi])[0, 0] for i in active])
    assert energy_per_sr == pytest.approx(float(weights[active] @ power), rel=1e-4)


# ---------------------------------------------------------------------- finite records
@pytest.fixture(scope="module")
def bend_arc():
    """gamma = 30 electron on a 0.3 rad arc of a 1 T field: the record starts and ends accelerating."""
    gamma, B = 30.0, 1.0
    rho = math.sqrt(gamma**2 - 1) * k.m_e * k.c / (k.e * B)
    duration = 0.3 * rho / k.c
    return track(Scenario.from_dict({
        "run": {"duration": duration, "dt": duration / 6000, "radiation_reaction": "none"},
        "particle": {"species": "electron", "position": [0.0, 0.0, 0.0], "gamma": gamma, "direction": [1, 0, 0]},
        "field": [{"type": "uniform", "B": [0.0, 0.0, B]}],
    }))


def test_window_removes_the_truncation_tail(bend_arc):
    # common practice, no source: cutting the record while
    # the charge accelerates leaks a slowly falling tail into directions the orbit never points to;
    # the default taper suppresses it. Direction: in the orbit plane, 0.6 rad behind the start
    # tangent (18/gamma outside the fan). Measured suppression 1e-4 .. 1e-8 over 0.3 .. 2 omega_c.
    u0 = bend_arc.u[0] / np.linalg.norm(bend_arc.u[0])
    rot = -0.6
    n = [u0[0] * math.cos(rot) - u0[1] * math.sin(rot), u0[0] * math.sin(rot) + u0[1] * math.cos(rot), 0.0]
    wc = 1.5 * 30.0**3 * k.c / (math.sqrt(30.0**2 - 1) * k.m_e * k.c / k.e)
    omega = np.geomspace(0.3, 2.0, 12) * wc
    cut = spectrum(bend_arc, [n], omega, window="none")[0]
    tapered = spectrum(bend_arc, [n], omega, window="auto")[0]
    assert np.all(tapered < 1e-3 * cut)


def test_auto_window_leaves_records_that_end_in_drifts_alone(undulator):
    # the beta-dot form is exact when the motion is uniform at both ends (Jackson 14.65/14.66)
    omega = np.linspace(0.9, 1.1, 50) * 2 * math.pi * k.c / 3.749486e-9
    auto = spectrum(undulator, [[0.0, 0.0, 1.0]], omega)
    plain = spectrum(undulator, [[0.0, 0.0, 1.0]], omega, window="none")
    np.testing.assert_array_equal(auto, plain)


def test_unresolved_frequencies_raise_an_error_naming_omega(bend_arc):
    n = bend_arc.u[3000] / np.linalg.norm(bend_arc.u[3000])
    with pytest.raises(ScenarioError, match=r"^omega: .*below pi"):
        spectrum(bend_arc, [n], [1e15, 1e22])


def test_bad_arguments_name_the_key(bend_arc):
    with pytest.raises(ScenarioError, match="^directions"):
        spectrum(bend_arc, [[0.0, 0.0, 0.0]], [1e15])
    with pytest.raises(ScenarioError, match="^directions"):
        spectrum(bend_arc, [1.0, 2.0], [1e15])
    with pytest.raises(ScenarioError, match="^omega"):
        spectrum(bend_arc, [[1.0, 0.0, 0.0]], [0.0, 1e15])
    with pytest.raises(ScenarioError, match="^method"):
        spectrum(bend_arc, [[1.0, 0.0, 0.0]], [1e15], method="fft")
    with pytest.raises(ScenarioError, match="^window"):
        spectrum(bend_arc, [[1.0, 0.0, 0.0]], [1e15], window="hann")


# ---------------------------------------------------------------------- command line
@pytest.fixture(scope="module")
def undulator_file(undulator, tmp_path_factory):
    path = tmp_path_factory.mktemp("spectrum") / "undulator.h5"
    undulator.to_hdf5(path)
    return path


def test_cli_writes_a_csv_table_on_axis(undulator_file, tmp_path, capsys):
    out = tmp_path / "spec.csv"
    code = main(["spectrum", str(undulator_file), "--direction", "0,0,1", "--omega-range", "320 eV,340 eV,201",
                 "--method", "nufft", "-o", str(out)])
    assert code == 0
    text = capsys.readouterr().out
    assert "peak" in text and "wrote" in text
    table = np.loadtxt(out, delimiter=",", comments="#", skiprows=4)
    assert table.shape == (201, 3)
    energy_ev = table[:, 1]
    assert energy_ev[0] == pytest.approx(320.0, rel=1e-9) and energy_ev[-1] == pytest.approx(340.0, rel=1e-9)
    peak_ev = energy_ev[np.argmax(table[:, 2])]
    assert peak_ev == pytest.approx(330.670, rel=5e-4)   # booklet formula, see above


def test_cli_synchrotron_table_in_hdf5(tmp_path, capsys):
    import h5py

    # one full turn of a gamma = 30 electron in 1 T: a closed, synchrotron-like orbit
    source = tmp_path / "turn.h5"
    track(Scenario.from_dict({
        "run": {"duration": 2 * math.pi * 30 * k.m_e / (k.e * 1.0), "steps_per_period": 2000,
                "radiation_reaction": "none"},
        "particle": {"species": "electron", "gamma": 30.0, "direction": [1, 0, 0]},
        "field": [{"type": "uniform", "B": [0.0, 0.0, 1.0]}],
    })).to_hdf5(source)
    out = tmp_path / "sync.h5"
    assert main(["spectrum", str(source), "--method", "synchrotron", "-o", str(out)]) == 0
    assert "critical photon energy" in capsys.readouterr().out
    with h5py.File(out, "r") as h5:
        assert h5["dW_domega"].attrs["unit"] == "J s"
        assert np.all(np.isfinite(h5["dW_domega"][()]))
        assert h5["omega"].shape == h5["dN_domega"].shape


@pytest.mark.parametrize("argv, key", [
    (["--direction", "0,0"], "--direction"),
    (["--direction", "0,0,0"], "--direction"),
    (["--omega-range", "1e15,2e15"], "--omega-range"),
    (["--omega-range", "1 T,2 T,10"], "--omega-range"),
    (["--omega-range", "1e15,1e23,10"], "omega"),
])
def test_cli_bad_input_exits_2_naming_the_key(undulator_file, capsys, argv, key):
    assert main(["spectrum", str(undulator_file), *argv]) == 2
    assert f"error: {key}:" in capsys.readouterr().err


def test_cli_missing_file_exits_2(tmp_path, capsys):
    assert main(["spectrum", str(tmp_path / "none.h5")]) == 2
    assert "error: result:" in capsys.readouterr().err


# ---------------------------------------------------------------------- lab panel (headless)
def test_spectrum_panel_draws_maps_and_spectra_for_every_run():
    from ui.views.spectrum import SpectrumPanel

    pair = compare(Scenario.from_dict({
        "run": {"duration": "1 ns", "steps_per_period": 2000},
        "particle": {"species": "electron", "gamma": 200.0, "direction": [1, 0, 0]},
        "field": [{"type": "uniform", "B": [0.0, 0.0, 1.0]}],
    }))
    panel = SpectrumPanel()
    panel.update(pair)
    image = panel.map_sources["landau-lifshitz"].data["image"][0]
    assert image.shape == (64, 73) and np.all(np.isfinite(image)) and image.max() > 0
    for method in ("auto", "synchrotron", "nufft"):
        panel.method.value = method
        panel.compute_spectrum(wait=True)
        assert panel.status.object.startswith("Spectrum of every run"), panel.status.object
        if method == "auto":
            assert "method chosen: synchrotron formula" in panel.status.object   # a closed orbit
        for name in ("landau-lifshitz", "none"):   # the scenario's model and the run without reaction force
            y = np.asarray(panel.spectrum_sources[name].data["y"], dtype=float)
            assert len(y) > 100 and np.nanmax(y) > 0


# ---------------------------------------------------------------------- parallel kernels under threads
def test_parallel_spectra_from_two_threads_at_once_match_serial_calls(helix):
    # two lab sessions may compute spectra at the same moment: numba's parallel kernels must run
    # under a thread-safe threading layer (tracker.config.THREADING_LAYER), and give the serial answer
    import threading

    import numba

    from tracker.radiation import synchrotron_spectrum

    u_end = helix.u[-1] / np.linalg.norm(helix.u[-1])
    omega = np.geomspace(1e9, 1e11, 64)
    want_direct = spectrum(helix, u_end[None, :], omega, method="direct")
    want_sync = synchrotron_spectrum(helix, omega)
    assert numba.threading_layer() in ("omp", "tbb")
    start = threading.Barrier(4)
    got, failures = {}, []

    def work(name, call):
        try:
            start.wait()
            for _ in range(3):
                got[name] = call()
        except Exception as exc:  # reported below with the thread's name
            failures.append(f"{name}: {exc!r}")

    calls = {"direct-a": lambda: spectrum(helix, u_end[None, :], omega, method="direct"),
             "direct-b": lambda: spectrum(helix, u_end[None, :], omega, method="direct"),
             "sync-a": lambda: synchrotron_spectrum(helix, omega),
             "sync-b": lambda: synchrotron_spectrum(helix, omega)}
    threads = [threading.Thread(target=work, args=item) for item in calls.items()]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join()
    assert failures == []
    for name, value in got.items():
        np.testing.assert_array_equal(value, want_direct if name.startswith("direct") else want_sync)


def test_spectrum_panel_takes_a_photon_range_and_a_direction():
    from ui.views.spectrum import SpectrumPanel

    # an open arc of a gamma = 20 electron: the radiation integral towards a typed direction
    pair = compare(Scenario.from_dict({
        "run": {"duration": "20 ps", "steps_per_period": 4000},
        "particle": {"species": "electron", "gamma": 20.0, "direction": [1, 0, 0]},
        "field": [{"type": "uniform", "B": [0.0, 0.0, 0.1]}],
    }))
    panel = SpectrumPanel()
    panel.update(pair)
    panel.method.value = "nufft"
    panel.range_low.value, panel.range_high.value = "1 meV", "10 meV"
    panel.direction.value = "1, 0.05, 0"
    panel.compute_spectrum(wait=True)
    assert panel.status.object.startswith("Spectrum of every run"), panel.status.object
    assert "+0.9988, +0.0499" in panel.status.object
    x = np.asarray(panel.spectrum_sources["landau-lifshitz"].data["x"], dtype=float)
    assert len(x) == 800 and x.min() == pytest.approx(1e-3, rel=1e-9)   # eV axis
    panel.range_high.value = ""
    panel.compute_spectrum(wait=True)
    assert panel.status.object.startswith("No spectrum: photon range: give both ends")
