"""Descriptors of the [run], [particle] and [beam] inputs: one list read by the parser,
the TOML writer's unit comments and the lab's forms.

Each entry is an ``Input``: a field model's ``Param`` (name, kind, dimension, default,
choices, positive, doc) plus a label for forms and bounds. Kinds:

``scalar``      one number (SI) or a string with units
``vector``      three such values
``choice``      one of ``choices`` (text)
``integer``     a whole number, at least ``minimum``
``boolean``     true or false
``text``        a string kept as written (a file path)
``list``        any number of scalars of ``dimension`` (e.g. snapshot times)
``transverse``  one scalar, or two (one per transverse axis of a beam)

Cross-key rules (exactly one momentum key, direction with a scalar one, dt or
steps_per_period) live in ``tracker.scenario``; everything about a single value lives here.
"""

import math
from dataclasses import dataclass

from . import constants as k
from . import species as sp
from .config import DEFAULT_MAX_STEPS
from .errors import ScenarioError, brief
from .fields.base import ABSENT, REQUIRED, Param
from .pushers import PUSHERS
from .radiation.reaction import MODELS as RR_MODELS
from .units import SI_UNITS, parse_scalar, parse_vector

#: kinds whose values carry a dimension (the TOML writer adds a unit comment and keeps
#: the text a user typed with units)
QUANTITY_KINDS = ("scalar", "vector", "list", "transverse")

#: default [beam] seed: fixed, so that a file always gives the same beam
DEFAULT_BEAM_SEED = 1

SPECIES_NAMES = tuple(sp.NAMED) + ("ion", "custom")
BEAM_DISTRIBUTIONS = ("gaussian", "uniform")
SAVE_MODES = ("all", "statistics")


@dataclass(frozen=True)
class Input(Param):
    """One [run], [particle] or [beam] input (see the module docstring for ``kind``).

    ``minimum`` is an inclusive lower bound, ``below`` an exclusive upper bound (SI);
    ``unit_label`` replaces the SI unit in forms and comments where a pure number has
    a conventional name (``gamma*beta``).
    """

    label: str = ""
    minimum: float | None = None
    below: float | None = None
    below_text: str = ""
    unit_label: str = ""

    @property
    def unit(self):
        if self.unit_label:
            return self.unit_label
        return SI_UNITS[self.dimension] if self.kind in QUANTITY_KINDS else ""

    def parse(self, raw, key):
        """Validate one user value and return it in SI (float, int, bool, str or tuple)."""
        if self.kind == "choice":
            if raw not in self.choices:
                raise ScenarioError(key, f"must be one of {', '.join(map(repr, self.choices))}, not {raw!r}.")
            return raw
        if self.kind == "boolean":
            if not isinstance(raw, bool):
                raise ScenarioError(key, f"must be true or false, not {raw!r}.")
            return raw
        if self.kind == "text":
            if not isinstance(raw, str) or not raw.strip():
                raise ScenarioError(key, f"must be non-empty text, not {raw!r}.")
            return raw
        if self.kind == "integer":
            low = 0 if self.minimum is None else int(self.minimum)
            if (isinstance(raw, bool) or not isinstance(raw, (int, float))
                    or (isinstance(raw, float) and not math.isfinite(raw)) or raw != int(raw) or raw < low):
                raise ScenarioError(key, f"must be a whole number >= {low}, not {brief(raw)}.")
            if raw > MAX_COUNT:
                # a 309-digit integer overflowed the plan; the kernel's float64 plan row holds 2^53 exactly
                raise ScenarioError(key, f"must be at most 2^53 = {MAX_COUNT:.4g}, not {brief(raw)}.")
            return int(raw)
        if self.kind == "vector":
            value = parse_vector(raw, self.dimension, key)
            for i, v in enumerate(value):
                self._check_bounds(v, raw[i], f"{key}[{i}]")
            return value
        if self.kind == "list":
            if isinstance(raw, (str, dict)) or not isinstance(raw, (list, tuple)):
                raise ScenarioError(key, f"expected a list of values, not {raw!r}.")
            return tuple(self._scalar(v, f"{key}[{i}]") for i, v in enumerate(raw))
        if self.kind == "transverse":
            if isinstance(raw, (list, tuple)):
                if len(raw) != 2:
                    raise ScenarioError(key, f"expected one value or two (one per transverse axis), not {raw!r}.")
                return tuple(self._scalar(v, f"{key}[{i}]") for i, v in enumerate(raw))
            return self._scalar(raw, key)
        return self._scalar(raw, key)

    def _scalar(self, raw, key):
        value = parse_scalar(raw, self.dimension, key)
        self._check_bounds(value, raw, key)
        return value

    def _check_bounds(self, value, raw, key):
        if self.positive and not value > 0:
            raise ScenarioError(key, f"must be positive, not {raw!r}.")
        if self.minimum is not None and not value >= self.minimum:
            text = "must not be negative" if self.minimum == 0 else f"must be at least {self.minimum:g}"
            raise ScenarioError(key, f"{text}, not {raw!r}.")
        if self.below is not None and not value < self.below:
            raise ScenarioError(key, f"must be below {self.below_text or repr(self.below)}, not {raw!r}.")


#: largest whole number accepted for counts (save_every, max_steps, count, ...)
MAX_COUNT = 2**53


def by_name(inputs):
    """{name: Input} of a descriptor list."""
    return {i.name: i for i in inputs}


RUN_INPUTS = (
    Input("duration", "scalar", "time", REQUIRED, positive=True, label="duration", doc="simulated time"),
    Input("dt", "scalar", "time", ABSENT, positive=True, label="time step dt", doc="fixed time step"),
    Input("steps_per_period", "scalar", "dimensionless", ABSENT, positive=True, label="steps per period",
          doc="steps per fastest initial time scale (gyration or field period)"),
    Input("pusher", "choice", default="boris", choices=tuple(PUSHERS), label="pusher", doc="particle pusher"),
    Input("radiation_reaction", "choice", default="landau-lifshitz", choices=tuple(RR_MODELS),
          label="radiation reaction", doc="model of the damped run (the undamped run switches it off)"),
    Input("save_every", "integer", default=1, minimum=1, label="save every", doc="keep every n-th step"),
    Input("max_steps", "integer", default=DEFAULT_MAX_STEPS, minimum=1, label="max steps",
          doc="refuse plans longer than this"),
    Input("adaptive", "boolean", default=False, label="adaptive step",
          doc="let the step follow the local time scale as it changes"),
    Input("dt_min", "scalar", "time", ABSENT, positive=True, label="smallest dt",
          doc="lower bound of the adaptive step"),
    Input("dt_max", "scalar", "time", ABSENT, positive=True, label="largest dt",
          doc="upper bound of the adaptive step"),
    Input("save", "choice", default="all", choices=SAVE_MODES, label="save",
          doc="'all': every particle's saved states; 'statistics': beam statistics only "
              "(memory independent of the particle count)"),
    Input("snapshots", "list", "time", (), minimum=0.0, label="snapshots",
          doc="times of full particle dumps (positions, momenta, weights), within the duration"),
    Input("seed", "integer", ABSENT, minimum=0, label="emission seed",
          doc="random-number seed of the quantum-stochastic model (0 when absent; below 2**53)"),
    Input("photon_min_energy", "scalar", "energy", ABSENT, minimum=0.0, label="photon record threshold",
          doc="photons of the quantum-stochastic model below this energy are not recorded (0: all)"),
)

PARTICLE_INPUTS = (
    Input("species", "choice", default=REQUIRED, choices=SPECIES_NAMES, label="species",
          doc="particle kind; 'ion' needs charge_state and mass_number, 'custom' mass and charge"),
    Input("charge_state", "scalar", "dimensionless", ABSENT, label="charge state Z", doc="ion charge in units of e"),
    Input("mass_number", "scalar", "dimensionless", ABSENT, positive=True, label="mass number A",
          doc="nucleons in the ion"),
    Input("mass", "scalar", "mass", ABSENT, positive=True, label="mass", doc="rest mass"),
    Input("charge", "scalar", "charge", ABSENT, label="charge", doc="signed charge"),
    Input("position", "vector", "length", (0.0, 0.0, 0.0), label="position", doc="start position"),
    Input("gamma", "scalar", "dimensionless", ABSENT, minimum=1.0, label="γ",
          doc="Lorentz factor at the start (at least 1)"),
    Input("kinetic_energy", "scalar", "energy", ABSENT, minimum=0.0, label="kinetic energy",
          doc="kinetic energy at the start"),
    Input("speed", "scalar", "velocity", ABSENT, minimum=0.0, below=k.c, below_text="the speed of light",
          label="speed", doc="speed at the start (below c)"),
    Input("momentum", "vector", "momentum", ABSENT, label="momentum p", doc="momentum vector at the start"),
    Input("u", "vector", "dimensionless", ABSENT, label="u = γβ", unit_label="gamma*beta",
          doc="normalised momentum vector at the start"),
    Input("direction", "vector", "dimensionless", ABSENT, label="direction",
          doc="direction of motion (normalised for you)"),
)

#: [beam]: the [particle] inputs describe the centroid (reference) particle, then the spreads
BEAM_INPUTS = PARTICLE_INPUTS + (
    Input("count", "integer", default=REQUIRED, minimum=1, label="particles", doc="number of particles sampled"),
    Input("seed", "integer", default=DEFAULT_BEAM_SEED, minimum=0, label="seed",
          doc="seed of the sampling (same seed, same beam)"),
    Input("energy_spread", "scalar", "dimensionless", 0.0, minimum=0.0, label="energy spread",
          doc="relative rms spread of the Lorentz factor γ"),
    Input("divergence", "transverse", "angle", 0.0, minimum=0.0, label="divergence",
          doc="rms angle about the direction (rad): one value, or two for the axes e1, e2"),
    Input("size", "vector", "length", (0.0, 0.0, 0.0), minimum=0.0, label="rms size",
          doc="rms extent along the lab axes x, y, z"),
    Input("distribution", "choice", default="gaussian", choices=BEAM_DISTRIBUTIONS, label="distribution",
          doc="'gaussian', or 'uniform' with the same rms"),
    Input("file", "text", default=ABSENT, label="particle file",
          doc="openPMD (.h5) or CSV particle list, relative to the scenario file"),
    Input("iteration", "integer", default=ABSENT, minimum=0, label="openPMD iteration",
          doc="iteration to read from an openPMD file (default: the last one)"),
)

#: [beam] keys that describe a sampled beam (not allowed with ``file``)
BEAM_SAMPLING_KEYS = ("count", "seed", "energy_spread", "divergence", "size", "distribution", "position",
                      "gamma", "kinetic_energy", "speed", "momentum", "u", "direction")

RUN = by_name(RUN_INPUTS)
PARTICLE = by_name(PARTICLE_INPUTS)
BEAM = by_name(BEAM_INPUTS)
