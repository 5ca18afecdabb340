"""Key paths of a scenario: ``field[0].a0``, ``particle.kinetic_energy``, ``run.pusher``, ``particle.position[2]``.

A path names one entry of the scenario's plain dict (``Scenario.to_dict()``); an optional
trailing ``[k]`` picks one component of a vector. Points of a scan are that dict with
the varied entries replaced and handed back to ``Scenario.from_dict``, which stays the
only judge of validity.
"""

import re

from ..errors import ScenarioError
from ..fields import MODELS as FIELD_MODELS

_PATH = re.compile(r"^(?:(run|particle|beam)\.([a-z_0-9]+)|field\[(\d+)\]\.([A-Za-z_0-9]+))(?:\[(\d)\])?$")

#: entries that replace each other: giving one drops the others of its group
EXCLUSIVE = {
    "particle": (("gamma", "kinetic_energy", "speed", "momentum", "u"),),
    "beam": (("gamma", "kinetic_energy", "speed", "momentum", "u"),),
    "run": (("dt", "steps_per_period"),),
    "field": (("a0", "E0"),),
}

def field_param(model, name):
    """The ``Param`` called ``name`` of a field model (KeyError if none)."""
    for p in model.params:
        if p.name == name:
            return p
    raise KeyError(name)


def parse_key(key):
    """(section, field index or None, name, component or None) of a key path; ScenarioError if malformed."""
    match = _PATH.match(key.strip()) if isinstance(key, str) else None
    if match is None:
        raise ScenarioError(str(key), "is not a key path; write run.NAME, particle.NAME, beam.NAME or field[i].NAME "
                                      "(optionally [k] for one vector component).")
    section, name, index, field_name, component = match.groups()
    if index is not None:
        return "field", int(index), field_name, None if component is None else int(component)
    return section, None, name, None if component is None else int(component)


def check_key(scenario, key):
    """Refuse a key path the scenario cannot take (unknown table, entry or field component)."""
    from ..scenario import BEAM_KEYS, PARTICLE_KEYS, RUN_KEYS

    section, index, name, component = parse_key(key)
    if section == "field":
        if index >= len(scenario.fields):
            raise ScenarioError(key, f"there is no field[{index}]: the scenario has {len(scenario.fields)} "
                                     "field component(s).")
        model = scenario.fields[index].model
        names = [p.name for p in model.params]
        if name not in names:
            raise ScenarioError(key, f"a {model.name} field has no entry {name!r}; it has {', '.join(names)}.")
        kind = field_param(model, name).kind
    else:
        allowed = {"run": RUN_KEYS, "particle": PARTICLE_KEYS, "beam": BEAM_KEYS}[section]
        if section != "run" and (section == "beam") != (scenario.beam is not None):
            raise ScenarioError(key, f"the scenario has no [{section}] table (it tracks "
                                     f"{'a beam' if scenario.beam is not None else 'one particle'}).")
        if name not in allowed:
            raise ScenarioError(key, f"[{section}] has no entry {name!r}; it has {', '.join(allowed)}.")
        kind = _inputs(section)[name].kind
    if component is not None and (kind != "vector" or component > 2):
        raise ScenarioError(key, "a component [k] (k = 0, 1, 2) applies only to a vector entry.")


def _container(data, section, index, key):
    if section == "field":
        return data["field"][index]
    return data.setdefault(section, {})


def set_value(data, key, value):
    """Set one entry of a scenario dict in place (the entries it replaces are dropped)."""
    section, index, name, component = parse_key(key)
    table = _container(data, section, index, key)
    if component is not None:
        vector = list(table.get(name) or [0.0, 0.0, 0.0])
        vector[component] = value
        table[name] = vector
        return
    for group in EXCLUSIVE[section]:
        if name in group:
            for other in group:
                if other != name:
                    table.pop(other, None)
    if section == "particle" and name in ("momentum", "u"):
        table.pop("direction", None)   # a vector momentum carries its direction
    table[name] = list(value) if isinstance(value, tuple) else value


def get_value(scenario, key):
    """The entry at a key path of a validated Scenario, in SI (float, str, bool or a 3-list)."""
    section, index, name, component = parse_key(key)
    data = scenario.to_dict()
    table = data["field"][index] if section == "field" else data[section]
    value = table.get(name)
    if component is not None and value is not None:
        return value[component]
    return value


def dimension(scenario, key):
    """Dimension name of the entry (a key of ``tracker.units.SI_UNITS``); 'dimensionless' for choices."""
    section, index, name, _ = parse_key(key)
    if section == "field":
        return field_param(FIELD_MODELS[scenario.fields[index].type], name).dimension
    entry = _inputs(section)[name]
    return entry.dimension if entry.kind in ("scalar", "vector", "list", "transverse") else "dimensionless"


def _inputs(section):
    """{name: Input} of the [run], [particle] or [beam] descriptors (tracker.inputs)."""
    from .. import inputs

    return {"run": inputs.RUN, "particle": inputs.PARTICLE, "beam": inputs.BEAM}[section]


def unit(scenario, key):
    """SI unit text of the entry ('' for numbers without unit, choices and flags)."""
    from ..units import SI_UNITS

    return SI_UNITS[dimension(scenario, key)]
