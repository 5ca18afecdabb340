"""The lab's session model without a browser: loading, editing, validation messages, runs, cancel."""

import html
import threading
import tomllib

import pytest

import tracker
from tracker import Scenario
from ui.bundled import bundled_path, bundled_scenarios
from ui import work
from ui.runner import RunController
from ui.state import MAX_SCENARIO_BYTES, LabState, error_belongs_to, key_path
from ui.work import RunQueue
from ui.views import prepare_drawing

RING = "storage_ring_bend.toml"


def raw(name):
    return tomllib.loads(bundled_path(name).read_text(encoding="utf-8"))


@pytest.fixture
def state():
    s = LabState(prepare=prepare_drawing)
    assert s.load_bundled(RING)
    return s


def long_ring_state(duration="7 ms"):
    """The ring scenario stretched to ~1e8 steps (seconds of work) with few saved states."""
    s = LabState(prepare=prepare_drawing)
    s.load_bundled(RING)
    s.set_value(("run", "duration"), duration)
    s.set_value(("run", "save_every"), 100_000)
    assert s.scenario is not None, s.error
    return s


# ---------------------------------------------------------------------- paths and errors
def test_key_path_matches_the_engines_key_format():
    assert key_path(("field", 0, "B")) == "field[0].B"
    assert key_path(("run", "duration")) == "run.duration"
    assert key_path(("title",)) == "title"


def test_error_belongs_to_the_input_it_names_and_its_components_only():
    assert error_belongs_to("field[0].B[2]", "field[0].B")
    assert error_belongs_to("field[0].B", "field[0].B")
    assert not error_belongs_to("field[0].B0", "field[0].B")
    assert not error_belongs_to("field[1].B", "field[0].B")
    assert not error_belongs_to("", "field[0].B")


# ---------------------------------------------------------------------- loading
@pytest.mark.parametrize("name", sorted(bundled_scenarios()))
def test_every_bundled_scenario_loads_valid_with_a_plan(name):
    s = LabState()
    assert s.load_bundled(name)
    assert s.error == "" and s.scenario is not None
    assert s.plan.steps >= 1 and s.plan.memory_bytes > 0
    assert s.scenario.to_dict() == tracker.load_scenario(bundled_path(name)).to_dict()


def test_bad_toml_upload_keeps_the_current_draft(state):
    before = state.draft
    assert not state.load_toml("[run\nduration = ", "upload: broken.toml")
    assert "broken.toml" in state.source_error and "not valid TOML" in state.source_error
    assert state.draft == before and state.scenario is not None


def test_uploaded_scenario_replaces_the_draft_and_counts_as_a_load(state):
    loads = state.loads
    text = bundled_path("mirror_trap.toml").read_text(encoding="utf-8")
    assert state.load_toml(text, "upload: mirror_trap.toml")
    assert state.loads == loads + 1 and state.source == "upload: mirror_trap.toml"
    assert state.scenario.fields[0].type == "mirror"


def test_download_text_round_trips_through_the_engine(state):
    state.set_value(("field", 0, "B"), ["0 T", "0.1 T", "1.2 T"])
    text = state.toml_text()
    again = Scenario.from_toml(text)
    assert again.to_dict() == state.scenario.to_dict()
    assert again.to_toml() == state.scenario.to_toml()  # the SI form is exact too


# ---------------------------------------------------------------------- editing and validation
def test_invalid_entry_gives_the_engines_message_and_key(state):
    state.set_value(("field", 0, "B"), ["0 T", "0 T", "abc"])
    assert state.scenario is None and state.plan is None
    assert state.error_key == "field[0].B[2]"
    with pytest.raises(tracker.ScenarioError) as exc:
        d = raw(RING)
        d["field"][0]["B"] = ["0 T", "0 T", "abc"]
        Scenario.from_dict(d)
    assert state.error == str(exc.value)
    assert state.toml_text() is None
    assert not state.start_run()
    state.set_value(("field", 0, "B"), ["0 T", "0 T", "1.2 T"])
    assert state.error == "" and state.scenario is not None


def test_wrong_dimension_names_the_key(state):
    state.set_value(("run", "duration"), "3 m")
    assert state.error_key == "run.duration" and "wrong dimension" in state.error


def test_empty_vector_component_is_reported_not_guessed(state):
    state.set_value(("field", 0, "B"), ["0 T", None, "1 T"])
    assert state.scenario is None and state.error_key == "field[0].B[1]"


def test_plan_follows_edits_live(state):
    steps = state.plan.steps
    state.set_value(("run", "duration"), f"{2 * state.scenario.run.duration!r} s")
    assert state.plan.steps == pytest.approx(2 * steps, rel=1e-3)


def test_add_move_remove_fields_keep_their_values(state):
    version = state.layout_version
    state.add_field("mirror")
    assert state.error_key == "field[1].B0"  # the new component still needs its values
    state.set_value(("field", 1, "B0"), "0.5 T")
    state.set_value(("field", 1, "L"), "2 m")
    assert state.scenario is not None, state.error
    state.move_field(1, -1)
    assert [f["type"] for f in state.draft["field"]] == ["mirror", "uniform"]
    assert state.scenario.fields[0].params["B0"] == 0.5
    state.move_field(0, -1)  # already first: nothing happens
    assert [f["type"] for f in state.draft["field"]] == ["mirror", "uniform"]
    state.remove_field(0)
    assert [f["type"] for f in state.draft["field"]] == ["uniform"]
    assert state.layout_version > version


def test_unknown_field_type_is_refused_by_name(state):
    with pytest.raises(KeyError):
        state.add_field("no-such-field")


def test_species_switch_drops_inputs_of_other_species(state):
    state.set_species("ion")
    assert state.error_key in ("particle.charge_state", "particle.mass_number")
    state.set_value(("particle", "charge_state"), 2)
    state.set_value(("particle", "mass_number"), 4)
    assert state.scenario is not None, state.error
    state.set_species("proton")
    assert "charge_state" not in state.draft["particle"]
    assert state.scenario.particle.species == "proton"


def test_momentum_kind_switch_waits_for_a_value(state):
    state.set_momentum_kind("gamma")
    assert state.momentum_kind() == "gamma"
    assert state.scenario is None and state.error_key == "particle.gamma"
    state.set_value(("particle", "gamma"), 1000)
    assert state.scenario.particle.gamma == pytest.approx(1000.0)
    state.set_momentum_kind("u")
    assert "direction" not in state.draft["particle"]
    state.set_value(("particle", "u"), [0, 5, 0])
    assert state.scenario is not None and state.momentum_kind() == "u"


def test_step_mode_switch(state):
    state.set_step_mode("dt")
    assert "steps_per_period" not in state.draft["run"] and state.step_mode() == "dt"
    state.set_value(("run", "dt"), "1 ps")
    assert state.plan.dt == pytest.approx(state.scenario.run.duration / state.plan.steps)
    assert state.plan.dt <= 1e-12


# ---------------------------------------------------------------------- runs
def test_a_run_shows_exactly_what_compare_returns(state):
    state.set_value(("field", 0, "B"), ["0 T", "0 T", "1.2 T"])
    assert state.start_run()
    assert state.wait_run(60)
    assert state.status == "completed" and state.run_count == 1
    expected = tracker.compare(state.scenario)
    for name in ("damped", "undamped"):
        got = getattr(state.comparison, name).summary()
        want = getattr(expected, name).summary()
        assert got["energy_radiated"] == want["energy_radiated"]
        assert got["final_energy"] == want["final_energy"]
    reference = state.prepared["orbits"]["reference"]
    assert reference == state.scenario.run.radiation_reaction
    assert state.prepared["orbits"]["paths"][reference]["x-y"]["h"].size > 0
    assert not state.results_stale
    state.set_value(("field", 0, "B"), ["0 T", "0 T", "1.3 T"])
    assert state.results_stale


def test_cancel_keeps_and_marks_the_partial_result():
    s = long_ring_state()
    planned = s.plan.steps
    assert s.start_run()
    ctl = s.controller
    while not ctl.reported and not ctl.done:
        ctl.wait(0.02)
    s.cancel_run()
    assert s.wait_run(60)
    assert s.status == "cancelled"
    for name in ("damped", "undamped"):
        result = getattr(s.comparison, name)
        assert result.meta["complete"] is False and result.meta["stop_reason"] == "cancelled"
        assert 0 < result.meta["steps"] < planned
        assert len(result.t) >= 1
    assert "cancelled" in s.status_text and "partial" in s.status_text
    assert s.prepared is not None


def test_run_failure_is_one_line_and_the_state_recovers(state):
    def broken(scenario, progress=None, cancel=None):
        raise RuntimeError("kernel exploded")

    assert state.start_run(job=broken)
    state.wait_run(10)
    assert state.status == "failed"
    assert state.status_text == "the run failed: RuntimeError: kernel exploded"
    assert "Traceback" not in state.status_text
    assert state.start_run()
    state.wait_run(60)
    assert state.status == "completed"


def test_controller_reports_engine_errors_by_message():
    def refuses(scenario, progress=None, cancel=None):
        raise tracker.ScenarioError("run.duration", "must be positive, not -1.")

    ctl = RunController(object(), job=refuses).start()
    assert ctl.wait(10)
    assert ctl.error == "run.duration: must be positive, not -1."
    with pytest.raises(RuntimeError):
        ctl.start()


def test_sessions_do_not_share_state():
    a, b = LabState(), LabState()
    a.load_bundled(RING)
    b.load_bundled("mirror_trap.toml")
    a.set_value(("field", 0, "B"), ["0 T", "0 T", "2 T"])
    assert b.draft["field"][0]["type"] == "mirror"
    assert raw(RING)["field"][0]["B"] != a.draft["field"][0]["B"]  # the file itself is untouched


def test_malformed_tables_from_a_file_do_not_break_the_forms():
    from ui.editors.fields import FieldComposer
    from ui.editors.particle import ParticleEditor
    from ui.editors.run import RunEditor

    s = LabState()
    assert s.load_toml('particle = 5\nfield = "x"\n[run]\nduration = "1 ns"\nfoo = 1\n', "odd.toml")
    assert s.scenario is None and s.error.startswith(s.error_key)
    FieldComposer(s), ParticleEditor(s), RunEditor(s)  # build without raising
    s.set_value(("particle", "species"), "electron")
    assert s.draft["particle"] == {"species": "electron"}
    s.add_field("uniform")
    assert s.draft["field"] == [{"type": "uniform"}]


# ---------------------------------------------------------------------- queue
def test_one_run_per_session_and_runs_beyond_the_slots_wait_in_line(monkeypatch):
    monkeypatch.setattr(work, "RUN_QUEUE", RunQueue(slots=1))
    gate = threading.Event()

    def gated(scenario, progress=None, cancel=None):
        assert gate.wait(60)
        return tracker.compare(scenario, progress=progress, cancel=cancel)

    first, second, third = (LabState(prepare=prepare_drawing) for _ in range(3))
    for s in (first, second, third):
        assert s.load_bundled(RING)
    assert first.start_run(job=gated)
    assert first.running and not first.start_run()  # one run at a time per session (gate holds it)
    assert second.start_run() and third.start_run()
    assert second.status == "queued" and "position 1" in second.status_text
    assert third.status == "queued" and "position 2" in third.status_text
    second.cancel_run()  # leaves the line at once, without ever starting
    assert second.wait_run(5) and second.status == "cancelled" and second.comparison is None
    third.poll()
    assert "position 1" in third.status_text
    gate.set()
    assert first.wait_run(120) and first.status == "completed"
    assert third.wait_run(120) and third.status == "completed"
    assert work.RUN_QUEUE.running == 0 and work.RUN_QUEUE.waiting == 0


def test_opening_another_scenario_cancels_and_clears_the_old_run(monkeypatch):
    s = long_ring_state()
    assert s.start_run()
    ctl = s.controller
    assert s.load_bundled("mirror_trap.toml")
    assert ctl.cancel_requested and s.controller is None
    assert s.status == "idle" and s.comparison is None and s.prepared is None and s.status_text == ""
    assert ctl.wait(60)


# ---------------------------------------------------------------------- every error at once
def test_three_bad_values_give_three_messages_under_their_inputs():
    from ui.editors.fields import FieldComposer
    from ui.editors.particle import ParticleEditor
    from ui.editors.run import RunEditor

    s = LabState()
    assert s.load_bundled("laser_headon_gev.toml")
    editors = [RunEditor(s), ParticleEditor(s), FieldComposer(s)]
    s.set_value(("run", "duration"), "3 parsec")
    s.set_value(("field", 0, "wavelength"), "-0.8 um")
    s.set_value(("particle", "kinetic_energy"), "abc")
    assert s.scenario is None
    assert set(s.errors) == {"run.duration", "field[0].wavelength", "particle.kinetic_energy"}
    assert "wrong dimension" in s.errors["run.duration"]
    assert "must be positive" in s.errors["field[0].wavelength"]
    assert "abc" in s.errors["particle.kinetic_energy"]
    shown = {row.key: row.error_text for editor in editors for row in editor.rows if row.error_text}
    assert set(shown) == set(s.errors)
    for key, message in s.errors.items():
        assert html.escape(message) in shown[key]
    s.set_value(("run", "duration"), "20 ps")
    assert set(s.errors) == {"field[0].wavelength", "particle.kinetic_energy"}


# ---------------------------------------------------------------------- hostile files
@pytest.mark.parametrize("text, words", [
    ("x = " + "[" * 500 + "]" * 500, "nested"),
    ("title = '" + "a" * (MAX_SCENARIO_BYTES + 1) + "'", "longer than"),
    ("a = { b = { c = { d = { e = { f = { g = { h = { i = { j = 1 } } } } } } } } }", "nested more than"),
])
def test_oversize_and_deeply_nested_files_are_refused_with_a_message(state, text, words):
    before = state.draft
    assert not state.load_toml(text, "upload: bad.toml")
    assert words in state.source_error and len(state.source_error) < 500
    assert state.draft == before and state.scenario is not None  # the session keeps working
    assert state.start_run() and state.wait_run(120) and state.status == "completed"


@pytest.mark.parametrize("text, key", [
    ('[run]\nduration = "1 ns"\n[particle]\nspecies = "electron"\ngamma = 2\ndirection = [1, 0, 0]\n'
     '[[field]]\ntype = ["uniform"]\n', "field[0].type"),
    ('[run]\nduration = "1 ns"\n[particle]\nspecies = "electron"\ngamma = 2\ndirection = [1, 0, 0]\n'
     '[[field]]\ntype = "uniform"\nB = 5\n', "field[0].B"),
    ('[run]\nduration = [1, 2]\n[particle]\nspecies = "electron"\ngamma = {a = 1}\ndirection = [1, 0, 0]\n',
     "run.duration"),
    ('run = 3\nparticle = "x"\nfield = [1, "a", {type = {}}]\n', "run"),
])
def test_wrongly_typed_values_give_messages_and_forms_still_build(text, key):
    from ui.editors.fields import FieldComposer
    from ui.editors.particle import ParticleEditor
    from ui.editors.run import RunEditor

    s = LabState()
    assert s.load_toml(text, "upload: odd.toml")
    assert s.scenario is None and key in s.errors
    FieldComposer(s), ParticleEditor(s), RunEditor(s)  # build without raising
    assert s.load_bundled(RING) and s.scenario is not None  # and the session goes on


def test_download_keeps_units_as_entered_and_round_trips(state):
    state.set_value(("run", "duration"), "120 fs")
    state.set_value(("field", 0, "B"), ["0 T", 0.0, "1.43 T"])
    text = state.toml_text()
    assert 'duration = "120 fs"' in text and 'B = ["0 T", 0.0, "1.43 T"]' in text
    assert "1.2000000000000002e-13" not in text
    assert Scenario.from_toml(text).to_dict() == state.scenario.to_dict()


def test_a_closed_tab_cancels_its_session_work_within_two_polls():
    from types import SimpleNamespace

    from ui.session import ABSENT_POLLS, SessionLink, browser_connected

    server_session = SimpleNamespace(id="s1", connection_count=1)
    context = SimpleNamespace(id="s1", server_context=SimpleNamespace(sessions=[server_session]))
    doc = SimpleNamespace(session_context=context)
    assert browser_connected(doc) is True and browser_connected(SimpleNamespace()) is None
    s = long_ring_state()
    link = SessionLink(doc=doc)
    link.on_gone(s.cancel_run)
    assert s.start_run()
    link.watch(s.poll)
    link.poll()
    assert not s.controller.cancel_requested
    server_session.connection_count = 0  # the tab closed
    for _ in range(ABSENT_POLLS):
        link.poll()
    assert link.gone and s.controller.cancel_requested
    assert s.wait_run(60) and s.status == "cancelled"
