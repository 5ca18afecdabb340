"""The lab's Scan tab without a browser: keys from the registries, a scan, its plot, the click-through.

Bookkeeping checks against the engine itself (common practice, no source).
"""

import numpy as np
import pytest

from tracker import compare, constants
from tracker.fields import MODELS
from ui.app import TAB_RESULTS, TAB_SCAN, create_app
from ui.state import LabState
from ui.views import prepare_drawing
from ui.views.scan import ScanView, scan_keys


@pytest.fixture
def laser():
    s = LabState(prepare=prepare_drawing)
    s.load_bundled("laser_scan_a0_energy.toml")
    # keep the runs tiny: the view is under test, not the physics
    s.set_value(("run", "duration"), "40 fs")
    s.set_value(("run", "steps_per_period"), 30)
    assert s.scenario is not None, s.error
    return s


def test_scan_keys_come_from_the_field_registry_and_the_form_schema(laser):
    keys = scan_keys(laser.scenario)
    laser_params = [p.name for p in MODELS["plane-wave"].params if p.kind in ("scalar", "choice")]
    present = laser.scenario.to_dict()["field"][0]
    assert {f"field[0].{n}" for n in laser_params if n in present} <= set(keys)
    assert {"particle.kinetic_energy", "run.duration", "run.steps_per_period", "run.pusher",
            "run.radiation_reaction"} <= set(keys)
    assert keys["particle.kinetic_energy"][1] == "energy"


def test_one_key_draws_a_line_and_a_click_opens_the_point_in_results(laser):
    view = ScanView(laser)
    view.key1.value = "field[0].a0"
    view.values1.value = "5,10,20"
    assert view.start()
    assert view.job.wait(120)
    assert view.poll()
    d = view.plot_data()
    assert d["kind"] == "line" and len(d["axes"][0]["positions"]) == 3
    # energies are shown in eV multiples (display only); the plotted values are the scan's
    unit = d["title"].split("[")[1].rstrip("]")
    scale = {"keV": 1e3, "MeV": 1e6, "GeV": 1e9}[unit] * constants.e
    assert np.allclose(np.asarray(d["values"]) * scale, view.result.quantity("energy_radiated", "damped"), rtol=1e-12)
    assert list(view.line_source.data["x"]) == [5.0, 10.0, 20.0]
    view.open_point(1)
    alone = compare(view.result.scenario(1))
    assert np.array_equal(laser.comparison.damped.gamma, alone.damped.gamma)
    assert laser.prepared is not None and laser.status == "completed" and "scan point 1" in laser.status_text


def test_two_keys_draw_a_heat_map_with_the_ratio(laser):
    view = ScanView(laser)
    view.key1.value = "field[0].a0"
    view.values1.value = "5:15:3"
    view.key2.value = "run.pusher"
    view.values2.value = "boris,vay"
    view.variant.value = "ratio"
    assert view.start() and view.job.wait(120) and view.poll()
    d = view.plot_data()
    assert d["kind"] == "map" and len(d["values"]) == 6
    assert d["axes"][1]["ticks"] == {0: "boris", 1: "vay"}
    assert np.all(np.asarray(view.map_source.data["value"]) < 1.0)   # damping lowers the radiated energy
    assert view.map_pane.visible and not view.line_pane.visible


def test_bad_values_are_refused_with_the_engines_message(laser):
    view = ScanView(laser)
    view.key1.value = "field[0].a0"
    view.values1.value = "-5,5"
    assert view.start()
    assert view.job.wait(60) and view.poll()
    assert "field[0].a0" in view.status.object and "positive" in view.status.object
    view.values1.value = "1:2:1000"
    assert not view.start() and "at most" in view.status.object


def test_the_app_has_a_scan_tab_that_opens_results():
    lab = create_app()
    assert TAB_SCAN in lab.tabs.titles and TAB_SCAN not in lab.tabs.built   # built when first shown
    lab.tabs.tabs.active = lab.tabs.index(TAB_SCAN)
    view = lab.tabs.context.views["scan"]._view
    assert view is not None and view.key1.options
    view.key1.value = "field[0].a0"
    view.values1.value = "5,10"
    assert view.start() and view.job.wait(120) and view.poll()
    view.open_point(1)                                          # the app's hook shows the Results tab
    assert lab.tabs.tabs.active == lab.tabs.index(TAB_RESULTS) == 1
    assert lab.state.comparison is not None
