"""Write a scenario dict as TOML with SI unit comments (exact float round trip via repr).

Units come from the input descriptors (``tracker.inputs``, the field registry); a value
kept as the user typed it ("120 fs") carries its own unit and gets no comment.
"""

import json

from . import inputs
from .fields import MODELS as FIELD_MODELS

RUN_UNITS = {i.name: i.unit for i in inputs.RUN_INPUTS}
PARTICLE_UNITS = {i.name: i.unit for i in inputs.PARTICLE_INPUTS}
BEAM_UNITS = {i.name: i.unit for i in inputs.BEAM_INPUTS}


def _value(v):
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        return repr(v)
    if isinstance(v, str):
        return json.dumps(v, ensure_ascii=False)
    if isinstance(v, (list, tuple)):
        return "[" + ", ".join(_value(x) for x in v) + "]"
    if isinstance(v, dict):  # inline table; keys are identifiers (checked by the schema)
        return "{" + ", ".join(f"{key} = {_value(x)}" for key, x in v.items()) + "}"
    raise TypeError(f"cannot write {v!r} to TOML")


def _lines(table, units):
    out = []
    for key, v in table.items():
        typed = isinstance(v, str) or (isinstance(v, (list, tuple)) and any(isinstance(x, str) for x in v))
        unit = "" if typed else units.get(key, "")
        out.append(f"{key} = {_value(v)}" + (f"  # {unit}" if unit else ""))
    return out


def scenario_toml(data):
    """TOML text for ``Scenario.to_dict()`` output."""
    lines = ["# radorbit scenario (numbers in SI units)"]
    for key in ("title", "description"):
        if key in data:
            lines.append(f"{key} = {_value(data[key])}")
    lines += ["", "[run]", *_lines(data["run"], RUN_UNITS)]
    if "beam" in data:
        lines += ["", "[beam]", *_lines(data["beam"], BEAM_UNITS)]
    else:
        lines += ["", "[particle]", *_lines(data["particle"], PARTICLE_UNITS)]
    for f in data.get("field", []):
        model = FIELD_MODELS[f["type"]]
        units = {p.name: p.unit for p in model.params}
        lines += ["", "[[field]]", *_lines(f, units)]
    if "sweep" in data:
        lines += ["", "[sweep]", f"grid = {_value(data['sweep']['grid'])}", "", "[sweep.vary]"]
        lines += [f"{json.dumps(key)} = {_value(values)}" for key, values in data["sweep"]["vary"].items()]
    return "\n".join(lines) + "\n"
