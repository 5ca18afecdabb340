"""The lab's beam form without a browser: switching one particle <-> a beam, values as typed, every bad
value named under its box, particle-file uploads, the plan's count and memory, and a run that equals
``tracker.compare`` of the same Scenario. The Scenario is the only judge of validity: each check
compares with what the engine makes of the equivalent TOML text.
"""

import html

import numpy as np
import pytest

import tracker
from tracker import Scenario
from ui.bundled import bundled_path
from ui.controls import RunControls, validity_html
from ui.editors.particle import ParticleEditor
from ui.editors.run import RunEditor
from ui.state import LabState
from ui.views import prepare_drawing

RING = "storage_ring_bend.toml"
#: the beam the tests type into the form, as a scenario file would give it
BEAM_KEYS = 'count = 5\nseed = 3\nenergy_spread = 0.01\ndivergence = "0.5 mrad"\nsize = ["2 um", "2 um", 0]\n'


def ring_text():
    return bundled_path(RING).read_text(encoding="utf-8")


def ring_beam_text(extra=BEAM_KEYS):
    """The bundled ring scenario with its [particle] table turned into a [beam] table plus ``extra``."""
    head, _, rest = ring_text().partition("[particle]\n")
    particle, _, fields = rest.partition("\n[[field]]")
    return f"{head}[beam]\n{particle}{extra}\n[[field]]{fields}"


@pytest.fixture
def lab():
    state = LabState(prepare=prepare_drawing)
    assert state.load_bundled(RING)
    return state, ParticleEditor(state), RunEditor(state)


def rows_of(editor):
    return {row.key: row for row in editor.rows}


def type_beam(editor):
    """Type BEAM_KEYS into the beam form's boxes, as a person would (text, not numbers)."""
    rows = rows_of(editor)
    rows["beam.count"].boxes[0].value = "5"
    rows["beam.seed"].boxes[0].value = "3"
    rows["beam.energy_spread"].boxes[0].value = "0.01"
    rows["beam.divergence"].boxes[0].value = "0.5 mrad"
    for box, text in zip(rows["beam.size"].boxes, ("2 um", "2 um", "0")):
        box.value = text


def test_particle_to_beam_and_back_keeps_the_shared_keys_and_gives_the_tomls_scenario(lab):
    state, editor, _ = lab
    particle = dict(state.draft["particle"])
    state.set_particle_mode("beam")
    assert "particle" not in state.draft and state.draft["beam"] == particle
    assert list(state.draft) == ["title", "description", "run", "beam", "field"]   # the table keeps its place
    # nothing is invented: the count is required, and the engine's message stands under its box
    assert state.scenario is None and set(state.errors) == {"beam.count"}
    assert "is required" in rows_of(editor)["beam.count"].error_text
    type_beam(editor)
    expected = Scenario.from_toml(ring_beam_text())
    assert state.scenario is not None, state.error
    assert state.scenario == expected and state.scenario.to_toml() == expected.to_toml()
    x, u, _ = state.scenario.initial_particles()
    np.testing.assert_array_equal(x, expected.initial_particles()[0])
    assert 'divergence = "0.5 mrad"' in state.toml_text() and '"2 um"' in state.toml_text()
    # a spread given per axis: one box, two values
    rows_of(editor)["beam.divergence"].boxes[0].value = "0.5 mrad, 1 mrad"
    assert state.draft["beam"]["divergence"] == ["0.5 mrad", "1 mrad"]
    assert state.scenario.beam.divergence_pair == pytest.approx((5e-4, 1e-3))
    rows_of(editor)["beam.divergence"].boxes[0].value = "0.5 mrad"

    state.set_particle_mode("particle")
    assert "beam" not in state.draft and state.draft["particle"] == particle
    assert state.scenario == Scenario.from_toml(ring_text())
    assert [row.key for row in editor.rows][0].startswith("particle.")
    state.set_particle_mode("beam")                  # the beam's own values come back
    assert state.scenario == expected


def test_a_bad_count_and_energy_spread_are_named_under_their_boxes(lab):
    state, editor, _ = lab
    state.set_particle_mode("beam")
    rows = rows_of(editor)
    rows["beam.count"].boxes[0].value = "many"
    rows["beam.energy_spread"].boxes[0].value = "-0.1"
    assert state.scenario is None and set(state.errors) == {"beam.count", "beam.energy_spread"}
    for key, words in (("beam.count", "whole number"), ("beam.energy_spread", "must not be negative")):
        assert words in state.errors[key]
        assert html.escape(state.errors[key]) in rows[key].error_text
    assert 'data-count="2"' in validity_html(state)
    # the engine's cross-key rule (a spread needs a moving centroid) lands under its box too
    rows["beam.count"].boxes[0].value = "4"
    rows["beam.energy_spread"].boxes[0].value = "0.01"
    state.set_momentum_kind("u")
    rows_of(editor)["beam.u"].boxes[0].value = "0"
    for box in rows_of(editor)["beam.u"].boxes[1:]:
        box.value = "0"
    assert state.error_key == "beam.energy_spread"
    assert "moving centroid" in rows_of(editor)["beam.energy_spread"].error_text


def test_the_plan_shows_the_count_and_the_memory_of_every_ticked_model(lab, monkeypatch):
    state, editor, run_editor = lab
    state.set_particle_mode("beam")
    type_beam(editor)
    readout = run_editor._plan.object
    assert '<span id="plan-particles">5</span>' in readout
    assert tracker.plan.human_bytes(state.plan.memory_bytes) in readout
    peak = tracker.plan.comparison_memory(state.scenario, state.plan, len(state.models))[1]
    assert f'data-bytes="{peak}"' in readout and "2 runs" in readout
    assert 'id="beam-count" data-count="5"' in editor._readout.object
    state.set_models(list(tracker.engine.MODEL_ORDER))
    every = tracker.plan.comparison_memory(state.scenario, state.plan, 4, tracker.engine.MODEL_ORDER)[1]
    assert f'data-bytes="{every}"' in run_editor._plan.object
    # four models that do not fit together are refused before a run, as tracker.compare would
    monkeypatch.setattr(tracker.plan, "memory_limit_bytes", lambda: peak)
    controls = RunControls(state)
    assert "comparing 4 models" in validity_html(state) and "beam.count" in validity_html(state)
    assert controls.run.disabled and not state.start_run()
    state.set_models(["none", "landau-lifshitz"])
    assert not controls.run.disabled and "scenario-ok" in validity_html(state)


def test_a_particle_file_is_uploaded_like_a_field_map(lab):
    state, editor, _ = lab
    state.set_particle_mode("beam")
    state.set_beam_source("file")
    assert set(state.draft["beam"]) == {"species"}        # a file gives the centroid: the rest is put aside
    assert [row.key for row in editor.rows] == ["beam.file", "beam.iteration"]
    text = "x [um], y [um], z [um], ux [1], uy [1], uz [1]\n0, 1, 0, 5000, 0, 0\n2, 0, 0, 6000, 1, 0\n"
    rows_of(editor)["beam.file"].upload("bunch.csv", text.encode())
    path = state.draft["beam"]["file"]
    assert path.endswith("bunch.csv") and path != "bunch.csv" and state.scenario is not None, state.error
    expected = Scenario.from_toml(ring_beam_text("").replace(
        'position = [0, 0, 0]\nkinetic_energy = "2.99948900 GeV"\ndirection = [1, 0, 0]\n', f"file = {path!r}\n"))
    assert state.scenario == expected and state.scenario.particle_count == 2
    np.testing.assert_array_equal(state.scenario.initial_particles()[1], [[5000, 0, 0], [6000, 1, 0]])
    state.set_beam_source("sampled")                        # the centroid comes back
    assert state.draft["beam"]["kinetic_energy"] == "2.99948900 GeV" and "file" not in state.draft["beam"]


def test_the_run_of_an_edited_beam_equals_compare_of_the_same_scenario(lab):
    state, editor, _ = lab
    state.set_particle_mode("beam")
    type_beam(editor)
    assert state.start_run()
    assert state.wait_run(120) and state.status == "completed", state.status_text
    expected = tracker.compare(Scenario.from_toml(ring_beam_text()), models=state.models)
    assert state.comparison.models == expected.models == ["none", "landau-lifshitz"]
    for model in expected.models:
        got, want = state.comparison[model], expected[model]
        assert got.count == want.count == 5
        for name in ("t", "x", "u", "gamma", "radiated_energy"):
            np.testing.assert_array_equal(getattr(got, name), getattr(want, name))
    assert state.prepared["beam"]["count"] == 5 and state.prepared["beam"]["drawn"] == 5
