"""openPMD particle snapshots: read back with openpmd-api (the standard's reference library).

What the standard (openPMD 1.1.0, STANDARD.md: "Unit Systems and Dimensionality", "Particle
Records", "Constant Record Components") requires and is checked here: position relative to
positionOffset, unitSI on every component, unitDimension as powers of (L, M, T, I, theta, N, J)
on every record, constant components as groups with value and shape, iteration time attributes.
"""

import numpy as np
import pytest
from scipy import constants as sc

from tracker.openpmd import iterations, read_particles, write_particles

io = pytest.importorskip("openpmd_api")


def snapshots():
    rng = np.random.default_rng(11)
    out = []
    for j, time in enumerate((0.0, 2.5e-14)):
        x = rng.normal(0.0, 1e-6, (7, 3)) + j
        u = rng.normal(0.0, 1.0, (7, 3)) + [0.0, 0.0, 400.0]
        out.append((time, x, u, rng.uniform(1.0, 2.0, 7)))
    return out


def test_openpmd_api_reads_positions_momenta_units_and_dimensions(tmp_path):
    path = tmp_path / "snap.h5"
    snaps = snapshots()
    write_particles(path, snaps, "electron", -sc.e, sc.m_e, dt=1e-17)
    series = io.Series(str(path), io.Access.read_only)
    assert series.openPMD == "1.1.0" and series.iteration_encoding == io.Iteration_Encoding.group_based
    assert sorted(series.iterations) == [0, 1]
    for index, (time, x, u, w) in enumerate(snaps):
        it = series.iterations[index]
        assert it.time == time and it.dt == 1e-17 and it.time_unit_SI == 1.0
        species = it.particles["electron"]
        loaded = {}
        for record in ("position", "momentum", "positionOffset"):
            for axis in "xyz":
                loaded[record, axis] = species[record][axis].load_chunk()
        weight = species["weighting"][io.Record_Component.SCALAR].load_chunk()
        series.flush()
        for axis_index, axis in enumerate("xyz"):
            position = loaded["position", axis] * species["position"][axis].unit_SI
            offset = loaded["positionOffset", axis] * species["positionOffset"][axis].unit_SI
            assert np.array_equal(position + offset, x[:, axis_index])
            assert np.array_equal(loaded["momentum", axis], u[:, axis_index])
            # momentum in SI: value * unitSI = u m c (kg m/s)
            assert species["momentum"][axis].unit_SI == sc.m_e * sc.c
            assert species["position"][axis].unit_SI == 1.0
        assert np.array_equal(weight, w)
        # unitDimension: (L, M, T, I, theta, N, J)
        assert species["position"].unit_dimension == [1.0, 0, 0, 0, 0, 0, 0]
        assert species["momentum"].unit_dimension == [1.0, 1.0, -1.0, 0, 0, 0, 0]
        assert species["charge"].unit_dimension == [0, 0, 1.0, 1.0, 0, 0, 0]
        assert species["mass"].unit_dimension == [0, 1.0, 0, 0, 0, 0, 0]
        assert species["weighting"].unit_dimension == [0.0] * 7
        charge = species["charge"][io.Record_Component.SCALAR]
        mass = species["mass"][io.Record_Component.SCALAR]
        assert charge.constant and mass.constant
        assert charge.get_attribute("value") == -sc.e and mass.get_attribute("value") == sc.m_e
    series.close()


def test_own_reader_round_trips_exactly(tmp_path):
    path = tmp_path / "snap.h5"
    snaps = snapshots()
    write_particles(path, snaps, "electron", -sc.e, sc.m_e)
    root, found = iterations(path)
    assert found == [0, 1]
    for index, (time, x, u, w) in enumerate(snaps):
        data = read_particles(path, mass=sc.m_e, iteration=index)
        assert data["time"] == time and data["species"] == "electron"
        assert np.array_equal(data["x"], x) and np.array_equal(data["u"], u) and np.array_equal(data["weight"], w)
        assert data["charge"] == -sc.e and data["mass"] == sc.m_e
