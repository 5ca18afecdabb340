"""The lab's forms and views without a browser: generated forms, error placement, preview, export."""

from dataclasses import replace

import numpy as np
import panel as pn
import pytest
from bokeh.document import Document

import tracker
from tracker import constants
from tracker.fields import MODELS
from ui.app import TAB_BEAM, TAB_FIELDS, TAB_PHOTONS, TAB_RESULTS, TAB_SCAN, TAB_SPECTRUM, create_app
from ui.bundled import bundled_scenarios
from ui.editors.fields import FieldComposer, model_options
from ui.editors.run import RunEditor
from ui.entries import entry_to_raw, raw_to_entry, vector_entries, vector_to_raw
from ui.format import LENGTH_UNITS, energy_text, pick_unit, unit_label
from ui.state import LabState
from ui.views import prepare_drawing
from ui.views.decimate import minmax_indices, path_indices
from ui.views.export import result_bytes
from ui.views.preview import field_slice, plane_along, slice_images
from ui.views.summary import summary_html


@pytest.fixture
def ring():
    s = LabState(prepare=prepare_drawing)
    s.load_bundled("storage_ring_bend.toml")
    return s


# ---------------------------------------------------------------------- entries and formats
def test_entries_keep_numbers_si_and_strings_for_the_engine():
    assert entry_to_raw(" 2 ") == 2 and isinstance(entry_to_raw("2"), int)
    assert entry_to_raw("1.5") == 1.5 and entry_to_raw("8e22") == 8e22
    assert entry_to_raw("1.5 T") == "1.5 T"
    assert entry_to_raw("   ") is None
    assert raw_to_entry(1.4295604) == "1.4295604" and raw_to_entry("2 GeV") == "2 GeV"
    assert vector_to_raw(["", " ", ""]) is None
    assert vector_to_raw(["1", "", "2 T"]) == [1, None, "2 T"]
    assert vector_entries([0, 0.5, "1 T"]) == ["0", "0.5", "1 T"]


def test_energy_text_uses_ev_multiples_with_six_digits():
    # 1 MeV = 1e6 * e J (CODATA 2018 exact elementary charge)
    assert energy_text(1e6 * constants.e) == "1 MeV"
    assert energy_text(2.5e9 * constants.e) == "2.5 GeV"
    assert energy_text(1.234567e3 * constants.e) == "1.23457 keV"
    assert energy_text(0.0) == "0 eV"


def test_units_for_display():
    assert pick_unit(3e-5, LENGTH_UNITS) == ("µm", 1e-6)
    assert pick_unit(2.5e7, LENGTH_UNITS) == ("km", 1e3)
    assert pick_unit(0.0, LENGTH_UNITS) == ("m", 1.0)
    assert unit_label("A*m**2") == "A·m²"


# ---------------------------------------------------------------------- decimation
def test_minmax_decimation_keeps_a_one_sample_peak_and_both_ends():
    n = 1_000_003
    y = np.zeros(n)
    y[777_777] = 5.0
    y[123_456] = -3.0
    idx = minmax_indices([y], 500)
    assert len(idx) <= 2 * 500 + 2
    assert 777_777 in idx and 123_456 in idx and idx[0] == 0 and idx[-1] == n - 1
    assert np.all(np.diff(idx) > 0)


def test_short_series_are_not_decimated():
    assert np.array_equal(minmax_indices([np.arange(10.0)], 500), np.arange(10))
    assert np.array_equal(path_indices(np.arange(2.0), np.arange(2.0), (0, 0), (1, 1)), np.arange(2))


def test_path_thinning_keeps_a_fast_gyration_inside_its_ring():
    # a guiding centre circling at R = 1.6 m while gyrating with radius 0.2 m, 200 turns of it per
    # lap: every state has 1.4 <= R <= 1.8 m; thinning by a stride drew chords deep inside that ring
    t = np.linspace(0.0, 2 * np.pi, 2_000_001)
    phase = 200 * t
    x = 1.6 * np.cos(t) + 0.2 * np.cos(phase)
    y = 1.6 * np.sin(t) + 0.2 * np.sin(phase)
    idx = path_indices(x, y, (-1.8, -1.8), (1.8, 1.8), cells=2000)
    assert idx[0] == 0 and idx[-1] == len(t) - 1 and len(idx) < len(t) / 10
    # each drawn segment joins states at most one cell apart: its points stay within the ring +- a cell
    cell = 3.6 / 2000
    for s in np.linspace(0.0, 1.0, 5):
        hx = x[idx[:-1]] + s * np.diff(x[idx])
        hy = y[idx[:-1]] + s * np.diff(y[idx])
        r = np.hypot(hx, hy)
        assert r.min() >= 1.4 - 2 * cell and r.max() <= 1.8 + 2 * cell


def test_drawn_orbit_stays_inside_the_saved_radius_range():
    # the case that drew a filled disc: a fast gyration around a torus, thinned for drawing
    from types import SimpleNamespace

    from ui.views.orbits import prepare_orbits

    t = np.linspace(0.0, 2 * np.pi, 400_001)
    x = np.stack([1.6 * np.cos(t) + 0.2 * np.cos(9000 * t), 1.6 * np.sin(t) + 0.2 * np.sin(9000 * t),
                  0.01 * np.sin(3 * t)], axis=1)
    r_saved = np.hypot(x[:, 0], x[:, 1])
    run = SimpleNamespace(x=x)
    drawn = prepare_orbits(SimpleNamespace(results={"landau-lifshitz": run}, damped=run))
    path = drawn["paths"]["landau-lifshitz"]["x-y"]
    if len(path["h"]):
        r = np.hypot(path["h"], path["v"])
        assert r.min() >= r_saved.min() - 1e-3 and r.max() <= r_saved.max() + 1e-3
    else:  # too dense for a line: the visited cells, which lie in the ring
        image = drawn["images"]["landau-lifshitz"]["x-y"]
        (h0, v0), (h1, v1) = image["lo"], image["hi"]
        rows, cols = np.nonzero(image["rgba"] >> 24)
        n = image["rgba"].shape[0]
        hc = h0 + (cols + 0.5) * (h1 - h0) / n
        vc = v0 + (rows + 0.5) * (v1 - v0) / n
        cell = max(h1 - h0, v1 - v0) / n
        r = np.hypot(hc, vc)
        assert r.min() >= r_saved.min() - cell and r.max() <= r_saved.max() + cell
    assert "x-y" in drawn["notes"]  # the page says that, and how, it thinned


def test_preview_says_so_while_the_draft_is_invalid(ring):
    from ui.views.preview import FieldPreview

    preview = FieldPreview(ring)
    assert len(preview.images["B"].data["image"]) == 1
    ring.set_value(("field", 0, "B"), ["0 T", "0 T", "abc"])
    assert 'data-valid="false"' in preview.message.object
    assert all(len(source.data["image"]) == 0 for source in preview.images.values())
    ring.set_value(("field", 0, "B"), ["0 T", "0 T", "1 T"])
    assert 'data-valid="true"' in preview.message.object and len(preview.images["B"].data["image"]) == 1


# ---------------------------------------------------------------------- generated forms
def test_every_registered_field_model_gets_a_form_with_units(ring):
    composer = FieldComposer(ring)
    for name, model in MODELS.items():
        ring.add_field(name)
        index = len(ring.draft["field"]) - 1
        rows = [r for r in composer.rows if r.path[:2] == ("field", index)]
        assert [r.path[2] for r in rows] == [p.name for p in model.params]
        for row, param in zip(rows, model.params):
            assert len(row.boxes) == (3 if param.kind == "vector" else 1)
            assert unit_label(param.unit) in row._unit.object


def test_a_newly_registered_field_model_appears_with_no_ui_code(ring, monkeypatch):
    uniform = MODELS["uniform"]
    extra = replace(uniform, name="test-sheet", label="Test sheet field",
                    params=uniform.params + (tracker.fields.Param("thickness", "scalar", "length", 1.0,
                                                                  positive=True, doc="made-up input"),),
                    pack=lambda v: [*v["E"], *v["B"]])
    monkeypatch.setitem(MODELS, "test-sheet", extra)
    composer = FieldComposer(ring)
    assert "test-sheet" in model_options().values()
    ring.add_field("test-sheet")
    rows = [r for r in composer.rows if r.path[:2] == ("field", 1)]
    assert [r.path[2] for r in rows] == ["E", "B", "thickness"]
    assert "m" in rows[2]._unit.object
    rows[2].boxes[0].value = "-2 mm"  # as the browser would set it
    assert ring.draft["field"][1]["thickness"] == "-2 mm"
    assert ring.error == "field[1].thickness: must be positive, not '-2 mm'."


def test_error_is_shown_beside_the_input_it_names_only(ring):
    composer = FieldComposer(ring)
    b_row = next(r for r in composer.rows if r.key == "field[0].B")
    e_row = next(r for r in composer.rows if r.key == "field[0].E")
    b_row.boxes[2].value = "abc"
    assert ring.error_key == "field[0].B[2]"
    assert "cannot read &#x27;abc&#x27;" in b_row.error_text
    assert "ro-bad" in b_row.boxes[2].css_classes and "ro-bad" not in b_row.boxes[0].css_classes
    assert not e_row.error_text
    b_row.boxes[2].value = "1.2 T"
    assert not b_row.error_text and "ro-bad" not in b_row.boxes[2].css_classes
    assert ring.scenario.fields[0].params["B"] == (0.0, 0.0, 1.2)


def test_choice_inputs_list_the_engines_registries(ring):
    from tracker.pushers import PUSHERS
    from tracker.radiation.reaction import MODELS as REACTIONS

    rows = {r.key: r for r in RunEditor(ring).rows}
    assert list(rows["run.pusher"].boxes[0].options) == list(PUSHERS)
    assert list(rows["run.radiation_reaction"].boxes[0].options) == list(REACTIONS)


def test_a_session_renders_to_bokeh_models_with_fields_and_results_tabs():
    lab = create_app()
    root = pn.panel(lab).get_root(Document())
    assert root is not None
    assert lab.tabs.titles == [TAB_FIELDS, TAB_RESULTS, TAB_SCAN, TAB_SPECTRUM, TAB_BEAM, TAB_PHOTONS]
    assert lab.state.scenario is not None
    other = create_app()
    assert other.state is not lab.state  # every session has its own state


# ---------------------------------------------------------------------- preview
def test_preview_rows_follow_the_vertical_axis():
    # Paraxial mirror on its axis: Bz = B0 (1 + z^2/L^2), Br = 0
    # (F. F. Chen, Introduction to Plasma Physics and Controlled Fusion, sec. 2.3.3).
    scenario = tracker.Scenario.from_dict({
        "run": {"duration": "1 ns", "dt": "1 ps"},
        "particle": {"species": "electron", "kinetic_energy": "1 MeV", "direction": [1, 0, 0]},
        "field": [{"type": "mirror", "B0": "2 T", "L": "0.1 m"}],
    })
    grid = field_slice(scenario, "x-z", (0.0, 0.0, 0.0), 0.05, 0.0, n=41)
    e_mag, b_mag, bz = slice_images(grid, "Bz")
    centre_column = 20
    assert grid["h"][centre_column] == pytest.approx(0.0, abs=1e-15)
    expected = 2.0 * (1.0 + grid["v"] ** 2 / 0.1**2)
    np.testing.assert_allclose(b_mag[:, centre_column], expected, rtol=1e-12)
    np.testing.assert_allclose(bz[:, centre_column], expected, rtol=1e-12)
    assert np.all(e_mag == 0.0)


def test_default_plane_holds_the_direction_of_motion():
    assert plane_along([0.0, 0.0, -1.0]) == "x-z"
    assert plane_along([1.0, 0.0, 0.0]) == "x-y"
    assert plane_along([0.05, -1.0, 0.02]) == "x-y"
    assert plane_along([0.0, 0.87, 0.5]) == "y-z"


# ---------------------------------------------------------------------- summary and export
def test_summary_marks_partial_runs_and_shows_engine_warnings(ring):
    comparison = tracker.compare(ring.scenario)
    comparison.damped.meta.update(complete=False, stop_reason="cancelled")
    comparison.undamped.warnings = [{"kind": "resolution", "message": "few steps per period", "time": 1e-9}]
    text = summary_html(comparison)
    damped = comparison.damped.scenario.run.radiation_reaction
    assert f'id="partial-{damped}"' in text and 'id="partial-none"' not in text
    want = energy_text(comparison.damped.summary()["energy_radiated"])
    assert f'<td id="sum-energy_radiated-{damped}">{want}</td>' in text
    assert "few steps per period" in text and "resolution" in text


def test_exports_are_the_engines_own_files(ring, tmp_path):
    comparison = tracker.compare(ring.scenario)
    path = tmp_path / "damped.h5"
    path.write_bytes(result_bytes(comparison.damped, "h5"))
    back = tracker.load_result(path)
    np.testing.assert_array_equal(back.x, comparison.damped.x)
    csv = result_bytes(comparison.undamped, "csv").decode()
    assert csv.splitlines()[1].startswith("t_s,x_m")
    assert len(csv.splitlines()) == 2 + len(comparison.undamped.t)


# ---------------------------------------------------------------------- tabs
def test_tabs_are_built_when_first_shown_and_catch_up_with_the_state():
    lab = create_app()
    assert list(lab.tabs.built) == [TAB_FIELDS]  # a page load pays for the visible tab only
    assert lab.controls.start()
    lab.state.controller.wait(120)
    lab.link.poll()
    assert lab.tabs.tabs.active == lab.tabs.index(TAB_RESULTS)
    assert TAB_RESULTS in lab.tabs.built and TAB_SPECTRUM not in lab.tabs.built
    spectrum = lab.spectrum  # built now: shows the run that finished before it existed
    assert spectrum._comparison is lab.state.comparison
    assert not spectrum.compute_button.disabled
    orbits = lab.tabs.context.views["orbits"]
    damped = lab.state.comparison.damped.scenario.run.radiation_reaction
    assert len(orbits.paths[(damped, "x-y")].data["h"]) > 1
    lab.state.load_bundled("mirror_trap.toml")  # another scenario: the old results go everywhere
    assert lab.state.comparison is None and lab.state.status == "idle"
    assert len(orbits.paths[(damped, "x-y")].data["h"]) == 0
    assert spectrum._comparison is None and spectrum.compute_button.disabled


# beam scenarios (a [beam] table, hundreds of particles) are covered by tests/ui/test_lab_beam.py
# with small beams, which keeps this suite's run time down
SINGLE_PARTICLE_BUNDLED = sorted(n for n in bundled_scenarios() if n != "laser_bunch_collision.toml")


@pytest.mark.parametrize("name", SINGLE_PARTICLE_BUNDLED)
def test_every_bundled_scenario_previews_runs_and_draws(name):
    lab = create_app()
    assert lab.state.load_bundled(name)
    preview = next(v for v in lab.page.select(pn.pane.HTML) if 'id="preview-message"' in str(v.object))
    assert "Scenario.fields_at" in preview.object
    assert lab.controls.start()
    lab.state.controller.wait(120)
    lab.link.poll()
    assert lab.state.status == "completed", lab.state.status_text
    orbits = lab.state.prepared["orbits"]
    assert orbits["box"] is not None and orbits["plane"] in ("x-y", "x-z", "y-z")
    series = lab.state.prepared["series"]["runs"][orbits["reference"]]
    assert len(series["t"]) == len(series["gamma"]) > 1
    assert lab.tabs.tabs.active == 1  # the results tab opens after a run
    assert "Scenario.fields_at" in preview.object  # the preview redrew around the orbit


def test_adaptive_step_inputs_appear_with_the_switch(ring):
    editor = RunEditor(ring)
    keys = [r.key for r in editor.rows]
    assert "run.adaptive" in keys and "run.dt_min" not in keys
    next(r for r in editor.rows if r.key == "run.adaptive").boxes[0].value = True
    assert ring.draft["run"]["adaptive"] is True
    rows = {r.key: r for r in editor.rows}
    rows["run.dt_min"].boxes[0].value = "1 ps"
    assert ring.scenario.run.dt_min == pytest.approx(1e-12)
    assert "adaptive dt range" in editor._plan.object
    rows["run.adaptive"].boxes[0].value = False  # dt_min now contradicts the switch
    assert ring.error_key == "run.dt_min"
    assert any(r.key == "run.dt_min" and r.error_text for r in editor.rows)


def test_every_run_key_of_the_engine_has_an_input(ring):
    from tracker.scenario import RUN_KEYS

    ring.set_value(("run", "adaptive"), True, relayout=True)
    keys = {r.key for r in RunEditor(ring).rows}
    step_keys = {"run.dt", "run.steps_per_period"}
    assert {f"run.{k}" for k in RUN_KEYS} - step_keys <= keys


def test_opening_a_scenario_keeps_the_boxes_of_inputs_it_shares():
    # a value typed just after Open must land in a box that stays on the page (the race that dropped it)
    from ui.editors.particle import ParticleEditor

    state = LabState()
    state.load_bundled("laser_headon_gev.toml")
    run, particle, fields = RunEditor(state), ParticleEditor(state), FieldComposer(state)
    before = {r.key: r for editor in (run, particle, fields) for r in editor.rows}
    state.load_bundled("laser_headon_gev.toml")
    after = {r.key: r for editor in (run, particle, fields) for r in editor.rows}
    assert after.keys() == before.keys() and all(after[k] is before[k] for k in after)
    state.load_bundled("storage_ring_bend.toml")
    rows = {r.key: r for r in run.rows}
    assert rows["run.duration"] is before["run.duration"]
    assert rows["run.duration"].boxes[0].value == raw_to_entry(state.draft["run"]["duration"])
    rows["run.duration"].boxes[0].value = "2 ns"  # typing still edits the new draft
    assert state.draft["run"]["duration"] == "2 ns"
