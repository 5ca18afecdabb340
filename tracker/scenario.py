"""The Scenario: the single source of truth for a run (validated, SI inside).

Files and the Python API share one schema::

    title = "optional"
    [run]       duration, dt | steps_per_period, pusher, radiation_reaction, save_every, max_steps
    [particle]  species (+ charge_state, mass_number | mass, charge), position,
                one of gamma | kinetic_energy | speed | momentum | u, direction
    [[field]]   type = "<registered field model>", then its parameters

Numbers are SI; strings carry units ("1.5 T", "0.8 um", "30 fs", "2 GeV").
"""

import dataclasses
import math
import tomllib
from dataclasses import dataclass
from functools import cached_property
from pathlib import Path

import numpy as np

from . import constants as k
from . import species as sp
from .config import DATA_OFFSET_SLOT, DEFAULT_MAX_STEPS, FIELD_PARAMS
from .errors import ScenarioError, brief
from .fields import MODELS as FIELD_MODELS
from .fields.base import ABSENT, REQUIRED, unit_vector
from .pushers import PUSHERS
from .radiation.reaction import MODELS as RR_MODELS
from .units import parse_scalar, parse_vector

MOMENTUM_KEYS = ("gamma", "kinetic_energy", "speed", "momentum", "u")
SCALAR_MOMENTUM_KEYS = ("gamma", "kinetic_energy", "speed")
SPECIES_NAMES = tuple(sp.NAMED) + ("ion", "custom")

RUN_KEYS = ("duration", "dt", "steps_per_period", "pusher", "radiation_reaction", "save_every", "max_steps",
            "adaptive", "dt_min", "dt_max")
PARTICLE_KEYS = ("species", "charge_state", "mass_number", "mass", "charge", "position", "direction") + MOMENTUM_KEYS
TOP_KEYS = ("title", "description", "run", "particle", "field")


@dataclass(frozen=True)
class RunSpec:
    """How to integrate: duration (s), dt (s) or steps per fastest period, models, output cadence."""

    duration: float
    dt: float | None = None
    steps_per_period: float | None = None
    pusher: str = "boris"
    radiation_reaction: str = "landau-lifshitz"
    save_every: int = 1
    max_steps: int = DEFAULT_MAX_STEPS
    adaptive: bool = False
    dt_min: float | None = None
    dt_max: float | None = None


@dataclass(frozen=True)
class ParticleSpec:
    """One particle: species (charge C, mass kg), position (m) and the momentum as given."""

    species: str
    charge: float
    mass: float
    position: tuple
    momentum_key: str
    momentum_value: object
    direction: tuple | None = None
    charge_state: float | None = None
    mass_number: float | None = None

    @property
    def u(self):
        """Initial u = gamma v/c, shape (3,)."""
        key, value = self.momentum_key, self.momentum_value
        mc = self.mass * k.c
        if key == "u":
            return np.array(value, dtype=float)
        if key == "momentum" and isinstance(value, tuple):
            return np.array(value, dtype=float) / mc
        if key == "gamma":
            magnitude = math.sqrt(value * value - 1.0)
        elif key == "kinetic_energy":
            g = 1.0 + value / (self.mass * k.c**2)
            magnitude = math.sqrt(g * g - 1.0)
        elif key == "momentum":  # a scalar |p| with a direction
            magnitude = value / mc
        else:  # speed
            beta = value / k.c
            magnitude = beta / math.sqrt(1.0 - beta * beta)
        return magnitude * np.array(self.direction, dtype=float)

    @property
    def gamma(self):
        """Initial Lorentz factor."""
        u = self.u
        return math.sqrt(1.0 + float(u @ u))


@dataclass(frozen=True)
class FieldSpec:
    """One field component: its registered type and its parameters in SI (absent ones left out)."""

    type: str
    values: tuple  #: ((name, value), ...) in the model's parameter order

    @property
    def params(self):
        """Parameters as a dict (SI; vectors as 3-tuples)."""
        return dict(self.values)

    @property
    def model(self):
        return FIELD_MODELS[self.type]


@dataclass(frozen=True)
class Scenario:
    """A validated scenario. Build with ``from_dict``, ``from_toml`` or ``load_scenario``."""

    run: RunSpec
    particle: ParticleSpec
    fields: tuple = ()
    title: str = ""
    description: str = ""

    # ------------------------------------------------------------------ building
    @classmethod
    def from_dict(cls, data):
        """Validate a nested dict (as read from TOML) into a Scenario; raises ScenarioError."""
        if not isinstance(data, dict):
            raise ScenarioError("", f"a scenario is a table of keys, not {type(data).__name__}.")
        _reject_unknown(data, TOP_KEYS, "")
        for key in ("title", "description"):
            if key in data and not isinstance(data[key], str):
                raise ScenarioError(key, f"must be text, not {data[key]!r}.")
        if "run" not in data:
            raise ScenarioError("run", "the [run] table is missing (it needs at least duration).")
        if "particle" not in data:
            raise ScenarioError("particle", "the [particle] table is missing.")
        raw_fields = data.get("field", [])
        if isinstance(raw_fields, dict):
            raw_fields = [raw_fields]
        if not isinstance(raw_fields, list):
            raise ScenarioError("field", f"must be an array of tables ([[field]]), not {raw_fields!r}.")
        scenario = cls(
            run=_parse_run(_table(data["run"], "run")),
            particle=_parse_particle(_table(data["particle"], "particle")),
            fields=tuple(_parse_field(_table(f, f"field[{i}]"), i) for i, f in enumerate(raw_fields)),
            title=data.get("title", ""),
            description=data.get("description", ""),
        )
        from .plausibility import check_plausible

        check_plausible(scenario, data)
        scenario.plan()  # resolution and size checks belong to validation
        return scenario

    @classmethod
    def from_toml(cls, text):
        """Parse TOML text; syntax errors become ScenarioError."""
        from .plausibility import toml_table

        return cls.from_dict(toml_table(text))

    def to_dict(self):
        """Plain nested dict in SI; ``from_dict(to_dict())`` gives an equal Scenario."""
        out = {}
        if self.title:
            out["title"] = self.title
        if self.description:
            out["description"] = self.description
        run = {f.name: getattr(self.run, f.name) for f in dataclasses.fields(RunSpec)}
        out["run"] = {key: value for key, value in run.items() if value is not None}
        p = self.particle
        particle = {"species": p.species}
        if p.species == "ion":
            particle.update(charge_state=p.charge_state, mass_number=p.mass_number)
        elif p.species == "custom":
            particle.update(mass=p.mass, charge=p.charge)
        particle["position"] = list(p.position)
        particle[p.momentum_key] = list(p.momentum_value) if isinstance(p.momentum_value, tuple) else p.momentum_value
        if p.direction is not None:
            particle["direction"] = list(p.direction)
        out["particle"] = particle
        out["field"] = [
            {"type": f.type, **{name: list(v) if isinstance(v, tuple) else v for name, v in f.values}}
            for f in self.fields
        ]
        return out

    def to_toml(self):
        """TOML text in SI with unit comments; ``from_toml(to_toml())`` round-trips exactly."""
        from .toml_writer import scenario_toml

        return scenario_toml(self.to_dict())

    def replace(self, **changes):
        """A copy with top-level parts replaced (``run=``, ``particle=``, ``fields=``, ``title=``)."""
        return dataclasses.replace(self, **changes)

    def with_run(self, **changes):
        """A copy with [run] entries changed, re-validated (e.g. ``radiation_reaction="none"``)."""
        return Scenario.from_dict(_merge(self.to_dict(), "run", changes))

    # ------------------------------------------------------------------ compiled form
    @cached_property
    def field_table(self):
        """(kinds int64 (n,), params float64 (n, FIELD_PARAMS), data float64 (m,)) for the kernels.

        ``data`` holds the bulk data of models that have it (field maps, formula programs);
        a row finds its block at the offset stored in ``params[i, DATA_OFFSET_SLOT]``.
        """
        kinds = np.zeros(len(self.fields), dtype=np.int64)
        params = np.zeros((len(self.fields), FIELD_PARAMS), dtype=np.float64)
        blocks = []
        offset = 0
        for i, f in enumerate(self.fields):
            row = f.model.pack(f.params)
            if len(row) > DATA_OFFSET_SLOT:
                raise ScenarioError(f"field[{i}]", f"packs {len(row)} parameters; at most {DATA_OFFSET_SLOT} fit.")
            kinds[i] = f.model.code
            params[i, : len(row)] = row
            if f.model.data is not None:
                block = np.ascontiguousarray(f.model.data(f.params, getattr(self, "base_dir", None)),
                                             dtype=np.float64).ravel()
                params[i, DATA_OFFSET_SLOT] = float(offset)
                blocks.append(block)
                offset += block.size
        data = np.concatenate(blocks) if blocks else np.zeros(1)
        for a in (kinds, params, data):
            a.setflags(write=False)
        return kinds, params, data

    def fields_at(self, x, t):
        """E (V/m) and B (T), each (n, 3), at positions x (n, 3) in m and time t in s.

        ``t`` is one time for all positions or one time per position (shape (n,)).
        Uses the same compiled evaluator as the pusher.
        """
        from .fields.evaluate import evaluate
        from .plausibility import times_for_points

        points, times = times_for_points(x, t)
        if times is None:
            return evaluate(*self.field_table, points, t if np.ndim(t) == 0 else float(np.asarray(t).ravel()[0]))
        e, b = np.empty_like(points), np.empty_like(points)
        for when in np.unique(times):
            at = times == when
            e[at], b[at] = evaluate(*self.field_table, points[at], float(when))
        return e, b

    # ------------------------------------------------------------------ particles
    @property
    def particle_count(self):
        """Number of particles the scenario tracks (1 for a [particle])."""
        return 1

    @property
    def species_charge(self):
        """Charge of the tracked species in C."""
        return self.particle.charge

    @property
    def species_mass(self):
        """Mass of the tracked species in kg."""
        return self.particle.mass

    def initial_particles(self):
        """(x (N, 3) m, u (N, 3) gamma*beta, weight (N,)) at t = 0."""
        p = self.particle
        return (np.array([p.position], dtype=np.float64), np.array(p.u, dtype=np.float64)[None, :].copy(),
                np.ones(1))

    def plan(self):
        """The run plan (dt, steps, saved states, memory); raises ScenarioError if too large."""
        from .plan import make_plan

        return make_plan(self)

    @property
    def species(self):
        return sp.Species(self.particle.species, self.particle.charge, self.particle.mass)


def load_scenario(path):
    """Read and validate a scenario TOML file (path to a .toml file)."""
    path = Path(path)
    from .plausibility import read_scenario_text

    return Scenario.from_toml(read_scenario_text(path))


# ---------------------------------------------------------------------- parsing helpers
def _table(value, key):
    if not isinstance(value, dict):
        raise ScenarioError(key, f"must be a table, not {value!r}.")
    return value


def _reject_unknown(table, allowed, prefix):
    for key in table:
        if key not in allowed:
            where = f"{prefix}.{key}" if prefix else key
            raise ScenarioError(where, f"unknown key; allowed here: {', '.join(allowed)}.")


def _merge(data, section, changes):
    data = dict(data)
    data[section] = {**data[section], **changes}
    data[section] = {key: v for key, v in data[section].items() if v is not None}
    return data


#: largest whole number accepted for counts (save_every, max_steps): above it the
#: float64 kernel plan row no longer holds it exactly (2^53).
MAX_COUNT = 2**53


def _integer(value, key, minimum=1):
    if (isinstance(value, bool) or not isinstance(value, (int, float))
            or (isinstance(value, float) and not math.isfinite(value)) or value != int(value) or value < minimum):
        raise ScenarioError(key, f"must be a whole number >= {minimum}, not {brief(value)}.")
    if value > MAX_COUNT:
        raise ScenarioError(key, f"must be at most 2^53 = {MAX_COUNT:.4g}, not {brief(value)}.")
    return int(value)


def _choice(value, choices, key):
    if not isinstance(value, str) or value not in choices:
        raise ScenarioError(key, f"must be one of {', '.join(map(repr, choices))}, not {brief(value)}.")
    return value


def _positive(value, dimension, key):
    number = parse_scalar(value, dimension, key)
    if not number > 0:
        raise ScenarioError(key, f"must be positive, not {value!r}.")
    return number


def _boolean(value, key):
    if not isinstance(value, bool):
        raise ScenarioError(key, f"must be true or false, not {value!r}.")
    return value


def _parse_run(raw):
    _reject_unknown(raw, RUN_KEYS, "run")
    if "duration" not in raw:
        raise ScenarioError("run.duration", "is required (e.g. duration = \"2 ns\").")
    if "dt" in raw and "steps_per_period" in raw:
        raise ScenarioError("run.dt", "give either dt or steps_per_period, not both.")
    run = RunSpec(
        duration=_positive(raw["duration"], "time", "run.duration"),
        dt=_positive(raw["dt"], "time", "run.dt") if "dt" in raw else None,
        steps_per_period=(_positive(raw["steps_per_period"], "dimensionless", "run.steps_per_period")
                          if "steps_per_period" in raw else None),
        pusher=_choice(raw.get("pusher", "boris"), tuple(PUSHERS), "run.pusher"),
        radiation_reaction=_choice(raw.get("radiation_reaction", "landau-lifshitz"), tuple(RR_MODELS),
                                   "run.radiation_reaction"),
        save_every=_integer(raw.get("save_every", 1), "run.save_every"),
        max_steps=_integer(raw.get("max_steps", DEFAULT_MAX_STEPS), "run.max_steps"),
        adaptive=_boolean(raw.get("adaptive", False), "run.adaptive"),
        dt_min=_positive(raw["dt_min"], "time", "run.dt_min") if "dt_min" in raw else None,
        dt_max=_positive(raw["dt_max"], "time", "run.dt_max") if "dt_max" in raw else None,
    )
    if not run.adaptive:
        for key in ("dt_min", "dt_max"):
            if getattr(run, key) is not None:
                raise ScenarioError(f"run.{key}", "only applies with adaptive = true.")
    if run.dt_min is not None and run.dt_max is not None and run.dt_min > run.dt_max:
        raise ScenarioError("run.dt_min", f"must not exceed dt_max ({run.dt_max:g} s), not {raw['dt_min']!r}.")
    return run


def _parse_species(raw):
    name = raw.get("species", "custom" if ("mass" in raw or "charge" in raw) else None)
    if name is None:
        raise ScenarioError("particle.species", f"is required; one of {', '.join(SPECIES_NAMES)}.")
    _choice(name, SPECIES_NAMES, "particle.species")
    extra = {"ion": ("charge_state", "mass_number"), "custom": ("mass", "charge")}
    for other, keys in extra.items():
        if name != other:
            for key in keys:
                if key in raw:
                    raise ScenarioError(f"particle.{key}", f"only applies to species = {other!r}, not {name!r}.")
    if name == "ion":
        for key in ("charge_state", "mass_number"):
            if key not in raw:
                raise ScenarioError(f"particle.{key}", "is required for species = 'ion'.")
        z = parse_scalar(raw["charge_state"], "dimensionless", "particle.charge_state")
        a = _positive(raw["mass_number"], "dimensionless", "particle.mass_number")
        if z == 0:
            raise ScenarioError("particle.charge_state", "must not be zero (a neutral particle does not radiate).")
        ion = sp.ion(z, a)
        if not ion.mass > 0:
            raise ScenarioError("particle.charge_state", f"leaves no mass for mass_number {a:g}, not {z!r}.")
        return ion, z, a
    if name == "custom":
        for key in ("mass", "charge"):
            if key not in raw:
                raise ScenarioError(f"particle.{key}", "is required with an explicit species (mass and charge).")
        mass = parse_scalar(raw["mass"], "mass", "particle.mass")
        if not mass > 0:
            raise ScenarioError("particle.mass", f"must be positive, not {raw['mass']!r}.")
        charge = parse_scalar(raw["charge"], "charge", "particle.charge")
        if charge == 0:
            raise ScenarioError("particle.charge", "must not be zero (a neutral particle does not radiate).")
        return sp.Species("custom", charge, mass), None, None
    return sp.named(name), None, None


def _parse_particle(raw):
    _reject_unknown(raw, PARTICLE_KEYS, "particle")
    species, charge_state, mass_number = _parse_species(raw)
    given = [key for key in MOMENTUM_KEYS if key in raw]
    if len(given) != 1:
        raise ScenarioError(
            "particle.gamma" if not given else f"particle.{given[1]}",
            f"give exactly one of {', '.join(MOMENTUM_KEYS)}" + (f", not {', '.join(given)}." if given else "."),
        )
    key = given[0]
    where = f"particle.{key}"
    direction = None
    scalar_momentum = key == "momentum" and not isinstance(raw[key], (list, tuple))
    if key in SCALAR_MOMENTUM_KEYS or scalar_momentum:
        if "direction" not in raw:
            raise ScenarioError("particle.direction", f"is required with {key} (a vector; it is normalised for you).")
        direction = unit_vector(parse_vector(raw["direction"], "dimensionless", "particle.direction"),
                                "particle.direction")
        if key == "gamma":
            value = parse_scalar(raw[key], "dimensionless", where)
            if not value >= 1.0:
                raise ScenarioError(where, f"must be at least 1, not {raw[key]!r}.")
        elif key == "kinetic_energy":
            value = parse_scalar(raw[key], "energy", where)
            if not value >= 0.0:
                raise ScenarioError(where, f"must not be negative, not {raw[key]!r}.")
        elif key == "momentum":
            value = parse_scalar(raw[key], "momentum", where)
            if not value >= 0.0:
                raise ScenarioError(where, f"must not be negative, not {raw[key]!r}.")
        else:
            value = parse_scalar(raw[key], "velocity", where)
            if not 0.0 <= value < k.c:
                raise ScenarioError(where, f"must be at least 0 and below the speed of light, not {raw[key]!r}.")
    else:
        if "direction" in raw:
            raise ScenarioError("particle.direction", f"is set by the vector {key}; leave direction out.")
        value = parse_vector(raw[key], "momentum" if key == "momentum" else "dimensionless", where)
    return ParticleSpec(
        species=species.name,
        charge=species.charge,
        mass=species.mass,
        position=parse_vector(raw.get("position", [0.0, 0.0, 0.0]), "length", "particle.position"),
        momentum_key=key,
        momentum_value=value,
        direction=direction,
        charge_state=charge_state,
        mass_number=mass_number,
    )


def _parse_field(raw, index):
    key = f"field[{index}]"
    if "type" not in raw:
        raise ScenarioError(f"{key}.type", f"is required; one of {', '.join(FIELD_MODELS)}.")
    model = FIELD_MODELS.get(raw["type"]) if isinstance(raw["type"], str) else None
    if model is None:
        raise ScenarioError(f"{key}.type", f"must be one of {', '.join(map(repr, FIELD_MODELS))}, "
                                           f"not {brief(raw['type'])}.")
    allowed = ("type",) + tuple(p.name for p in model.params)
    _reject_unknown(raw, allowed, key)
    values = []
    for param in model.params:
        if param.name in raw:
            values.append((param.name, param.parse(raw[param.name], f"{key}.{param.name}")))
        elif param.default is REQUIRED:
            raise ScenarioError(f"{key}.{param.name}", f"is required for a {model.name} field.")
        elif param.default is not ABSENT:
            values.append((param.name, param.default))
    if model.check is not None:
        model.check(dict(values), key)
    return FieldSpec(model.name, tuple(values))
