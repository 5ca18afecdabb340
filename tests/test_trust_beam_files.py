"""A beam result is read back only when it matches the format (issue "reading results": the beam
loader raised ValueError, KeyError or whatever h5py threw on a damaged or foreign file). Every
damage below must end as one ScenarioError line naming the file. Common practice, no source.
"""

import math

import h5py
import numpy as np
import pytest

from tracker import Scenario, ScenarioError, load_result, track
from tracker import constants as k
from tracker.beam_result import FORMAT_VERSION, load_beam_result
from tracker.cli import main

COUNT = 6


def beam_text(save="all"):
    """Six electrons at gamma = 1000 across a uniform B giving chi = 0.1: the stochastic model emits photons."""
    b = 0.1 * k.E_schwinger / (1000.0 * math.sqrt(1 - 1e-6) * k.c)
    return (f'[run]\nduration = "2 fs"\nsteps_per_period = 200\nsave_every = 20\nseed = 7\nsave = "{save}"\n'
            'radiation_reaction = "quantum-stochastic"\nsnapshots = ["0 fs", "1 fs"]\n\n'
            f'[beam]\nspecies = "electron"\ncount = {COUNT}\ngamma = 1000\ndirection = [1, 0, 0]\n'
            'energy_spread = 0.01\n\n'
            f'[[field]]\ntype = "uniform"\nB = [0, 0, {b!r}]\n')


@pytest.fixture(scope="module")
def written(tmp_path_factory):
    """{save mode: path} of beam results written by the engine (kept pristine; tests copy them)."""
    folder = tmp_path_factory.mktemp("beam-results")
    out = {}
    for save in ("all", "statistics"):
        result = track(Scenario.from_toml(beam_text(save)))
        assert len(result.photons) > 0 and len(result.snapshots) == 2
        out[save] = result.to_hdf5(folder / f"{save}.h5")
    return out


def damaged(tmp_path, written, save, edit):
    path = tmp_path / f"damaged-{save}.h5"
    path.write_bytes(written[save].read_bytes())
    with h5py.File(path, "r+") as h5:
        edit(h5)
    return path


def replace(name, data):
    def edit(h5):
        del h5[name]
        h5.create_dataset(name, data=data)
    return edit


def one_line_naming(exc, path):
    text = str(exc)
    assert "\n" not in text and str(path) in text, text
    return text


def test_an_intact_beam_file_loads_back_equal(written):
    for save, path in written.items():
        again = load_beam_result(path)
        first = track(Scenario.from_toml(beam_text(save)))
        assert np.array_equal(again.t, first.t) and np.array_equal(again.lost, first.lost)
        assert again.has_particles == (save == "all")
        if save == "all":
            assert np.array_equal(again.x, first.x) and again.x.dtype == np.float64
        assert np.array_equal(again.photons.energy, first.photons.energy)
        assert all(np.array_equal(again.stats[key], first.stats[key], equal_nan=True) for key in first.stats)


@pytest.mark.parametrize("save, edit, phrase", [
    ("all", lambda h5: h5.__delitem__("x"), "'x' is missing"),
    ("all", lambda h5: h5.__delitem__("lost_time"), "'lost_time' is missing"),
    ("all", lambda h5: replace("gamma", np.zeros((len(h5["t"]), COUNT + 1)))(h5), "shape"),
    ("all", lambda h5: replace("x", np.zeros((len(h5["t"]), COUNT, 2)))(h5), "shape"),
    ("all", lambda h5: replace("t", np.zeros((2, 2)))(h5), "shape"),
    ("all", lambda h5: replace("weight", np.ones(COUNT - 1))(h5), "shape"),
    ("all", lambda h5: replace("lost", np.zeros(COUNT + 2, dtype=np.int8))(h5), f"({COUNT},)"),
    ("all", lambda h5: replace("u", np.array([[[b"a"] * 3] * COUNT] * len(h5["t"])))(h5), "not real numbers"),
    ("all", lambda h5: replace("lost", np.zeros(COUNT))(h5), "not whole-number stop codes"),
    ("all", lambda h5: replace("stats/mean_gamma", np.zeros(3))(h5), "stats/mean_gamma"),
    ("all", lambda h5: replace("snapshots/1/x", np.zeros((COUNT, 2)))(h5), "snapshots/1/x"),
    ("all", lambda h5: replace("photons/x", np.zeros((len(h5["photons/t"]), 2)))(h5), "photon column 'x'"),
    ("all", lambda h5: replace("photons/energy", np.zeros(1 + len(h5["photons/t"])))(h5), "differ in length"),
    ("all", lambda h5: replace("photons/particle", np.full(len(h5["photons/t"]), COUNT))(h5), "name no particle"),
    ("all", lambda h5: h5["photons"].__delitem__("weight"), "lacks its 'weight'"),
    ("all", lambda h5: h5.attrs.__setitem__("format_version", FORMAT_VERSION + 1), "newer than this radorbit"),
    ("all", lambda h5: h5.attrs.__setitem__("format_version", "one"), "format_version"),
    ("all", lambda h5: h5.attrs.__delitem__("meta_json"), "damaged or incomplete"),
    ("all", lambda h5: h5.attrs.__setitem__("scenario_toml", "[run]\nduration = -1"), "does not validate"),
    ("statistics", lambda h5: h5.create_dataset("gamma", data=np.zeros((len(h5["t"]), COUNT))),
     "statistics only"),
])
def test_a_damaged_beam_file_is_refused_in_one_line_naming_it(tmp_path, written, save, edit, phrase):
    path = damaged(tmp_path, written, save, edit)
    for loader in (load_beam_result, load_result):
        with pytest.raises(ScenarioError) as info:
            loader(path)
        assert phrase in one_line_naming(info.value, path)


def test_a_foreign_file_is_not_read_as_a_beam_result(tmp_path, written):
    path = damaged(tmp_path, written, "all", lambda h5: h5.attrs.__setitem__("format", "someone-else"))
    with pytest.raises(ScenarioError) as info:
        load_beam_result(path)
    assert "not a radorbit beam result" in one_line_naming(info.value, path)


def test_a_truncated_beam_file_is_refused_in_one_line(tmp_path, written, capsys):
    path = tmp_path / "truncated.h5"
    content = written["all"].read_bytes()
    path.write_bytes(content[: len(content) // 2])
    for loader in (load_beam_result, load_result):
        with pytest.raises(ScenarioError) as info:
            loader(path)
        one_line_naming(info.value, path)
    # and the command line says so in one line (exit 2), as for a one-particle result
    assert main(["spectrum", str(path)]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and str(path) in err
