"""The scenario as the user wrote it: TOML that keeps text with units ("120 fs", "1 GeV").

``Scenario.to_toml`` writes SI numbers. A download from the lab should read back as the
user typed it, so every value present in the draft is written as entered (strings with
units as strings, plain numbers as SI numbers with the unit in a comment) and only the
defaults the Scenario filled in come from its SI form. The text is accepted only if it
validates to exactly the same Scenario; otherwise the SI text is returned.

This is the lab's stand-in until the Scenario keeps the text as entered itself.
"""

from __future__ import annotations

import json
import math
import tomllib

from tracker import Scenario, ScenarioError
from tracker.fields import MODELS as FIELD_MODELS

from . import schema


def _value(v) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        return repr(v) if math.isfinite(v) else json.dumps(str(v))
    if isinstance(v, str):
        return json.dumps(v, ensure_ascii=False)
    if isinstance(v, (list, tuple)):
        return "[" + ", ".join(_value(x) for x in v) + "]"
    raise TypeError(f"cannot write {v!r} to TOML")


def _has_text(v) -> bool:
    return isinstance(v, str) or (isinstance(v, (list, tuple)) and any(isinstance(x, str) for x in v))


def _lines(si: dict, raw: dict, units: dict) -> list[str]:
    out = []
    for key, value in si.items():
        shown = raw.get(key, value) if isinstance(raw, dict) else value
        unit = units.get(key, "")
        comment = f"  # {unit}" if unit and not _has_text(shown) and not isinstance(shown, bool) else ""
        out.append(f"{key} = {_value(shown)}{comment}")
    return out


def scenario_text(draft: dict, scenario: Scenario) -> str:
    """TOML of ``scenario`` keeping the draft's values as entered (see the module docstring)."""
    si = scenario.to_dict()
    run_units = {name: e.unit for name, e in schema.RUN_ENTRIES.items()}
    particle_units = {name: e.unit for name, e in schema.PARTICLE_ENTRIES.items()}
    lines = ["# radorbit scenario: values as entered; plain numbers are SI (unit in the comment)"]
    for key in ("title", "description"):
        if key in si:
            lines.append(f"{key} = {_value(si[key])}")
    lines += ["", "[run]", *_lines(si["run"], draft.get("run", {}), run_units)]
    lines += ["", "[particle]", *_lines(si["particle"], draft.get("particle", {}), particle_units)]
    raw_fields = draft.get("field", [])
    for i, f in enumerate(si.get("field", [])):
        raw = raw_fields[i] if isinstance(raw_fields, list) and i < len(raw_fields) else {}
        units = {p.name: p.unit for p in FIELD_MODELS[f["type"]].params}
        lines += ["", "[[field]]", *_lines(f, raw, units)]
    text = "\n".join(lines) + "\n"
    try:
        same = Scenario.from_dict(tomllib.loads(text)).to_dict() == si
    except (ScenarioError, tomllib.TOMLDecodeError, TypeError, ValueError):
        same = False
    return text if same else scenario.to_toml()
