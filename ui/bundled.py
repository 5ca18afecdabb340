"""The scenario files shipped with radorbit (``scenarios/`` beside the packages)."""

import tomllib
from pathlib import Path

#: folder of the bundled scenarios
SCENARIO_DIR = Path(__file__).resolve().parent.parent / "scenarios"

#: opened when the lab starts without a scenario: short, and the loss is large enough to see
DEFAULT_SCENARIO = "laser_headon_gev.toml"


def bundled_scenarios():
    """{file name: title} of the bundled scenario files, sorted by name."""
    out = {}
    for path in sorted(SCENARIO_DIR.glob("*.toml")):
        try:
            title = tomllib.loads(path.read_text(encoding="utf-8")).get("title", "")
        except (OSError, tomllib.TOMLDecodeError):
            title = ""
        out[path.name] = title or path.stem
    return out


def bundled_path(name):
    """Path of a bundled scenario file by its file name."""
    path = SCENARIO_DIR / name
    if path.parent != SCENARIO_DIR or not path.is_file():
        raise FileNotFoundError(f"no bundled scenario named {name!r}")
    return path
