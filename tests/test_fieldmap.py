"""Field maps: loading, interpolation order, orbits against the analytic fields they were sampled from.

Sources of the checks:
- Interpolation error: linear (trilinear) interpolation errs by O(h^2), Keys' cubic
  convolution (a = -1/2) by O(h^3) (R. G. Keys, IEEE Trans. ASSP 29, 1153 (1981),
  sec. III-IV, section from memory). Checked on the field along an orbit.
- Exact reproduction: both interpolants reproduce polynomials of degree 1 (linear)
  and 2 (cubic) exactly (same reference), so a uniform field is mapped without error.
- Dipole B = mu0/(4 pi r^3)[3(M.r^)r^ - M] (Jackson sec. 5.6, from memory) and the
  undulator of tracker.fields.undulator are the analytic references; an orbit in the
  map must follow the analytic orbit, with the same pusher and dt, to within the
  field error.
"""

import math

import h5py
import numpy as np
import pytest

from tracker import Scenario, ScenarioError, load_scenario, track
from tracker.cli import main
from tracker.fieldmap_export import export_field_map
from tracker.fields.mapfile import load_map, write_map

ELECTRON_10MEV = {"species": "electron", "position": [1.0, 0.0, 0.011], "kinetic_energy": "10 MeV",
                  "direction": [0, 1, 0.05]}
DIPOLE_RUN = {"duration": 1.5e-9, "dt": 2e-12, "radiation_reaction": "none"}


def build(fields, particle, run, base_dir):
    return Scenario.from_dict({"run": run, "particle": particle, "field": fields}, base_dir=base_dir)


def test_uniform_field_map_reproduces_the_gyration_to_round_off(tmp_path):
    # a uniform field is a degree-0 polynomial: both interpolants are exact (Keys 1981)
    particle = {"species": "electron", "position": [0.0, 0.0, 0.0], "gamma": 20.0, "direction": [1, 0, 0.2]}
    run = {"duration": 2e-9, "dt": 1e-12, "radiation_reaction": "landau-lifshitz"}
    analytic = build([{"type": "uniform", "B": [0.0, 0.3, 1.2], "E": [1e4, 0, 0]}], particle, run, tmp_path)
    ref = track(analytic)
    export_field_map(analytic, ["x=-0.5:0.5:5", "y=-0.5:0.5:5", "z=-0.3:0.7:6"], tmp_path / "u.h5")
    for order in ("linear", "cubic"):
        mapped = track(build([{"type": "field-map", "file": "u.h5", "interpolation": order}], particle, run,
                             tmp_path))
        assert mapped.meta["stop_reason"] == "completed"
        assert np.allclose(mapped.x, ref.x, rtol=0, atol=1e-12 * np.abs(ref.x).max())
        assert mapped.radiated_energy[-1] == pytest.approx(ref.radiated_energy[-1], rel=1e-10)


def _dipole_errors(tmp_path, order, levels, offsets):
    """(orbit RMS error, max field error along the orbit / |B|) per grid level, averaged over map offsets."""
    base = build([{"type": "dipole", "moment": [0, 0, -1e7]}], ELECTRON_10MEV, DIPOLE_RUN, tmp_path)
    orbit, field = [], []
    for n in levels:
        h = 0.02 / n
        name = f"dipole{n}.h5"
        if not (tmp_path / name).exists():
            export_field_map(base, [f"x=0.86:1.14:{round(0.28 / h) + 1}", f"y=-0.14:0.14:{round(0.28 / h) + 1}",
                                    f"z=-0.057:0.083:{round(0.14 / h) + 1}"], tmp_path / name)
        sq, worst = [], 0.0
        for o in offsets:
            exact = build([{"type": "dipole", "moment": [0, 0, -1e7], "center": list(o)}], ELECTRON_10MEV,
                          DIPOLE_RUN, tmp_path)
            mapped = build([{"type": "field-map", "file": name, "interpolation": order, "offset": list(o)}],
                           ELECTRON_10MEV, DIPOLE_RUN, tmp_path)
            r0, r = track(exact), track(mapped)
            assert len(r.t) == len(r0.t), r.meta["stop_reason"]
            sq.append(np.mean(np.sum((r.x - r0.x) ** 2, axis=1)))
            _, b0 = exact.fields_at(r0.x, 0.0)
            _, b = mapped.fields_at(r0.x, 0.0)
            worst = max(worst, np.max(np.linalg.norm(b - b0, axis=1) / np.linalg.norm(b0, axis=1)))
        orbit.append(math.sqrt(np.mean(sq)))
        field.append(worst)
    return np.array(orbit), np.array(field)


@pytest.mark.parametrize("order,power,final", [("linear", 2, 1e-5), ("cubic", 3, 1e-7)])
def test_dipole_map_orbit_converges_at_the_interpolation_order(tmp_path, order, power, final):
    offsets = np.random.default_rng(3).uniform(-0.01, 0.01, size=(4, 3))
    orbit, field = _dipole_errors(tmp_path, order, (2, 4, 8), offsets)
    field_rates = field[:-1] / field[1:]
    orbit_rates = orbit[:-1] / orbit[1:]
    # the field error along the orbit falls as h^p (Keys 1981): ratio 2^p per halving
    assert np.all(field_rates > 0.75 * 2**power) and np.all(field_rates < 1.6 * 2**power), field_rates
    # the orbit error falls at least as fast; faster for a vacuum field, where the cell average of the
    # trilinear error, -h^2 lap(B)/12, vanishes (derived from the error term of linear interpolation)
    assert np.all(orbit_rates > 0.75 * 2**power), orbit_rates
    assert orbit[-1] < final * 0.035  # relative to the 3.5 cm gyroradius, at h = 2.5 mm


def test_undulator_map_reproduces_the_analytic_orbit_and_radiation(tmp_path):
    # tracker.fields.undulator (Wiedemann, from memory) sampled at 20 nodes per period, cubic
    particle = {"species": "electron", "position": [0.0, 2e-4, -0.01], "kinetic_energy": "100 MeV",
                "direction": [0, 0, 1]}
    run = {"duration": 1.1e-9, "dt": 2e-13, "radiation_reaction": "landau-lifshitz"}
    und = build([{"type": "undulator", "B0": 0.5, "period": 0.03, "length": 0.3}], particle, run, tmp_path)
    export_field_map(und, ["x=-1mm:1mm:5", "y=-1mm:1mm:5", "z=-2cm:32cm:681"], tmp_path / "und.h5")
    ref = track(und)
    mapped = track(build([{"type": "field-map", "file": "und.h5", "interpolation": "cubic"}], particle, run,
                         tmp_path))
    amplitude = np.ptp(ref.x[:, 0])
    assert np.abs(mapped.x[:, 0] - ref.x[:, 0]).max() < 2e-3 * amplitude
    assert mapped.radiated_energy[-1] == pytest.approx(ref.radiated_energy[-1], rel=2e-3)
    assert mapped.u[-1, 0] == pytest.approx(ref.u[-1, 0], abs=2e-3 * np.abs(ref.u[:, 0]).max())


def test_axisymmetric_map_of_a_mirror_matches_the_mirror_field(tmp_path):
    # the paraxial mirror is axisymmetric: its r-z map must give back (Bx, By, Bz) at any azimuth
    particle = {"species": "electron", "position": [0.0, 0.0, 0.0], "gamma": 2.0, "direction": [1, 0, 0]}
    run = {"duration": 1e-12, "dt": 1e-13}
    mirror = build([{"type": "mirror", "B0": 1.5, "L": 0.2, "center": [0.01, -0.02, 0.05]}], particle, run,
                   tmp_path)
    centred = build([{"type": "mirror", "B0": 1.5, "L": 0.2}], particle, run, tmp_path)
    export_field_map(centred, ["r=0:0.05:26", "z=-0.2:0.2:81"], tmp_path / "m.csv")
    mapped = build([{"type": "field-map", "file": "m.csv", "interpolation": "cubic", "offset": [0.01, -0.02, 0.05]}],
                   particle, run, tmp_path)
    pts = np.random.default_rng(0).uniform([-0.02, -0.05, -0.1], [0.04, 0.01, 0.2], size=(200, 3))
    _, b0 = mirror.fields_at(pts, 0.0)
    _, b = mapped.fields_at(pts, 0.0)
    # Br and Bz are polynomials of degree <= 2 in (r, z): the cubic interpolant is exact (Keys 1981)
    assert np.allclose(b, b0, rtol=0, atol=1e-12)


def test_csv_and_hdf5_with_units_give_the_same_map(tmp_path):
    x = np.linspace(-2.0, 2.0, 5)      # mm
    y = np.linspace(0.0, 3.0, 4)       # mm
    z = np.linspace(10.0, 30.0, 3)     # cm
    gx, gy, gz = np.meshgrid(x, y, z, indexing="ij")
    bz = 100.0 + gx * 2 + gy * gz      # mT
    with h5py.File(tmp_path / "a.h5", "w") as f:
        f.attrs["geometry"] = "cartesian"
        for name, values, unit in (("x", x, "mm"), ("y", y, "mm"), ("z", z, "cm"), ("Bz", bz, "mT")):
            f.create_dataset(name, data=values).attrs["units"] = unit
    rows = np.column_stack([gx.ravel(), gy.ravel(), gz.ravel(), bz.ravel()])
    rows = rows[np.random.default_rng(1).permutation(len(rows))]  # any row order
    text = "# a test map\nx,y,z,Bz\nmm,mm,cm,mT\n" + "\n".join(",".join(repr(float(v)) for v in r) for r in rows)
    (tmp_path / "a.csv").write_text(text)
    a, b = load_map("a.h5", tmp_path), load_map("a.csv", tmp_path)
    assert a.shape == b.shape == (5, 4, 3)
    assert a.origin == pytest.approx((-2e-3, 0.0, 0.1)) and a.spacing == pytest.approx((1e-3, 1e-3, 0.1))
    assert np.array_equal(a.block, b.block)
    assert np.allclose(a.component("B", 2), bz * 1e-3)
    assert a.groups == ("B",)


@pytest.mark.parametrize("content,fragment", [
    ("x,y,z,Bz\nm,m,m\n0,0,0,1\n", "units line"),
    ("x,y,z,Bq\nm,m,m,T\n0,0,0,1\n", "unknown"),
    ("x,y,z,Bz\nm,m,m,V/m\n0,0,0,1\n0,0,1,1\n0,1,0,1\n0,1,1,1\n1,0,0,1\n1,0,1,1\n1,1,0,1\n1,1,1,1\n", "unit 'V/m'"),
    ("x,y,z,Bz\nm,m,m,T\n0,0,0,1\n0,0,1,1\n0,1,0,1\n0,1,1,1\n1,0,0,1\n1,0,1,1\n1,1,0,1\n", "fill"),
    ("x,y,z,Bz\nm,m,m,T\n" + "\n".join(f"{a},{b},{c},1" for a in (0, 1, 3) for b in (0, 1) for c in (0, 1)),
     "equally spaced"),
])
def test_bad_map_files_are_refused_with_the_key(tmp_path, content, fragment):
    (tmp_path / "bad.csv").write_text(content)
    with pytest.raises(ScenarioError) as err:
        build([{"type": "field-map", "file": "bad.csv"}], {"species": "electron", "gamma": 2.0, "direction": [1, 0, 0]},
              {"duration": 1e-12, "dt": 1e-13}, tmp_path)
    assert err.value.key == "field[0].file"
    assert fragment in str(err.value)


def test_missing_file_and_cubic_on_a_thin_grid_are_refused(tmp_path):
    particle = {"species": "electron", "gamma": 2.0, "direction": [1, 0, 0]}
    run = {"duration": 1e-12, "dt": 1e-13}
    with pytest.raises(ScenarioError, match="no field-map file 'nope.h5'") as err:
        build([{"type": "field-map", "file": "nope.h5"}], particle, run, tmp_path)
    assert err.value.key == "field[0].file"
    write_map(tmp_path / "thin.h5", "cartesian", {"x": [-1, 1], "y": [-1, 0, 1], "z": [-1, 0, 1]},
              {"Bz": np.ones((2, 3, 3))})
    with pytest.raises(ScenarioError, match="at least 4 nodes") as err:
        build([{"type": "field-map", "file": "thin.h5", "interpolation": "cubic"}], particle, run, tmp_path)
    assert err.value.key == "field[0].interpolation"


def _box_map(tmp_path):
    write_map(tmp_path / "box.h5", "cartesian", {"x": [-1e-3, 1e-3], "y": [-1e-3, 1e-3], "z": [-1e-3, 1e-3]},
              {"Bz": np.full((2, 2, 2), 1e-4)})


@pytest.mark.parametrize("outside", ["stop", "zero"])
def test_leaving_the_grid_stops_with_the_reason_or_continues_without_field(tmp_path, outside):
    _box_map(tmp_path)
    particle = {"species": "electron", "position": [0.0, 0.0, 0.0], "speed": 1e6, "direction": [0, 0, 1]}
    s = build([{"type": "field-map", "file": "box.h5", "outside": outside}], particle,
              {"duration": 5e-9, "dt": 1e-11, "radiation_reaction": "none"}, tmp_path)
    r = track(s)
    if outside == "stop":
        assert r.meta["stop_reason"] == "left_domain"
        assert r.meta["stop_detail"].startswith("field[0]: left the field map")
        assert "z = 0.001" in r.meta["stop_detail"]
        assert r.x[-1, 2] <= 1e-3 * (1 + 1e-9) and r.t[-1] == pytest.approx(1e-9, abs=2e-11)  # 1 mm at 1e6 m/s
        assert any(w["kind"] == "domain" and "box.h5" in w["message"] for w in r.warnings)
    else:
        assert r.meta["stop_reason"] == "completed"
        assert r.x[-1, 2] == pytest.approx(5e-3, rel=1e-6)  # B along the motion: straight line


def test_relative_paths_follow_the_scenario_file_and_the_map_loads_once(tmp_path):
    _box_map(tmp_path)
    (tmp_path / "s.toml").write_text(
        '[run]\nduration = "1 ns"\ndt = "1 ps"\n[particle]\nspecies = "electron"\nspeed = "1e5 m/s"\n'
        'direction = [0, 0, 1]\n[[field]]\ntype = "field-map"\nfile = "box.h5"\n')
    s = load_scenario(tmp_path / "s.toml")
    again = s.with_run(radiation_reaction="none")
    block = load_map("box.h5", tmp_path).block
    # the tracked data array is the cached block itself: loaded once, never copied per scenario or step
    assert np.shares_memory(s.field_table[2], block) and np.shares_memory(again.field_table[2], block)
    assert s.plan().memory_bytes >= block.nbytes
    assert Scenario.from_toml(s.to_toml(), base_dir=tmp_path) == s


def test_time_harmonic_map_follows_cos_and_sin(tmp_path):
    # F(t) = F cos(w t + phase) - F_imag sin(w t + phase) (mapfile.py docstring)
    write_map(tmp_path / "rf.h5", "cartesian", {"x": [-1, 1], "y": [-1, 1], "z": [-1, 1]},
              {"Ez": np.full((2, 2, 2), 2.0), "Ez_imag": np.full((2, 2, 2), 3.0), "By": np.full((2, 2, 2), 0.5)})
    s = build([{"type": "field-map", "file": "rf.h5", "frequency": "100 GHz", "phase": 0.3}],
              {"species": "electron", "gamma": 2.0, "direction": [1, 0, 0]}, {"duration": 1e-9, "dt": 1e-12}, tmp_path)
    for t in (0.0, 0.1e-11, 0.37e-11):
        e, b = s.fields_at([[0.2, 0.1, -0.3]], t)
        ph = 2 * math.pi * 1e11 * t + 0.3
        assert e[0, 2] == pytest.approx(2 * math.cos(ph) - 3 * math.sin(ph), rel=1e-12)
        assert b[0, 1] == pytest.approx(0.5 * math.cos(ph), rel=1e-12)
    assert s.plan().period_source == "field[0] period of the map's time dependence at the start"


def test_fieldmap_command_writes_a_map_that_reads_back_the_nodes(tmp_path, capsys):
    (tmp_path / "d.toml").write_text(
        '[run]\nduration = "1 ns"\ndt = "1 ps"\n[particle]\nspecies = "electron"\nposition = [1, 0, 0]\n'
        'gamma = 2\ndirection = [0, 1, 0]\n[[field]]\ntype = "dipole"\nmoment = [0, 0, 1e7]\n')
    code = main(["fieldmap", str(tmp_path / "d.toml"), "--grid", "x=0.9:1.1:5", "y=-10cm:10cm:5", "z=-0.1:0.1:3",
                 "-o", str(tmp_path / "out.h5")])
    assert code == 0 and "wrote" in capsys.readouterr().out
    data = load_map(str(tmp_path / "out.h5"))
    assert data.groups == ("B",)  # the dipole has no E: left out
    s = load_scenario(tmp_path / "d.toml")
    node = [1.0, 0.05, 0.1]
    _, b = s.fields_at([node], 0.0)
    assert data.component("B", 0)[2, 3, 2] == b[0, 0] and data.component("B", 2)[2, 3, 2] == b[0, 2]
    assert main(["fieldmap", str(tmp_path / "d.toml"), "--grid", "x=0:1:5", "-o", str(tmp_path / "bad.h5")]) == 2
