"""The scenario files shipped with radorbit (``scenarios/`` beside the packages)."""

import sys
import tomllib
from pathlib import Path


def _scenario_dir():
    """The repository's scenarios/ (editable install) or the copy a wheel installs under share/."""
    candidates = (Path(__file__).resolve().parent.parent / "scenarios",
                  Path(sys.prefix) / "share" / "radorbit" / "scenarios")
    for folder in candidates:
        if folder.is_dir():
            return folder
    return candidates[0]


#: folder of the bundled scenarios
SCENARIO_DIR = _scenario_dir()

#: opened when the lab starts without a scenario: short, and the loss is large enough to see
DEFAULT_SCENARIO = "laser_headon_gev.toml"


def bundled_scenarios():
    """{file name: title} of the bundled scenario files the lab can show, sorted by name.

    Beam scenarios (a ``[beam]`` table) are listed too: the lab's Beam tab draws their BeamResults.
    """
    out = {}
    for path in sorted(SCENARIO_DIR.glob("*.toml")):
        try:
            data = tomllib.loads(path.read_text(encoding="utf-8"))
        except (OSError, tomllib.TOMLDecodeError):
            data = {}
        out[path.name] = data.get("title", "") or path.stem
    return out


def bundled_path(name):
    """Path of a bundled scenario file by its file name."""
    path = SCENARIO_DIR / name
    if path.parent != SCENARIO_DIR or not path.is_file():
        raise FileNotFoundError(f"no bundled scenario named {name!r}")
    return path
