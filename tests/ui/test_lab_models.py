"""The lab's model ticks and Photons view without a browser.

What the page shows is checked against the engine's own calls (``tracker.compare`` with the
same models, ``tracker.radiation.photons``); the physics of those calls is tested in tests/.
"""

import html

import numpy as np
import pytest

import tracker
from tracker.engine import MODEL_ORDER
from tracker.radiation import photons as photon_analysis
from ui.app import TAB_PHOTONS, TAB_RESULTS, create_app
from ui.bundled import bundled_path
from ui.state import LabState, default_models
from ui.views import prepare_drawing
from ui.views.palette import MODEL_LABELS, MODEL_STYLES
from ui.views.photons import NO_PHOTONS, PhotonView, prepare_photons
from ui.views.summary import summary_html

LASER = "laser_headon_gev.toml"
ALL = list(MODEL_ORDER)


@pytest.fixture(scope="module")
def all_models_lab():
    """One lab session that ran the bundled laser scenario with all four models."""
    lab = create_app()
    assert lab.state.load_bundled(LASER)
    lab.state.set_models(ALL)
    assert lab.controls.start()
    assert lab.state.wait_run(300)
    lab.link.poll()
    assert lab.state.status == "completed", lab.state.status_text
    return lab


def test_a_loaded_scenario_ticks_its_own_model_and_none():
    state = LabState()
    assert state.load_bundled(LASER)
    assert state.models == ["none", "landau-lifshitz"]
    # the run form's model replaces the ticked one, as the damped/undamped pair did
    state.set_value(("run", "radiation_reaction"), "quantum-stochastic")
    assert state.models == ["none", "quantum-stochastic"]
    assert default_models({"run": {"radiation_reaction": "landau-lifshitz-quantum"}}) == [
        "none", "landau-lifshitz-quantum"]
    assert default_models({"run": {"radiation_reaction": "no-such-model"}}) == ["none", "landau-lifshitz"]
    with pytest.raises(tracker.ScenarioError, match="models"):
        state.set_models(["none", "drag"])


def test_ticks_mirror_the_state_and_no_tick_means_no_run():
    lab = create_app()
    ticks = lab.controls.model_ticks
    assert [m for m, t in ticks.items() if t.value] == lab.state.models
    ticks["quantum-stochastic"].value = True
    assert lab.state.models == ["none", "landau-lifshitz", "quantum-stochastic"]
    for tick in ticks.values():
        tick.value = False
    assert lab.state.models == []
    assert lab.controls.run.disabled and "tick at least one" in lab.controls.validity.object
    assert not lab.state.start_run()
    lab.state.load_bundled(LASER)  # a new scenario ticks its pair again, and the boxes follow
    assert [m for m, t in ticks.items() if t.value] == ["none", "landau-lifshitz"]
    assert not lab.controls.run.disabled


def test_each_ticked_model_runs_and_matches_the_engine(all_models_lab):
    state = all_models_lab.state
    assert state.comparison.models == ALL
    expected = tracker.compare(state.scenario, models=ALL)
    for model in ALL:
        # the same scenario and seed: the lab's run is the engine's, bit for bit (stochastic included)
        np.testing.assert_array_equal(state.comparison[model].gamma, expected[model].gamma)
    text = summary_html(state.comparison)
    for model in ALL:
        assert f'id="sum-energy_radiated-{model}"' in text and MODEL_LABELS[model] in text


def test_every_model_keeps_its_colour_in_every_view(all_models_lab):
    lab = all_models_lab
    lab.tabs.show(TAB_RESULTS)
    series = lab.tabs.context.views["series"]
    orbits = lab.tabs.context.views["orbits"]
    for model in ALL:
        color = MODEL_STYLES[model]["color"]
        for fig in series.figures.values():
            lines = [r for r in fig.renderers if r.data_source is series.sources[model]]
            assert lines and all(r.glyph.line_color == color for r in lines)
        for fig in orbits.figures:
            lines = [r for r in fig.renderers if r.data_source is orbits.paths[(model, fig.title.text.split()[0])]]
            assert lines and all(r.glyph.line_color == color for r in lines)
        assert len(series.sources[model].data["t"]) > 1
        tick = lab.controls.model_ticks[model]
        assert any(color in sheet for sheet in tick.stylesheets if isinstance(sheet, str))
        # the summary's swatch for this model's column
        assert f"{color}\"></span>{MODEL_LABELS[model]}" in summary_html(lab.state.comparison)


def test_legends_list_only_the_models_that_ran():
    lab = create_app()
    assert lab.state.load_bundled(LASER)
    lab.state.set_models(["landau-lifshitz-quantum"])
    assert lab.controls.start() and lab.state.wait_run(300)
    lab.link.poll()
    assert lab.state.comparison.models == ["landau-lifshitz-quantum"]
    series = lab.tabs.context.views["series"]
    shown = {item.label.value for item in series.figures["gamma"].legend[0].items if item.visible}
    assert shown == {MODEL_LABELS["landau-lifshitz-quantum"]}
    assert lab.state.prepared["photons"] is None  # no stochastic run: no photons to show
    lab.tabs.show(TAB_PHOTONS)
    photons = lab.tabs.context.views["photons"]
    assert html.escape(NO_PHOTONS) in photons.message.object and not photons.plots.visible


def test_photon_view_shows_the_engines_histograms(all_models_lab):
    lab = all_models_lab
    comparison = lab.state.comparison
    table = comparison["quantum-stochastic"].photons
    assert len(table) > 0
    data = lab.state.prepared["photons"]
    assert set(data["number"]) == {"quantum-stochastic"}
    # the drawn points are tracker.radiation.photons' histogram on the view's bins, in display units
    points = data["number"]["quantum-stochastic"]
    scale = {"eV": 1.0, "keV": 1e3, "MeV": 1e6, "GeV": 1e9}[data["energy_unit"]] * tracker.constants.e
    low = min(points["x"]) * scale
    assert low >= table.energy[table.energy > 0].min() * (1 - 1e-9)
    # the energy histogram integrates back to the recorded photons' energy (every photon is in a bin)
    energy = photon_analysis.energy_spectrum(table, edges=np.geomspace(
        table.energy[table.energy > 0].min(), table.energy.max() * (1 + 1e-12), 49), weighted_by_energy=True)
    assert np.sum(energy.density * np.diff(energy.edges)) == pytest.approx(table.total_energy(), rel=1e-12)
    # totals: each model's radiated energy, and the photons the stochastic run recorded
    assert data["totals"]["quantum-stochastic (photons)"] == pytest.approx(table.total_energy(), rel=1e-15)
    for model in ALL:
        assert data["totals"][model] == comparison[model].radiated_energy[-1]
    assert data["counts"]["quantum-stochastic"][0] == len(table)
    # a one-particle run gets the classical synchrotron-function spectrum of its own orbit
    classical = data["classical"]["quantum-stochastic"]
    assert np.isfinite(classical["number"]).sum() > 0
    view = PhotonView(lab.state)
    assert view.plots.visible and 'id="photon-totals"' in view.totals.object
    assert len(view.sources[("number", "quantum-stochastic")].data["x"]) == len(points["x"])
    assert len(view.sources[("number", "none")].data["x"]) == 0


def test_prepare_photons_counts_every_emitted_photon_in_the_spectrum():
    # what the worker prepares must keep each recorded photon in exactly one energy bin:
    # sum over bins of (dN/deps x bin width) is the number of real photons recorded
    comparison = tracker.compare(tracker.load_scenario(bundled_path(LASER)), models=["quantum-stochastic"])
    data = prepare_photons(comparison)
    table = comparison["quantum-stochastic"].photons
    points = data["number"]["quantum-stochastic"]
    edges = data["energy_edges"]
    bins = np.searchsorted(edges, points["x"]) - 1
    assert np.all((edges[bins] < points["x"]) & (points["x"] < edges[bins + 1]))
    widths = np.diff(edges)[bins]
    assert np.sum(np.asarray(points["y"]) * widths) == pytest.approx(table.weight.sum(), rel=1e-12)
    assert prepare_drawing(comparison)["photons"]["counts"] == data["counts"]


def test_error_bars_are_the_poisson_errors_and_stay_on_the_log_axis():
    from ui.views.photons import BAR_FLOOR, _points

    centers = np.array([1.0, 2.0, 3.0, 4.0])
    density = np.array([4.0, 1.0, 0.0, 9.0])
    error = np.array([2.0, 1.0, 0.0, 1.0])   # the one-photon bin's error equals its value
    p = _points(centers, density, error, 1.0, 1.0)
    np.testing.assert_array_equal(p["x"], [1.0, 2.0, 4.0])        # the empty bin is left out
    np.testing.assert_array_equal(p["high"], [6.0, 2.0, 10.0])
    np.testing.assert_array_equal(p["low"], [2.0, BAR_FLOOR * 1.0, 8.0])
