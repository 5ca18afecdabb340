"""[beam] scenarios: validation, sampling statistics, particle files, text kept as entered.

Sampling checks compare sample moments with the requested ones within 3 standard errors.
Standard errors (large-sample results; Kendall & Stuart, "The Advanced Theory of Statistics",
vol. 1, sampling moments, from memory): the mean of N draws has SE sigma/sqrt(N); the sample
variance has variance (mu4 - sigma^4)/N, so the sample rms has SE sigma sqrt((kappa - 1)/(4N))
with kurtosis kappa = 3 (gaussian) or 9/5 (uniform).
"""

import math

import numpy as np
import pytest
from scipy import constants as sc

from tracker import Scenario, ScenarioError, load_scenario
from tracker.beam_sampling import transverse_axes
from tracker.openpmd import write_particles

N = 10_000
KURTOSIS = {"gaussian": 3.0, "uniform": 9.0 / 5.0}


def beam_dict(**beam):
    base = {"species": "electron", "kinetic_energy": "1 GeV", "direction": [0, 0, -1], "count": 8}
    return {"run": {"duration": "10 fs", "dt": "0.1 fs"}, "beam": {**base, **beam}}


def se_rms(sigma, distribution, n=N):
    return sigma * math.sqrt((KURTOSIS[distribution] - 1.0) / (4.0 * n))


@pytest.mark.parametrize("distribution", ["gaussian", "uniform"])
def test_sampled_beam_matches_requested_moments(distribution):
    spread, div, size = 0.01, (1e-3, 2.5e-3), (1e-6, 2e-6, 5e-6)
    s = Scenario.from_dict(beam_dict(count=N, energy_spread=spread, divergence=list(div), size=list(size),
                                     distribution=distribution, seed=7, position=[1e-3, 0, -2e-3]))
    x, u, w = s.initial_particles()
    assert x.shape == (N, 3) and u.shape == (N, 3) and np.array_equal(w, np.ones(N))
    gamma0 = s.particle.gamma
    gamma = np.sqrt(1.0 + np.sum(u * u, axis=1))
    # energy: mean and relative rms of gamma
    assert abs(gamma.mean() - gamma0) < 3 * gamma0 * spread / math.sqrt(N)
    assert abs(gamma.std() / gamma0 - spread) < 3 * se_rms(spread, distribution)
    # divergence: slopes u.e1/u.d, u.e2/u.d; for a beam along -z, e1 = -x and e2 = y (module docstring)
    d = np.array([0.0, 0.0, -1.0])
    e1, e2 = transverse_axes(d)
    assert np.allclose(e1, [-1, 0, 0]) and np.allclose(e2, [0, 1, 0])
    along = u @ d
    for axis, sigma in zip((e1, e2), div):
        slope = (u @ axis) / along
        assert abs(slope.mean()) < 3 * sigma / math.sqrt(N)
        assert abs(slope.std() - sigma) < 3 * se_rms(sigma, distribution)
    # size: rms extent along the lab axes about the centroid
    for axis in range(3):
        assert abs(x[:, axis].mean() - s.particle.position[axis]) < 3 * size[axis] / math.sqrt(N)
        assert abs(x[:, axis].std() - size[axis]) < 3 * se_rms(size[axis], distribution)
    if distribution == "uniform":  # uniform with the same rms: half-width sqrt(3) sigma
        assert np.max(np.abs(x[:, 0] - 1e-3)) <= math.sqrt(3) * size[0]


def test_same_seed_same_beam_and_another_seed_another():
    a = Scenario.from_dict(beam_dict(energy_spread=0.01, size=[1e-6, 1e-6, 1e-6])).initial_particles()
    b = Scenario.from_dict(beam_dict(energy_spread=0.01, size=[1e-6, 1e-6, 1e-6])).initial_particles()
    c = Scenario.from_dict(beam_dict(energy_spread=0.01, size=[1e-6, 1e-6, 1e-6], seed=2)).initial_particles()
    assert all(np.array_equal(p, q) for p, q in zip(a, b))
    assert not np.array_equal(a[1], c[1])


def test_zero_spread_beam_is_bit_identical_copies_of_the_particle():
    single = Scenario.from_dict({"run": {"duration": "10 fs", "dt": "0.1 fs"},
                                 "particle": {"species": "electron", "kinetic_energy": "1 GeV",
                                              "direction": [0, 3, -4], "position": ["1 um", 0, 0]}})
    beam = Scenario.from_dict(beam_dict(count=5, direction=[0, 3, -4], position=["1 um", 0, 0]))
    x, u, w = beam.initial_particles()
    assert beam.particle_count == 5 and single.particle_count == 1
    for i in range(5):
        assert x[i].tobytes() == np.array(single.particle.position).tobytes()
        assert u[i].tobytes() == single.particle.u.tobytes()
    xs, us, ws = single.initial_particles()
    assert xs.shape == (1, 3) and us[0].tobytes() == single.particle.u.tobytes() and ws.tolist() == [1.0]
    assert beam.species_charge == single.species_charge == -sc.e
    assert beam.species_mass == single.species_mass == sc.m_e


def test_initial_particles_are_read_only():
    x, u, w = Scenario.from_dict(beam_dict()).initial_particles()
    with pytest.raises(ValueError):
        u[0, 0] = 1.0


@pytest.mark.parametrize("change,key,fragment", [
    ({"count": 0}, "beam.count", "whole number"),
    ({"count": 2.5}, "beam.count", "whole number"),
    ({"seed": -1}, "beam.seed", "whole number"),
    ({"energy_spread": -0.1}, "beam.energy_spread", "negative"),
    ({"energy_spread": float("nan")}, "beam.energy_spread", "finite"),
    ({"energy_spread": 0.9, "count": 1000}, "beam.energy_spread", "below gamma = 1"),
    ({"divergence": [1e-3, 1e-3, 1e-3]}, "beam.divergence", "two"),
    ({"divergence": "3 parsec"}, "beam.divergence", "wrong dimension"),
    ({"divergence": [1e-3, -1e-3]}, "beam.divergence[1]", "negative"),
    ({"size": [1e-6, -1e-6, 0]}, "beam.size[1]", "negative"),
    ({"size": [1e-6, 0]}, "beam.size", "three values"),
    ({"distribution": "flat"}, "beam.distribution", "must be one of"),
    ({"colour": 3}, "beam.colour", "unknown key"),
    ({"iteration": 0}, "beam.iteration", "only applies with beam.file"),
    ({"file": "bunch.h5"}, "beam.count", "taken from the particle file"),
    ({"gamma": 3}, "beam.kinetic_energy", "exactly one"),
    ({"direction": [0, 0, 0]}, "beam.direction", "non-zero"),
    ({"species": "quark"}, "beam.species", "must be one of"),
], ids=lambda v: str(v)[:30])
def test_bad_beam_input_names_the_key(change, key, fragment):
    with pytest.raises(ScenarioError) as info:
        Scenario.from_dict(beam_dict(**change))
    assert info.value.key == key, str(info.value)
    assert fragment in str(info.value)


def test_missing_count_and_at_rest_spread_are_refused():
    data = beam_dict()
    del data["beam"]["count"]
    with pytest.raises(ScenarioError, match=r"^beam\.count: is required"):
        Scenario.from_dict(data)
    with pytest.raises(ScenarioError, match=r"^beam\.divergence: needs a moving centroid"):
        Scenario.from_dict(beam_dict(kinetic_energy=0.0, divergence=1e-3))


def test_particle_and_beam_both_or_neither_is_an_error():
    data = beam_dict()
    data["particle"] = {"species": "electron", "gamma": 2, "direction": [0, 0, 1]}
    with pytest.raises(ScenarioError) as info:
        Scenario.from_dict(data)
    assert info.value.key == "beam" and "[particle]" in str(info.value) and "[beam]" in str(info.value)
    del data["particle"], data["beam"]
    with pytest.raises(ScenarioError) as info:
        Scenario.from_dict(data)
    assert info.value.key == "particle" and "[beam]" in str(info.value)


def test_beam_scenario_round_trips_through_toml_keeping_text():
    s = Scenario.from_dict(beam_dict(count=100, energy_spread=0.01, divergence=["1 mrad", 2e-3],
                                     size=["1 um", "2 um", 0.0], distribution="uniform", seed=3))
    text = s.to_toml()
    assert 'kinetic_energy = "1 GeV"' in text and 'duration = "10 fs"' in text
    assert 'divergence = ["1 mrad", 0.002]' in text
    again = Scenario.from_toml(text)
    assert again == s and again.to_toml() == text
    assert all(np.array_equal(p, q) for p, q in zip(again.initial_particles(), s.initial_particles()))


def test_text_as_entered_is_kept_for_every_table():
    text = """
[run]
duration = "120 fs"
steps_per_period = 40
snapshots = ["0 fs", "60 fs", 1.2e-13]

[particle]
species = "electron"
kinetic_energy = "1 GeV"
direction = [0, 0, -1]

[[field]]
type = "plane-wave"
a0 = 5
wavelength = "800 nm"
duration = "30 fs"
"""
    s = Scenario.from_toml(text)
    assert s.run.duration == pytest.approx(1.2e-13) and s.run.snapshots[1] == pytest.approx(6e-14)
    out = s.to_toml()
    for line in ('duration = "120 fs"', 'kinetic_energy = "1 GeV"', 'wavelength = "800 nm"',
                 'duration = "30 fs"', 'snapshots = ["0 fs", "60 fs", 1.2e-13]'):
        assert line in out
    assert Scenario.from_toml(out) == s
    assert s.to_dict()["run"]["duration"] == s.run.duration  # to_dict stays SI
    changed = s.with_run(radiation_reaction="none")
    assert 'duration = "120 fs"' in changed.to_toml()


@pytest.mark.parametrize("snapshots,key", [([2e-13], "run.snapshots[0]"), ([1e-14, 5e-15], "run.snapshots[1]"),
                                           ("10 fs", "run.snapshots")])
def test_snapshot_times_are_checked(snapshots, key):
    data = beam_dict()
    data["run"]["snapshots"] = snapshots
    with pytest.raises(ScenarioError) as info:
        Scenario.from_dict(data)
    assert info.value.key == key


def test_save_mode_is_validated():
    data = beam_dict()
    data["run"]["save"] = "statistics"
    assert Scenario.from_dict(data).run.save == "statistics"
    data["run"]["save"] = "some"
    with pytest.raises(ScenarioError, match=r"^run\.save: must be one of"):
        Scenario.from_dict(data)


# ---------------------------------------------------------------------- particle files
def sample_particles(n=6):
    rng = np.random.default_rng(5)
    x = rng.normal(0.0, 1e-6, (n, 3))
    u = rng.normal(0.0, 1.0, (n, 3)) + [0.0, 0.0, -1956.0]
    w = rng.uniform(1.0, 3.0, n)
    return x, u, w


def file_scenario_text(name, extra=""):
    return f"""
[run]
duration = "10 fs"
dt = "0.1 fs"

[beam]
species = "electron"
file = "{name}"
{extra}
"""


def test_openpmd_file_beam_loads_exactly_relative_to_the_scenario(tmp_path):
    x, u, w = sample_particles()
    write_particles(tmp_path / "data" / "bunch.h5", [(0.0, x + 1.0, u, w), (1e-15, x, u, w)],
                    "electron", -sc.e, sc.m_e)
    path = tmp_path / "beam.toml"
    path.write_text(file_scenario_text("data/bunch.h5"))
    s = load_scenario(path)
    x1, u1, w1 = s.initial_particles()
    assert np.array_equal(x1, x) and np.array_equal(u1, u) and np.array_equal(w1, w)   # last iteration
    assert s.particle_count == 6
    assert s.particle.position == pytest.approx(tuple((w @ x) / w.sum()))
    path.write_text(file_scenario_text("data/bunch.h5", "iteration = 0"))
    assert np.array_equal(load_scenario(path).initial_particles()[0], x + 1.0)
    again = Scenario.from_toml(s.to_toml(), base_dir=tmp_path)
    assert again == s
    with pytest.raises(ScenarioError, match=r"^beam\.file: .*no iteration 7"):
        Scenario.from_toml(file_scenario_text("data/bunch.h5", "iteration = 7"), base_dir=tmp_path)
    with pytest.raises(ScenarioError, match=r"^beam\.file: .*does not match species 'proton'"):
        Scenario.from_toml(file_scenario_text("data/bunch.h5").replace("electron", "proton"), base_dir=tmp_path)
    with pytest.raises(ScenarioError, match=r"^beam\.file: cannot read"):
        Scenario.from_toml(file_scenario_text("data/nothing.h5"), base_dir=tmp_path)


def test_openpmd_file_from_another_writer_loads(tmp_path):
    """A file written by openpmd-api (momentum in SI, a non-zero positionOffset) reads back as [beam] file."""
    io = pytest.importorskip("openpmd_api")
    x, u, w = sample_particles()
    p = u * sc.m_e * sc.c
    series = io.Series(str(tmp_path / "other.h5"), io.Access.create)
    species = series.iterations[3].particles["e"]
    dataset = io.Dataset(np.dtype("float64"), [len(w)])
    for record, values, offset in (("position", x, None), ("momentum", p, None)):
        for axis, name in enumerate("xyz"):
            rc = species[record][name]
            rc.reset_dataset(dataset)
            rc.store_chunk(np.ascontiguousarray(values[:, axis]))
            rc.unit_SI = 1.0
    species["position"].unit_dimension = {io.Unit_Dimension.L: 1}
    species["momentum"].unit_dimension = {io.Unit_Dimension.M: 1, io.Unit_Dimension.L: 1, io.Unit_Dimension.T: -1}
    for name, value in zip("xyz", (0.5, 0.0, -0.25)):
        rc = species["positionOffset"][name]
        rc.reset_dataset(dataset)
        rc.make_constant(value)
    series.close()
    s = Scenario.from_toml(file_scenario_text("other.h5"), base_dir=tmp_path)
    x1, u1, w1 = s.initial_particles()
    assert np.array_equal(x1, x + [0.5, 0.0, -0.25])
    assert np.allclose(u1, u, rtol=1e-15, atol=0) and np.array_equal(w1, np.ones(6))


def test_csv_file_beam_with_units_header(tmp_path):
    x, u, w = sample_particles(4)
    p_mev = u * sc.m_e * sc.c**2 / (1e6 * sc.e)          # p c in MeV: u m c^2 / MeV
    lines = ["# test bunch", "z [mm], x [um], y [um], px [MeV/c], py [MeV/c], pz [MeV/c], weight [1]"]
    for i in range(4):
        lines.append(", ".join(repr(float(v)) for v in (x[i, 2] * 1e3, x[i, 0] * 1e6, x[i, 1] * 1e6,
                                                          *p_mev[i], w[i])))
    (tmp_path / "bunch.csv").write_text("\n".join(lines) + "\n")
    s = Scenario.from_toml(file_scenario_text("bunch.csv"), base_dir=tmp_path)
    x1, u1, w1 = s.initial_particles()
    assert np.allclose(x1, x, rtol=1e-14, atol=0) and np.allclose(u1, u, rtol=1e-12) and np.array_equal(w1, w)
    (tmp_path / "plain.csv").write_text("x [m], y [m], z [m], ux [1], uy [1], uz [1]\n0, 0, 0, 0, 0, -3\n1, 2, 3, 0, 0, -4\n")
    x2, u2, w2 = Scenario.from_toml(file_scenario_text("plain.csv"), base_dir=tmp_path).initial_particles()
    assert x2.tolist() == [[0, 0, 0], [1, 2, 3]] and u2[:, 2].tolist() == [-3, -4] and w2.tolist() == [1, 1]
    (tmp_path / "bad.csv").write_text("x, y, z, ux, uy, uz\n0, 0, 0, 0, 0, 1\n")
    with pytest.raises(ScenarioError, match=r"^beam\.file: .*unit in brackets"):
        Scenario.from_toml(file_scenario_text("bad.csv"), base_dir=tmp_path)
    (tmp_path / "nan.csv").write_text("x [m], y [m], z [m], ux [1], uy [1], uz [1]\n0, 0, nan, 0, 0, 1\n")
    with pytest.raises(ScenarioError, match=r"^beam\.file: .*not finite"):
        Scenario.from_toml(file_scenario_text("nan.csv"), base_dir=tmp_path)


def test_bundled_beam_scenario_is_valid_and_round_trips():
    from pathlib import Path

    path = Path(__file__).resolve().parent.parent / "scenarios" / "laser_bunch_collision.toml"
    s = load_scenario(path)
    assert s.particle_count == 1000 and s.run.save == "statistics" and s.beam.energy_spread == 0.01
    assert Scenario.from_toml(s.to_toml()) == s
    x, u, w = s.initial_particles()
    gamma = np.sqrt(1.0 + np.sum(u * u, axis=1))
    assert abs(gamma.std() / gamma.mean() - 0.01) < 3 * se_rms(0.01, "gaussian", n=1000)
