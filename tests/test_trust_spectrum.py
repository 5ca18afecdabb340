"""Spectra only where the method is valid, and lab start-up errors in one line (issue
"trust at first sight")."""

import socket
from pathlib import Path

import numpy as np
import pytest

from tracker import Scenario, ScenarioError, load_scenario, track
from tracker import constants as k
from tracker.cli import main
from tracker.radiation.choice import (SYNCHROTRON_MIN_K, check_synchrotron, choose_method, clip_to_ceiling,
                                      deflection_parameter, photon_ceiling, quantum_note)

SCENARIOS = Path(__file__).resolve().parent.parent / "scenarios"


@pytest.fixture(scope="module")
def saved(tmp_path_factory):
    """The bundled ring, undulator and laser scenarios, tracked and written as HDF5."""
    folder = tmp_path_factory.mktemp("bundled")
    out = {}
    for name in ("storage_ring_bend", "undulator_1gev", "laser_headon_gev"):
        result = track(load_scenario(SCENARIOS / f"{name}.toml"))
        result.to_hdf5(folder / f"{name}.h5")
        out[name] = (result, folder / f"{name}.h5")
    return out


@pytest.mark.parametrize("name, method, phrase", [
    ("storage_ring_bend", "synchrotron", "a closed orbit has no single forward direction"),
    ("undulator_1gev", "nufft", "the saved states resolve it up to"),
    ("laser_headon_gev", "synchrotron", "resolve the radiation integral only to"),
])
def test_auto_chooses_by_the_orbit_and_prints_why(saved, capsys, name, method, phrase):
    result, path = saved[name]
    chosen, reason = choose_method(result)
    assert chosen == method and phrase in reason
    assert main(["spectrum", str(path)]) == 0
    out = capsys.readouterr().out
    assert f"method {method}" in out and f"method chosen: {reason}" in out


def test_undulator_deflection_parameter_is_its_k():
    # K = 0.934 lambda_u[cm] B0[T] (X-ray Data Booklet sec. 2.1, from memory): the largest
    # angle of the velocity to the axis is K/gamma, so gamma theta_max = K
    s = load_scenario(SCENARIOS / "undulator_1gev.toml")
    params = s.fields[0].params
    booklet_k = 0.934 * params["period"] * 100 * params["B0"]
    assert deflection_parameter(track(s)) == pytest.approx(booklet_k, rel=0.02)


def test_synchrotron_formula_is_refused_for_the_undulator(saved, capsys):
    result, path = saved["undulator_1gev"]
    assert deflection_parameter(result) < SYNCHROTRON_MIN_K
    with pytest.raises(ScenarioError, match="^method: the synchrotron formula does not hold"):
        check_synchrotron(result)
    assert main(["spectrum", str(path), "--method", "synchrotron"]) == 2
    assert "undulator with K <~ 1" in capsys.readouterr().err


def test_the_photon_grid_stops_at_the_particle_energy_and_the_quantum_regime_is_named(saved, capsys):
    result, path = saved["laser_headon_gev"]
    top = photon_ceiling(result)
    assert top * k.hbar == pytest.approx(float(np.max(result.kinetic_energy)), rel=1e-12)
    omega, note = clip_to_ceiling(result, np.geomspace(1e20, 10 * top, 50))
    assert omega.max() <= top and "left out" in note
    # hbar omega_c / E = (3/2) chi on a bend [derived]; chi ~ 0.2 here (the scenario's own description)
    assert "quantum regime" in quantum_note(result)
    assert main(["spectrum", str(path), "--omega-range", f"1e20,{10 * top!r},200"]) == 0
    out = capsys.readouterr().out
    assert "note: frequencies above the particle's kinetic energy" in out and "quantum regime" in out
    grid = out.split("omega ", 1)[1].split(" rad/s", 1)[0].split(" .. ")
    assert float(grid[1]) <= top * (1 + 1e-12)


def test_a_short_straight_record_is_refused_with_a_reason():
    # a slow electron in 1 mT for a sliver of a gyration: no synchrotron-like bend, and
    # the saved states cannot resolve its emission either
    r = track(Scenario.from_dict({
        "run": {"duration": "1 ps", "dt": "0.5 ps", "radiation_reaction": "none"},
        "particle": {"species": "electron", "gamma": 1.5, "direction": [1, 0, 0]},
        "field": [{"type": "uniform", "B": [0, 0, 1e-3]}],
    }))
    with pytest.raises(ScenarioError, match="^method: neither spectrum method is valid"):
        choose_method(r)


# ---------------------------------------------------------------------- lab start-up
def test_a_busy_port_gives_one_clear_error_and_no_serving_line(capsys):
    with socket.socket() as busy:
        busy.bind(("127.0.0.1", 0))
        busy.listen(1)
        port = busy.getsockname()[1]
        assert main(["lab", "--port", str(port)]) == 1
    out, err = capsys.readouterr()
    assert "serving on" not in out
    assert err.count("\n") == 1 and f"port {port} on 127.0.0.1 is already in use" in err


def test_show_without_a_display_says_it_cannot_open_a_browser(monkeypatch, capsys):
    from ui.server import LabServer

    seen = {}
    monkeypatch.delenv("DISPLAY", raising=False)
    monkeypatch.delenv("WAYLAND_DISPLAY", raising=False)
    monkeypatch.setattr(LabServer, "run", lambda self, show=False: seen.update(show=show))   # no server here
    with socket.socket() as free:
        free.bind(("127.0.0.1", 0))
        port = free.getsockname()[1]
    assert main(["lab", "--port", str(port), "--show"]) == 0
    assert seen["show"] is False
    err = capsys.readouterr().err
    assert "cannot open a browser (no display" in err and f"http://127.0.0.1:{port}/" in err
