"""The spectrum of a beam is the weighted incoherent sum of its particles' spectra.

Intensities of independent emitters add when their phases are uncorrelated (the incoherent
part of N S_1 + N (N - 1)|f|^2 S_1; J. S. Nodvick and D. S. Saxon, Phys. Rev. 96, 180 (1954),
from memory). Each particle's spectrum is checked against Jackson's radiation integral in
tests/test_spectrum.py; here the beam sum is checked against particles tracked one by one.
"""

import math

import numpy as np
import pytest
from scipy import constants as sc

from tracker import Scenario, ScenarioError, track
from tracker.cli import main
from tracker.radiation import spectrum, synchrotron_spectrum

B_TESLA = 1.0
GAMMA = 5.0


def csv_beam(tmp_path):
    """Three electrons with different energies and weights 1, 2.5, 0.5 (a CSV particle list)."""
    lines = ["x [m], y [m], z [m], ux [1], uy [1], uz [1], weight [1]",
             "0, 0, 0, 4.8, 0, 0.3, 1", "1e-3, 0, 0, 5.2, 0.4, 0, 2.5", "0, 2e-3, 0, 3.9, 0, -0.2, 0.5"]
    (tmp_path / "three.csv").write_text("\n".join(lines) + "\n")
    period = 2 * math.pi * GAMMA * sc.m_e / (sc.e * B_TESLA)     # gyration period (Jackson sec. 12.2)
    text = f"""
[run]
duration = {2 * period!r}
dt = {period / 64!r}
radiation_reaction = "none"
{{save}}

[beam]
species = "electron"
file = "three.csv"

[[field]]
type = "uniform"
B = [0, 0, {B_TESLA}]
"""
    return text


def test_beam_spectrum_is_the_weighted_sum_of_its_particles_tracked_alone(tmp_path):
    text = csv_beam(tmp_path)
    beam = track(Scenario.from_toml(text.format(save=""), base_dir=tmp_path))
    directions = [[0.0, 1.0, 0.0], [0.6, 0.0, 0.8]]
    omega = np.geomspace(2e10, 5e11, 7)
    total = spectrum(beam, directions, omega, method="direct")
    expected = np.zeros_like(total)
    for i, w in enumerate(beam.weight):
        alone = track(beam.particle_scenario(i))      # an independent one-particle run with the same dt
        expected += w * spectrum(alone, directions, omega, method="direct")
    assert beam.weight.tolist() == [1.0, 2.5, 0.5]
    assert np.all(total > 0)
    np.testing.assert_allclose(total, expected, rtol=1e-12)
    dw = synchrotron_spectrum(beam, omega)
    parts = sum(w * synchrotron_spectrum(beam.particle(i), omega) for i, w in enumerate(beam.weight))
    np.testing.assert_allclose(dw, parts, rtol=1e-12)


def test_statistics_only_beam_has_no_spectrum_and_the_cli_says_why(tmp_path, capsys):
    text = csv_beam(tmp_path)
    lean = track(Scenario.from_toml(text.format(save='save = "statistics"'), base_dir=tmp_path))
    with pytest.raises(ScenarioError, match=r"^result: .*statistics only"):
        spectrum(lean, [[0, 1, 0]], [1e12])
    lean.to_hdf5(tmp_path / "lean.h5")
    assert main(["spectrum", str(tmp_path / "lean.h5")]) == 2
    assert 'run.save = "all"' in capsys.readouterr().err


def test_cli_spectrum_of_a_beam_file(tmp_path, capsys):
    text = csv_beam(tmp_path)
    (tmp_path / "three.toml").write_text(text.format(save=""))
    assert main(["run", str(tmp_path / "three.toml"), "-o", str(tmp_path / "three.h5")]) == 0
    assert main(["spectrum", str(tmp_path / "three.h5"), "--direction", "0,1,0", "--omega-range", "2e10,5e11,5",
                 "--method", "direct", "-o", str(tmp_path / "s.csv")]) == 0
    out = capsys.readouterr().out
    assert "3 particles; the incoherent sum" in out
    rows = [r for r in (tmp_path / "s.csv").read_text().splitlines() if not r.startswith("#")]
    assert len(rows) == 6
