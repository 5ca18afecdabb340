"""The Scenario: the single source of truth for a run (validated, SI inside).

Files and the Python API share one schema::

    title = "optional"
    [run]       duration, dt | steps_per_period, pusher, radiation_reaction, save_every, max_steps,
                save = "all" | "statistics", snapshots = [times],
                seed (stochastic models), photon_min_energy (photon record threshold)
    [particle]  species (+ charge_state, mass_number | mass, charge), position,
                one of gamma | kinetic_energy | speed | momentum | u, direction
    [beam]      instead of [particle]: the [particle] keys for the centroid, then count, seed,
                energy_spread, divergence, size, distribution; or species + file (+ iteration)
    [[field]]   type = "<registered field model>", then its parameters

Numbers are SI; strings carry units ("1.5 T", "0.8 um", "30 fs", "2 GeV"). The inputs of
[run], [particle] and [beam] are described in ``tracker.inputs``; field inputs by the
field registry. The text a user typed with units is kept beside the SI value
(``Scenario.entered``) and written back by ``to_toml``.
"""

import dataclasses
import math
from dataclasses import dataclass, field
from functools import cached_property
from pathlib import Path

import numpy as np

from . import constants as k
from . import species as sp
from . import inputs
from .config import DATA_OFFSET_SLOT, DEFAULT_MAX_STEPS, FIELD_PARAMS
from .errors import ScenarioError, brief
from .fields import MODELS as FIELD_MODELS
from .fields.base import ABSENT, REQUIRED, unit_vector
from .inputs import SPECIES_NAMES  # noqa: F401  (re-exported: the lab reads it from here)
from .units import parse_scalar

MOMENTUM_KEYS = ("gamma", "kinetic_energy", "speed", "momentum", "u")
SCALAR_MOMENTUM_KEYS = ("gamma", "kinetic_energy", "speed")

RUN_KEYS = tuple(inputs.RUN)
PARTICLE_KEYS = tuple(inputs.PARTICLE)
BEAM_KEYS = tuple(inputs.BEAM)
TOP_KEYS = ("title", "description", "run", "particle", "beam", "field", "sweep")


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
    save: str = "all"
    snapshots: tuple = ()  #: times (s) of full particle dumps
    seed: int | None = None                  #: random-number seed of stochastic models (None: 0)
    photon_min_energy: float | None = None   #: J; photons below it are not recorded (None: 0, all)


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
class BeamSpec:
    """How the particles of a [beam] are made (the centroid is ``Scenario.particle``).

    Sampled beams (``file`` None): ``count`` particles from ``numpy.random.Generator(PCG64(seed))``;
    ``energy_spread`` relative rms of gamma; ``divergence`` rms angle in rad about the direction,
    as given (one float, or a pair for the axes e1, e2 of ``tracker.beam_sampling``); ``size``
    rms extent (m) along the lab axes x, y, z; ``distribution`` gaussian or uniform (same rms).
    File beams: ``file`` as written (resolved against ``Scenario.base_dir``), ``iteration`` of
    an openPMD file; ``loaded`` keeps the particles read at validation (x, u, weight).
    """

    count: int
    seed: int = inputs.DEFAULT_BEAM_SEED
    energy_spread: float = 0.0
    divergence: object = 0.0
    size: tuple = (0.0, 0.0, 0.0)
    distribution: str = "gaussian"
    file: str | None = None
    iteration: int | None = None
    loaded: object = field(default=None, compare=False, repr=False)

    @property
    def divergence_pair(self):
        """(rms angle along e1, along e2) in rad."""
        d = self.divergence
        return (float(d), float(d)) if not isinstance(d, tuple) else (float(d[0]), float(d[1]))


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
    """A validated scenario. Build with ``from_dict``, ``from_toml`` or ``load_scenario``.

    ``particle`` is the [particle], or for a [beam] its centroid (reference) particle: the
    given centroid of a sampled beam, the weighted mean position and u of a file beam.
    ``beam`` is the BeamSpec (None for one particle); ``initial_particles()`` gives every
    particle. ``entered`` keeps the values a user typed as text, as ((key path, value), ...);
    ``base_dir`` is the folder that relative file names in the scenario refer to.
    """

    run: RunSpec
    particle: ParticleSpec
    fields: tuple = ()
    title: str = ""
    description: str = ""
    beam: BeamSpec | None = None
    entered: tuple = ()
    sweep: object = None  #: tracker.scan.spec.SweepSpec of a [sweep] table (a scan), or None
    base_dir: str | None = field(default=None, compare=False)

    # ------------------------------------------------------------------ building
    @classmethod
    def from_dict(cls, data, base_dir=None):
        """Validate a nested dict (as read from TOML) into a Scenario; raises ScenarioError.

        ``base_dir`` (str or Path): folder against which relative file names are resolved
        (the scenario file's folder; None: the current working directory).
        """
        if not isinstance(data, dict):
            raise ScenarioError("", f"a scenario is a table of keys, not {type(data).__name__}.")
        _reject_unknown(data, TOP_KEYS, "")
        for key in ("title", "description"):
            if key in data and not isinstance(data[key], str):
                raise ScenarioError(key, f"must be text, not {data[key]!r}.")
        if "run" not in data:
            raise ScenarioError("run", "the [run] table is missing (it needs at least duration).")
        if "particle" in data and "beam" in data:
            raise ScenarioError("beam", "give either a [particle] table or a [beam] table, not both.")
        if "particle" not in data and "beam" not in data:
            raise ScenarioError("particle", "the [particle] table is missing (or give a [beam] table).")
        raw_fields = data.get("field", [])
        if isinstance(raw_fields, dict):
            raw_fields = [raw_fields]
        if not isinstance(raw_fields, list):
            raise ScenarioError("field", f"must be an array of tables ([[field]]), not {raw_fields!r}.")
        base_dir = None if base_dir is None else str(base_dir)
        run = _parse_run(_table(data["run"], "run"))
        if "beam" in data:
            beam, particle = _parse_beam(_table(data["beam"], "beam"), base_dir)
        else:
            beam, particle = None, _parse_particle(_table(data["particle"], "particle"))
        scenario = cls(
            run=run,
            particle=particle,
            fields=tuple(_parse_field(_table(f, f"field[{i}]"), i, base_dir) for i, f in enumerate(raw_fields)),
            title=data.get("title", ""),
            description=data.get("description", ""),
            beam=beam,
            entered=_entered(data),
            sweep=_parse_sweep(data),
            base_dir=base_dir,
        )
        from .plausibility import check_plausible

        check_plausible(scenario, data)
        if beam is not None:
            scenario.initial_particles()  # sampling limits (gamma >= 1) belong to validation
        scenario.plan()  # resolution and size checks belong to validation
        if scenario.sweep is not None:
            scenario.sweep.check_keys(scenario)
        return scenario

    @classmethod
    def from_toml(cls, text, base_dir=None):
        """Parse TOML text; syntax errors, absurd nesting and size become ScenarioError.
        ``base_dir`` as in ``from_dict``."""
        from .plausibility import toml_table

        return cls.from_dict(toml_table(text), base_dir=base_dir)

    def to_dict(self, as_entered=False):
        """Plain nested dict in SI; ``from_dict(to_dict())`` gives the same physics.

        ``as_entered=True`` puts back the text a user typed ("120 fs") where there was
        some, so that ``from_dict(to_dict(as_entered=True))`` gives an equal Scenario.
        """
        out = {}
        if self.title:
            out["title"] = self.title
        if self.description:
            out["description"] = self.description
        run = {f.name: getattr(self.run, f.name) for f in dataclasses.fields(RunSpec)}
        out["run"] = {key: list(value) if isinstance(value, tuple) else value for key, value in run.items()
                      if value is not None and not (key == "snapshots" and not value)}
        if self.beam is None:
            out["particle"] = _particle_dict(self.particle)
        else:
            out["beam"] = _beam_dict(self.beam, self.particle)
        out["field"] = [
            {"type": f.type, **{name: _raw_value(f.model.param(name), v) for name, v in f.values}}
            for f in self.fields
        ]
        if as_entered:
            for path, raw in self.entered:
                _put(out, path, _thaw(raw))
        if self.sweep is not None:
            out["sweep"] = self.sweep.to_dict()
        return out

    def to_toml(self):
        """TOML text with the values as entered (SI with unit comments elsewhere);
        ``from_toml(to_toml())`` round-trips exactly."""
        from .toml_writer import scenario_toml

        return scenario_toml(self.to_dict(as_entered=True))

    def with_run(self, **changes):
        """A copy with [run] entries changed, re-validated (e.g. ``radiation_reaction="none"``)."""
        return Scenario.from_dict(_merge(self.to_dict(as_entered=True), "run", changes), base_dir=self.base_dir)

    # ------------------------------------------------------------------ particles
    @property
    def particle_count(self):
        """Number of tracked particles (1 for a [particle])."""
        return 1 if self.beam is None else self.beam.count

    @property
    def species_charge(self):
        """Signed charge of one particle in C ([particle] or [beam])."""
        return self.particle.charge

    @property
    def species_mass(self):
        """Rest mass of one particle in kg ([particle] or [beam])."""
        return self.particle.mass

    def initial_particles(self):
        """(x (N, 3) m, u (N, 3) gamma*beta, weight (N,)) of every particle at t = 0.

        One particle: its position and ``ParticleSpec.u``. A sampled beam: drawn once
        with ``numpy.random.Generator(PCG64(seed))`` (``tracker.beam_sampling``); a file
        beam: as read. The arrays are shared and read-only: copy before changing them.
        """
        return self._initial_state

    @cached_property
    def _initial_state(self):
        if self.beam is None:
            p = self.particle
            x, u, w = np.array([p.position], dtype=float), p.u[None, :].astype(float), np.ones(1)
        elif self.beam.loaded is not None:
            x, u, w = (np.array(a, dtype=float) for a in self.beam.loaded)
        else:
            from .beam_sampling import sample_beam

            x, u, w = sample_beam(self.particle, self.beam)
        for a in (x, u, w):
            a.setflags(write=False)
        return x, u, w

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
        if len(blocks) == 1:
            data = blocks[0]  # one (possibly large) map or program is used as loaded: no copy
        else:
            data = np.concatenate(blocks) if blocks else np.zeros(1)
        for a in (kinds, params, data):
            a.setflags(write=False)
        return kinds, params, data

    @property
    def field_data_bytes(self):
        """Bytes of the field models' bulk data (maps, formula programs) kept for a run."""
        return sum(int(f.model.data_bytes(f.params, self.base_dir)) for f in self.fields
                   if f.model.data_bytes is not None)

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

    def plan(self):
        """The run plan (dt, steps, saved states, memory); raises ScenarioError if too large."""
        from .plan import make_plan

        return make_plan(self)


def load_scenario(path):
    """Read and validate a scenario TOML file (path to a .toml file); relative file names
    inside it are resolved against the file's folder."""
    path = Path(path)
    from .plausibility import read_scenario_text

    return Scenario.from_toml(read_scenario_text(path), base_dir=path.resolve().parent)


# ---------------------------------------------------------------------- parsing helpers
def _parse_sweep(data):
    """The optional [sweep] table (tracker.scan.spec); None when absent."""
    if "sweep" not in data:
        return None
    from .scan.spec import parse_sweep_table

    return parse_sweep_table(data["sweep"])


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


def _choice(value, choices, key):
    if not isinstance(value, str) or value not in choices:
        raise ScenarioError(key, f"must be one of {', '.join(map(repr, choices))}, not {brief(value)}.")
    return value


def _parse_inputs(raw, descriptors, section):
    """{name: SI value} of the keys present in ``raw`` (each checked by its descriptor)."""
    return {name: d.parse(raw[name], f"{section}.{name}") for name, d in descriptors.items() if name in raw}


def _parse_run(raw):
    _reject_unknown(raw, RUN_KEYS, "run")
    if "duration" not in raw:
        raise ScenarioError("run.duration", "is required (e.g. duration = \"2 ns\").")
    if "dt" in raw and "steps_per_period" in raw:
        raise ScenarioError("run.dt", "give either dt or steps_per_period, not both.")
    run = RunSpec(**_parse_inputs(raw, inputs.RUN, "run"))
    if run.seed is not None and run.seed >= 2**53:
        raise ScenarioError("run.seed", f"must be below 2**53 (exact in the kernel's float64 plan row), not {run.seed!r}.")
    if not run.adaptive:
        for key in ("dt_min", "dt_max"):
            if getattr(run, key) is not None:
                raise ScenarioError(f"run.{key}", "only applies with adaptive = true.")
    if run.dt_min is not None and run.dt_max is not None and run.dt_min > run.dt_max:
        raise ScenarioError("run.dt_min", f"must not exceed dt_max ({run.dt_max:g} s), not {raw['dt_min']!r}.")
    previous = -1.0
    for i, t in enumerate(run.snapshots):
        if t > run.duration or not t > previous:
            raise ScenarioError(f"run.snapshots[{i}]", f"snapshot times must increase and lie within the "
                                                       f"duration ({run.duration:g} s), not {raw['snapshots'][i]!r}.")
        previous = t
    return run


def _parse_species(raw, section="particle"):
    name = raw.get("species", "custom" if ("mass" in raw or "charge" in raw) else None)
    if name is None:
        raise ScenarioError(f"{section}.species", f"is required; one of {', '.join(SPECIES_NAMES)}.")
    _choice(name, SPECIES_NAMES, f"{section}.species")
    extra = {"ion": ("charge_state", "mass_number"), "custom": ("mass", "charge")}
    for other, keys in extra.items():
        if name != other:
            for key in keys:
                if key in raw:
                    raise ScenarioError(f"{section}.{key}", f"only applies to species = {other!r}, not {name!r}.")
    values = _parse_inputs(raw, {key: inputs.PARTICLE[key] for key in extra.get(name, ())}, section)
    if name == "ion":
        for key in ("charge_state", "mass_number"):
            if key not in raw:
                raise ScenarioError(f"{section}.{key}", "is required for species = 'ion'.")
        z, a = values["charge_state"], values["mass_number"]
        if z == 0:
            raise ScenarioError(f"{section}.charge_state", "must not be zero (a neutral particle does not radiate).")
        ion = sp.ion(z, a)
        if not ion.mass > 0:
            raise ScenarioError(f"{section}.charge_state", f"leaves no mass for mass_number {a:g}, not {z!r}.")
        return ion, z, a
    if name == "custom":
        for key in ("mass", "charge"):
            if key not in raw:
                raise ScenarioError(f"{section}.{key}", "is required with an explicit species (mass and charge).")
        if values["charge"] == 0:
            raise ScenarioError(f"{section}.charge", "must not be zero (a neutral particle does not radiate).")
        return sp.Species("custom", values["charge"], values["mass"]), None, None
    return sp.named(name), None, None


def _parse_particle(raw, section="particle"):
    if section == "particle":
        _reject_unknown(raw, PARTICLE_KEYS, "particle")
    species, charge_state, mass_number = _parse_species(raw, section)
    given = [key for key in MOMENTUM_KEYS if key in raw]
    if len(given) != 1:
        raise ScenarioError(
            f"{section}.gamma" if not given else f"{section}.{given[1]}",
            f"give exactly one of {', '.join(MOMENTUM_KEYS)}" + (f", not {', '.join(given)}." if given else "."),
        )
    key = given[0]
    scalar_momentum = key == "momentum" and not isinstance(raw[key], (list, tuple))
    if scalar_momentum:   # |p| with a direction, like the other scalar momentum keys
        value = parse_scalar(raw[key], "momentum", f"{section}.{key}")
        if not value >= 0.0:
            raise ScenarioError(f"{section}.{key}", f"must not be negative, not {brief(raw[key])}.")
    else:
        value = inputs.PARTICLE[key].parse(raw[key], f"{section}.{key}")
    direction = None
    if key in SCALAR_MOMENTUM_KEYS or scalar_momentum:
        if "direction" not in raw:
            raise ScenarioError(f"{section}.direction",
                                f"is required with {key} (a vector; it is normalised for you).")
        direction = unit_vector(inputs.PARTICLE["direction"].parse(raw["direction"], f"{section}.direction"),
                                f"{section}.direction")
    elif "direction" in raw:
        raise ScenarioError(f"{section}.direction", f"is set by the vector {key}; leave direction out.")
    position = inputs.PARTICLE["position"]
    return ParticleSpec(
        species=species.name,
        charge=species.charge,
        mass=species.mass,
        position=position.parse(raw.get("position", position.default), f"{section}.position"),
        momentum_key=key,
        momentum_value=value,
        direction=direction,
        charge_state=charge_state,
        mass_number=mass_number,
    )


def _parse_beam(raw, base_dir):
    """(BeamSpec, reference ParticleSpec) of a [beam] table."""
    _reject_unknown(raw, BEAM_KEYS, "beam")
    if "file" in raw:
        for key in inputs.BEAM_SAMPLING_KEYS:
            if key in raw:
                raise ScenarioError(f"beam.{key}", "is taken from the particle file (beam.file); leave it out.")
        species, charge_state, mass_number = _parse_species(raw, "beam")
        values = _parse_inputs(raw, {k_: inputs.BEAM[k_] for k_ in ("file", "iteration")}, "beam")
        from .particle_files import read_particle_file, resolve

        x, u, w = read_particle_file(resolve(values["file"], base_dir), species, values.get("iteration"),
                                     "beam.file")
        total = float(np.sum(w))
        reference = ParticleSpec(
            species=species.name, charge=species.charge, mass=species.mass,
            position=tuple(float(v) for v in (w @ x) / total),
            momentum_key="u", momentum_value=tuple(float(v) for v in (w @ u) / total),
            charge_state=charge_state, mass_number=mass_number,
        )
        beam = BeamSpec(count=len(w), file=values["file"], iteration=values.get("iteration"), loaded=(x, u, w))
        return beam, reference
    if "iteration" in raw:
        raise ScenarioError("beam.iteration", "only applies with beam.file.")
    if "count" not in raw:
        raise ScenarioError("beam.count", "is required (the number of particles), or give beam.file.")
    reference = _parse_particle({k_: v for k_, v in raw.items() if k_ in PARTICLE_KEYS}, "beam")
    values = _parse_inputs(raw, {k_: d for k_, d in inputs.BEAM.items() if k_ not in PARTICLE_KEYS}, "beam")
    beam = BeamSpec(**values)
    at_rest = not float(reference.u @ reference.u) > 0
    if at_rest and beam.divergence_pair != (0.0, 0.0):
        raise ScenarioError("beam.divergence", "needs a moving centroid (its direction is the beam axis).")
    if at_rest and beam.energy_spread > 0:
        raise ScenarioError("beam.energy_spread", "needs a moving centroid (gamma cannot spread below 1).")
    return beam, reference


def _particle_dict(p):
    """[particle] keys of a ParticleSpec, SI."""
    out = {"species": p.species}
    if p.species == "ion":
        out.update(charge_state=p.charge_state, mass_number=p.mass_number)
    elif p.species == "custom":
        out.update(mass=p.mass, charge=p.charge)
    out["position"] = list(p.position)
    out[p.momentum_key] = list(p.momentum_value) if isinstance(p.momentum_value, tuple) else p.momentum_value
    if p.direction is not None:
        out["direction"] = list(p.direction)
    return out


def _beam_dict(beam, reference):
    """[beam] keys, SI."""
    if beam.file is not None:
        out = {key: v for key, v in _particle_dict(reference).items() if key in ("species", "charge_state",
                                                                              "mass_number", "mass", "charge")}
        out["file"] = beam.file
        if beam.iteration is not None:
            out["iteration"] = beam.iteration
        return out
    out = _particle_dict(reference)
    out.update(count=beam.count, seed=beam.seed, energy_spread=beam.energy_spread,
               divergence=list(beam.divergence) if isinstance(beam.divergence, tuple) else beam.divergence,
               size=list(beam.size), distribution=beam.distribution)
    return out


def _has_text(raw):
    return isinstance(raw, str) or (isinstance(raw, (list, tuple)) and any(isinstance(v, str) for v in raw))


def _freeze(raw):
    return tuple(raw) if isinstance(raw, list) else raw


def _thaw(raw):
    return list(raw) if isinstance(raw, tuple) else raw


def _entered(data):
    """((key path, value), ...) of the quantities a user typed as text ("120 fs")."""
    out = []
    for section, descriptors in (("run", inputs.RUN), ("particle", inputs.PARTICLE), ("beam", inputs.BEAM)):
        table = data.get(section, {})
        for name, d in descriptors.items():
            if name in table and d.kind in inputs.QUANTITY_KINDS and _has_text(table[name]):
                out.append((f"{section}.{name}", _freeze(table[name])))
    raw_fields = data.get("field", [])
    for i, f in enumerate([raw_fields] if isinstance(raw_fields, dict) else raw_fields):
        for param in FIELD_MODELS[f["type"]].params:
            if param.name in f and param.kind != "choice" and _has_text(f[param.name]):
                out.append((f"field[{i}].{param.name}", _freeze(f[param.name])))
    return tuple(out)


def _put(data, path, value):
    """Set ``data`` at a key path such as "run.duration" or "field[2].B"."""
    section, key = path.split(".", 1)
    if section.startswith("field["):
        data["field"][int(section[6:-1])][key] = value
    else:
        data[section][key] = value


def _raw_value(param, value):
    """A parsed field value as a scenario file holds it (lists for vectors, a table for tables)."""
    if param.kind == "table":
        return dict(value)
    return list(value) if isinstance(value, tuple) else value


def _parse_field(raw, index, base_dir=None):
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
    if model.resolve is not None:
        model.resolve(dict(values), key, base_dir)
    return FieldSpec(model.name, tuple(values))
