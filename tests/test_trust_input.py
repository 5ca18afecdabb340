"""Input at the edge: the units physicists type, plausibility of plain numbers, and bad
input that ends as one short line with exit status 2 (issues "trust at first sight" and
"nothing wrong passes as completed")."""

import math
import tomllib
from pathlib import Path

import numpy as np
import pytest
from scipy import constants as sc

from tracker import Scenario, ScenarioError
from tracker.cli import main
from tracker.errors import MAX_MESSAGE
from tracker.fields.laser import a0_from_intensity, a0_of, intensity_from_a0
from tracker.units import parse_scalar

ROOT = Path(__file__).resolve().parent.parent
MIRROR = (ROOT / "scenarios" / "mirror_trap.toml").read_text(encoding="utf-8")
LASER = (ROOT / "scenarios" / "laser_headon_gev.toml").read_text(encoding="utf-8")


def mirror_dict():
    return tomllib.loads(MIRROR)


# ---------------------------------------------------------------------- gauss
@pytest.mark.parametrize("text, tesla", [("1e5 G", 10.0), ("100 kG", 10.0), ("1e5 gauss", 10.0),
                                         ("250 mG", 2.5e-5), ("3 kilogauss", 0.3), ("-2 G", -2e-4)])
def test_gauss_is_read_as_1e_minus_4_tesla(text, tesla):
    # 1 G = 1e-4 T (BIPM, The International System of Units, 9th ed. (2019), table 9)
    assert parse_scalar(text, "magnetic_field", "B0") == pytest.approx(tesla, rel=1e-15)


def test_gauss_works_in_a_scenario_and_is_not_a_length_or_the_gravitational_constant():
    data = mirror_dict()
    data["field"][0]["B0"] = "50 kG"
    assert Scenario.from_dict(data).fields[0].params["B0"] == pytest.approx(5.0)
    with pytest.raises(ScenarioError, match="wrong dimension"):
        parse_scalar("1 G", "length", "x")


# ---------------------------------------------------------------------- intensity <-> a0
def test_intensity_to_a0_matches_the_published_relation():
    # a0 = 0.855 sqrt(I / 1e18 W/cm^2) lambda / um for linear polarisation (G. A. Mourou,
    # T. Tajima, S. V. Bulanov, Rev. Mod. Phys. 78, 309 (2006), sec. II; from memory), the
    # circular one smaller by sqrt 2 at the same intensity
    one = a0_from_intensity(1e22, 1e-6)          # 1e18 W/cm^2 = 1e22 W/m^2 at 1 um
    assert one == pytest.approx(0.855, rel=1e-3)
    assert a0_from_intensity(1e22, 1e-6, "circular") == pytest.approx(one / math.sqrt(2.0), rel=1e-12)
    assert a0_from_intensity(4e22, 0.8e-6) == pytest.approx(0.855 * 2 * 0.8, rel=1e-3)


def test_intensity_is_eps0_c_e0_squared_over_two_for_linear_polarisation():
    # I = eps0 c E0^2 / 2 (cycle average of a linear plane wave; Jackson sec. 7.1, from memory),
    # a0 = e E0 / (m_e omega c); constants from scipy (CODATA)
    wavelength, intensity = 0.8e-6, 3e24
    e0 = math.sqrt(2 * intensity / (sc.epsilon_0 * sc.c))
    omega = 2 * math.pi * sc.c / wavelength
    assert a0_from_intensity(intensity, wavelength) == pytest.approx(sc.e * e0 / (sc.m_e * omega * sc.c), rel=1e-12)
    assert intensity_from_a0(20.0, wavelength) == pytest.approx(
        sc.epsilon_0 * sc.c / 2 * (20.0 * sc.m_e * omega * sc.c / sc.e) ** 2, rel=1e-12)


def test_intensity_key_in_a_scenario_gives_the_same_pulse_as_its_a0():
    data = tomllib.loads(LASER)
    a0 = data["field"][0].pop("a0")
    data["field"][0]["intensity"] = f"{intensity_from_a0(a0, 0.8e-6) * 1e-4!r} W/cm^2"
    by_intensity = Scenario.from_dict(data)
    assert a0_of(by_intensity.fields[0].params) == pytest.approx(a0, rel=1e-12)
    assert Scenario.from_toml(by_intensity.to_toml()) == by_intensity
    data["field"][0]["a0"] = a0
    with pytest.raises(ScenarioError, match=r"field\[0\]\.intensity: give exactly one of a0, E0 and intensity"):
        Scenario.from_dict(data)


# ---------------------------------------------------------------------- plausibility
def test_a_plain_number_meant_as_mev_is_refused_with_the_suggestion():
    data = mirror_dict()
    data["particle"]["kinetic_energy"] = 50e6
    with pytest.raises(ScenarioError) as info:
        Scenario.from_dict(data)
    text = str(info.value)
    assert info.value.key == "particle.kinetic_energy"
    # 5e7 J / 1.602176634e-19 J/eV = 3.12e26 eV = 3.1e17 GeV (SI value of e)
    assert "kinetic_energy = 5e+07 J" in text and "3.1e+17 GeV" in text and 'did you mean "50 MeV"?' in text


def test_command_line_refuses_it_with_exit_2(tmp_path, capsys):
    path = tmp_path / "mev.toml"
    path.write_text(MIRROR.replace('kinetic_energy = "1 MeV"', "kinetic_energy = 50e6"))
    assert main(["run", str(path)]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and 'did you mean "50 MeV"?' in err


def test_a_plain_field_number_meant_as_gauss_gets_the_hint():
    data = mirror_dict()
    data["field"][0]["B0"] = 1e14
    with pytest.raises(ScenarioError, match=r'field\[0\]\.B0: .* did you mean "1e\+14 G"'):
        Scenario.from_dict(data)


def test_an_a0_beyond_any_physical_use_is_refused_not_overflowed():
    data = tomllib.loads(LASER)
    data["field"][0]["a0"] = 1e308
    with pytest.raises(ScenarioError, match=r"field\[0\]\.a0: gives a peak field"):
        Scenario.from_dict(data)


# ---------------------------------------------------------------------- bad input: one short line, exit 2
def corrupt(text, old, new):
    assert old in text
    return text.replace(old, new)


BAD_FILES = {
    "non-UTF-8 title": b'title = "caf\xe9"\n' + MIRROR.split("\n", 1)[1].encode(),
    "binary garbage": bytes(range(256)) * 4,
    "empty file": b"",
    "500 nested [": ("x = " + "[" * 500 + "]" * 500 + "\n").encode(),
    "unhashable field type": corrupt(MIRROR, 'type = "mirror"', 'type = ["mirror"]').encode(),
    "dt = 1e-320": corrupt(MIRROR, "steps_per_period = 100", "dt = 1e-320").encode(),
    "309-digit duration": corrupt(MIRROR, 'duration = "20 ns"', "duration = " + "9" * 309).encode(),
    "309-digit max_steps": corrupt(MIRROR, "save_every = 20", "save_every = 20\nmax_steps = " + "9" * 309).encode(),
    "save_every = 1e19": corrupt(MIRROR, "save_every = 20", "save_every = 1e19").encode(),
    "a0 = 1e308": corrupt(LASER, "a0 = 20", "a0 = 1e308").encode(),
    "100,000-character value": corrupt(MIRROR, 'species = "electron"', f'species = "{"x" * 100_000}"').encode(),
    "100,000-character unit string": corrupt(MIRROR, 'B0 = "5 T"', f'B0 = "{"1" * 100_000} T"').encode(),
    "direction overflows": corrupt(MIRROR, "direction = [0, 0.8660254037844387, 0.5]",
                                   "direction = [1e200, 1e200, 0]").encode(),
    "direction underflows": corrupt(MIRROR, "direction = [0, 0.8660254037844387, 0.5]",
                                    "direction = [1e-320, 0, 0]").encode(),
}


@pytest.mark.parametrize("content", BAD_FILES.values(), ids=BAD_FILES.keys())
@pytest.mark.parametrize("command", ["check", "run"])
def test_bad_input_exits_2_with_one_short_line(tmp_path, capsys, content, command):
    path = tmp_path / "bad.toml"
    path.write_bytes(content)
    assert main([command, str(path)]) == 2
    captured = capsys.readouterr()
    assert captured.err.startswith("radorbit: error: ") and captured.err.count("\n") == 1
    assert len(captured.err) <= MAX_MESSAGE + 40
    assert "Traceback" not in captured.err + captured.out


def test_direction_messages_name_the_key():
    for bad in ([1e200, 1e200, 0.0], [1e-320, 0.0, 0.0]):
        data = mirror_dict()
        data["particle"]["direction"] = bad
        with pytest.raises(ScenarioError) as info:
            Scenario.from_dict(data)
        assert info.value.key == "particle.direction"


def test_a_long_unit_string_is_refused_before_it_reaches_the_unit_parser(monkeypatch):
    import tracker.units as units

    calls = []
    monkeypatch.setattr(units, "registry", lambda: calls.append(1))
    with pytest.raises(ScenarioError, match="too long for a quantity"):
        parse_scalar("1" * 16_000 + " T", "magnetic_field", "field[0].B0")
    assert calls == []


# ---------------------------------------------------------------------- API
def test_scalar_momentum_with_direction_is_accepted_like_the_other_scalar_keys():
    data = mirror_dict()
    del data["particle"]["kinetic_energy"]
    data["particle"]["momentum"] = "1.42 MeV/c"
    s = Scenario.from_dict(data)
    # |u| = p/(m c) with m c^2 = 0.51099895 MeV (CODATA via scipy)
    mc2_mev = sc.physical_constants["electron mass energy equivalent in MeV"][0]
    assert np.linalg.norm(s.particle.u) == pytest.approx(1.42 / mc2_mev, rel=1e-9)
    assert s.particle.u[1] / np.linalg.norm(s.particle.u) == pytest.approx(0.8660254037844387)
    assert Scenario.from_toml(s.to_toml()) == s
    del data["particle"]["direction"]
    with pytest.raises(ScenarioError, match="particle.direction: is required with momentum"):
        Scenario.from_dict(data)


def test_fields_at_takes_one_time_per_position():
    s = Scenario.from_toml(LASER)
    points = np.array([[0.0, 0.0, -30e-6], [0.0, 0.0, -29.9e-6], [0.0, 0.0, 0.0]])
    times = np.array([0.0, 1e-15, 2e-15])
    e, b = s.fields_at(points, times)
    for i in range(3):
        e_one, b_one = s.fields_at(points[i:i + 1], float(times[i]))
        assert np.array_equal(e[i], e_one[0]) and np.array_equal(b[i], b_one[0])
    with pytest.raises(ScenarioError, match="^t: must be one time"):
        s.fields_at(points, [0.0, 1e-15])
