"""The lab's beam mode without a browser: Beam view data, statistics-only runs, the bundled list.

The BeamResults here are built from arrays (no engine run), so the checks are about what the
view draws from given data, not about physics.
"""

import numpy as np
from bokeh.document import Document

import tracker
from tracker import radiation
from tracker.beam_result import BeamResult
from tracker.engine import Comparison
from ui.app import TAB_BEAM, create_app
from ui.bundled import bundled_path, bundled_scenarios
from ui.state import LabState
from ui.views import prepare_drawing
from ui.views.beam import HEAT_BINS, MAX_ORBIT_PARTICLES, MAX_ORBIT_POINTS, NO_PARTICLES, BeamView, prepare_beam

BEAM_FILE = "laser_bunch_collision.toml"
STAT_KEYS = ("t", "mean_gamma", "rms_gamma_spread", "emittance_x", "emittance_y", "radiated_energy",
             "mean_chi", "max_chi", "lost")


def beam_scenario(count):
    data = tracker.load_scenario(bundled_path(BEAM_FILE)).to_dict()
    data["beam"]["count"] = count
    return tracker.Scenario.from_dict(data)


def beam_result(scenario, n_saved, per_particle, cooling):
    n = scenario.particle_count
    t = np.linspace(0.0, 1e-13, n_saved)
    rng = np.random.default_rng(1)
    gamma0 = 2000.0 * (1 + 0.01 * rng.standard_normal(n))
    gamma = gamma0[None, :] * (1 - cooling * np.linspace(0, 1, n_saved))[:, None]
    x = np.zeros((n_saved, n, 3))
    x[:, :, 0] = 1e-6 * rng.standard_normal(n)[None, :]
    x[:, :, 2] = -3e8 * t[:, None]
    stats = {key: np.linspace(0.0, 1.0, n_saved) for key in STAT_KEYS}
    stats["t"] = t
    if not per_particle:
        return BeamResult(t=t, scenario=scenario, stats=stats, meta={"complete": True})
    zeros = np.zeros((n_saved, n))
    return BeamResult(t=t, scenario=scenario, x=x, u=zeros[..., None].repeat(3, axis=2), gamma=gamma,
                      power=zeros, radiated_energy=zeros, field_work=zeros, chi=zeros, dt=zeros + t[1],
                      stats=stats, meta={"complete": True})


def beam_comparison(count=40, n_saved=25, per_particle=True):
    scenario = beam_scenario(count)
    damped = beam_result(scenario, n_saved, per_particle, cooling=0.2)
    undamped = beam_result(scenario.with_run(radiation_reaction="none"), n_saved, per_particle, cooling=0.0)
    return Comparison(damped=damped, undamped=undamped)


def test_bundled_beam_scenario_is_listed_and_loads_into_the_beam_form():
    from ui.editors.particle import ParticleEditor

    assert BEAM_FILE in bundled_scenarios()
    state = LabState()
    assert state.load_bundled(BEAM_FILE)
    assert state.scenario is not None and state.scenario.beam is not None, state.error
    editor = ParticleEditor(state)
    assert state.particle_section() == "beam" and state.beam_source() == "sampled"
    rows = {row.key: row for row in editor.rows}
    assert rows["beam.count"].boxes[0].value == "1000"
    assert rows["beam.divergence"].boxes[0].value == "0.5 mrad"
    assert [box.value for box in rows["beam.size"].boxes] == ["2 um", "2 um", "5 um"]
    assert "1,000 particles" in editor._readout.object


def test_beam_view_data_shapes_with_particle_arrays():
    comparison = beam_comparison(count=40, n_saved=25)
    data = prepare_beam(comparison)
    assert data["count"] == 40 and data["drawn"] == 40  # fewer than MAX_ORBIT_PARTICLES: all drawn
    for name in ("landau-lifshitz", "none"):
        heat = data["heat"][name]
        assert np.asarray(heat["image"][0]).shape == (HEAT_BINS, 25)
        # every particle is counted once per saved time
        assert np.all(np.asarray(heat["image"][0]).sum(axis=0) == 40)
        assert len(data["curves"][name]["t"]) == 25
        assert len(data["orbits"][name]["x"]) == 40 and len(data["orbits"][name]["z"][0]) == 25
    # the cooled run's last histogram sits lower in gamma than the uncooled one's
    bins = np.arange(HEAT_BINS)
    last = {n: np.asarray(data["heat"][n]["image"][0])[:, -1] for n in ("landau-lifshitz", "none")}
    assert (bins * last["landau-lifshitz"]).sum() < (bins * last["none"]).sum()

    state = LabState()
    view = BeamView(state)
    state.prepared = prepare_drawing(comparison)
    assert view.heat_row.visible and view.orbit_row.visible
    assert len(view.curve_sources["landau-lifshitz"].data["rms_gamma_spread"]) == 25
    assert len(view.orbit_sources[("none", "x-z")].data["xs"]) == 40
    assert "40 of 40 particles drawn" in view.message.object
    Document().add_root(view.__panel__().get_root())


def test_large_beam_is_thinned_for_drawing():
    comparison = beam_comparison(count=400, n_saved=700)
    data = prepare_beam(comparison)
    assert data["drawn"] <= MAX_ORBIT_PARTICLES + 1
    assert len(data["orbits"]["landau-lifshitz"]["x"][0]) <= MAX_ORBIT_POINTS + 1
    assert np.asarray(data["heat"]["landau-lifshitz"]["image"][0]).shape[1] <= 301


def test_statistics_only_result_shows_the_message_instead_of_the_heat_map():
    comparison = beam_comparison(per_particle=False)
    prepared = prepare_drawing(comparison)   # the one-particle views get empty data, no error
    assert prepared["beam"]["heat"] is None and prepared["beam"]["drawn"] == 0
    assert prepared["orbits"]["lo"] is None
    state = LabState()
    view = BeamView(state)
    state.prepared = prepared
    assert not view.heat_row.visible and not view.orbit_row.visible
    assert "run.save" in view.message.object and NO_PARTICLES.split(":")[0][:20] in view.message.object
    assert len(view.curve_sources["landau-lifshitz"].data["emittance_x"]) == 25


def test_lab_builds_the_beam_tab_when_shown_and_it_catches_up_with_a_beam_result():
    lab = create_app()
    assert TAB_BEAM in lab.tabs.titles and TAB_BEAM not in lab.tabs.built
    lab.state.prepared = prepare_drawing(beam_comparison())
    lab.tabs.tabs.active = lab.tabs.index(TAB_BEAM)
    assert TAB_BEAM in lab.tabs.built
    view = lab.tabs.context.views["beam"]
    assert view.heat_row.visible and len(view.curve_sources["landau-lifshitz"].data["t"]) == 25


def test_summary_of_a_beam_run_points_to_the_beam_tab():
    from ui.views.summary import summary_html

    text = summary_html(beam_comparison(per_particle=False))
    assert "see the Beam tab" in text and "summary-table" in text


def test_spectrum_tab_of_a_beam_is_the_engines_incoherent_sum_and_refuses_statistics_only():
    from ui.views.spectrum import SpectrumPanel

    data = tracker.load_scenario(bundled_path(BEAM_FILE)).to_dict()
    data["beam"]["count"] = 6
    data["run"]["save"] = "all"
    scenario = tracker.Scenario.from_dict(data)
    comparison = tracker.compare(scenario)
    panel = SpectrumPanel()
    panel.update(comparison)
    assert "particle 0 of the beam" in panel.map_status.object
    panel.method.value = "synchrotron"
    panel.compute_spectrum(wait=True)
    assert "incoherent sum over the beam's 6 particles" in panel.status.object, panel.status.object
    # the drawn curve is tracker.radiation's beam spectrum (sum over particles of w_i S_i) on the same grid
    x = np.asarray(panel.spectrum_sources["landau-lifshitz"].data["x"], dtype=float)
    y = np.asarray(panel.spectrum_sources["landau-lifshitz"].data["y"], dtype=float)
    scale = {"eV": 1.0, "keV": 1e3, "MeV": 1e6}[panel.spectrum_figure.xaxis.axis_label.split("(")[1][:-1]]
    omega = x * scale * tracker.constants.e / tracker.constants.hbar
    want = radiation.synchrotron_spectrum(comparison.damped, omega)
    np.testing.assert_allclose(y[np.isfinite(y)], want[np.isfinite(y)], rtol=1e-6)

    data["run"]["save"] = "statistics"
    lean = tracker.compare(tracker.Scenario.from_dict(data))
    panel.update(lean)
    assert panel.compute_button.disabled and "statistics only" in panel.status.object
