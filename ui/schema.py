"""What the particle and run editors ask for: each input's kind, dimension and help.

Field inputs need no table here: they come from ``tracker.fields.MODELS``. Choices
(species, momentum keys, pushers, radiation-reaction models) are read from the
engine's registries when a form is built, so new entries appear without UI edits.
"""

import dataclasses
from dataclasses import dataclass

from tracker import scenario as schema
from tracker.units import SI_UNITS


@dataclass(frozen=True)
class Entry:
    """One input of the particle or run editor.

    ``kind`` is ``"scalar"``, ``"vector"`` or ``"integer"``; ``dimension`` is a key
    of ``tracker.units.SI_UNITS``.
    """

    name: str
    kind: str
    dimension: str
    label: str
    doc: str = ""

    @property
    def unit(self):
        return SI_UNITS[self.dimension]


PARTICLE_ENTRIES = {
    e.name: e
    for e in (
        Entry("position", "vector", "length", "position", "start position"),
        Entry("gamma", "scalar", "dimensionless", "γ", "Lorentz factor at the start (at least 1)"),
        Entry("kinetic_energy", "scalar", "energy", "kinetic energy", "kinetic energy at the start"),
        Entry("speed", "scalar", "velocity", "speed", "speed at the start (below c)"),
        Entry("momentum", "vector", "momentum", "momentum p", "momentum vector at the start"),
        Entry("u", "vector", "dimensionless", "u = γβ", "normalised momentum vector at the start"),
        Entry("direction", "vector", "dimensionless", "direction", "direction of motion (normalised for you)"),
        Entry("charge_state", "scalar", "dimensionless", "charge state Z", "ion charge in units of e"),
        Entry("mass_number", "scalar", "dimensionless", "mass number A", "nucleons in the ion"),
        Entry("mass", "scalar", "mass", "mass", "rest mass"),
        Entry("charge", "scalar", "charge", "charge", "signed charge"),
    )
}

#: extra particle inputs per species that needs them
SPECIES_EXTRAS = {"ion": ("charge_state", "mass_number"), "custom": ("mass", "charge")}

#: how the momentum may be given, with a short label for the selector
MOMENTUM_LABELS = {
    "gamma": "Lorentz factor γ",
    "kinetic_energy": "kinetic energy",
    "speed": "speed",
    "momentum": "momentum vector p",
    "u": "vector u = γβ",
}

RUN_ENTRIES = {
    e.name: e
    for e in (
        Entry("duration", "scalar", "time", "duration", "simulated time"),
        Entry("dt", "scalar", "time", "time step dt", "fixed time step"),
        Entry("steps_per_period", "scalar", "dimensionless", "steps per period",
              "steps per fastest initial time scale (gyration or field period)"),
        Entry("save_every", "integer", "dimensionless", "save every", "keep every n-th step"),
        Entry("max_steps", "integer", "dimensionless", "max steps", "refuse plans longer than this"),
        Entry("adaptive", "boolean", "dimensionless", "adaptive step",
              "let the step follow the local time scale as it changes"),
        Entry("dt_min", "scalar", "time", "smallest dt", "lower bound of the adaptive step"),
        Entry("dt_max", "scalar", "time", "largest dt", "upper bound of the adaptive step"),
    )
}

#: [run] inputs shown only with adaptive = true
ADAPTIVE_ONLY = ("dt_min", "dt_max")

#: how the time step may be given
STEP_MODES = {"steps_per_period": "steps per fastest period", "dt": "fixed time step dt"}

#: example quantities with units, shown as hints beside inputs
EXAMPLES = {
    "length": "5 mm",
    "time": "30 fs",
    "energy": "2 GeV",
    "velocity": "0.5 c",
    "momentum": "1 GeV/c",
    "mass": "938.272 MeV/c**2",
    "charge": "2 e",
    "magnetic_field": "1.5 T",
    "electric_field": "3 TV/m",
    "voltage": "1 V",
    "magnetic_moment": "8e22 A*m**2",
    "angle": "90 deg",
    "intensity": "2e20 W/cm**2",
    "dimensionless": "",
}


def species_names():
    """Species the Scenario accepts (read from the engine)."""
    return tuple(schema.SPECIES_NAMES)


def momentum_keys():
    """Ways to give the momentum, in the engine's order."""
    return tuple(schema.MOMENTUM_KEYS)


def scalar_momentum_keys():
    """Momentum keys that also need a direction."""
    return tuple(schema.SCALAR_MOMENTUM_KEYS)


def run_keys():
    """Every [run] key the Scenario accepts (read from the engine)."""
    return tuple(schema.RUN_KEYS)


def run_default(name):
    """Default of a [run] entry from the engine's RunSpec (None when it has none)."""
    for f in dataclasses.fields(schema.RunSpec):
        if f.name == name:
            return None if f.default is dataclasses.MISSING else f.default
    return None


def pusher_names():
    """Registered pushers (read when a form is built; others may add more)."""
    from tracker.pushers import PUSHERS

    return tuple(PUSHERS)


def pusher_reference(name):
    """Reference text of a registered pusher ('' when none is given)."""
    from tracker import pushers

    return getattr(pushers, "REFERENCES", {}).get(name, "")


def reaction_names():
    """Registered radiation-reaction models (read when a form is built)."""
    from tracker.radiation.reaction import MODELS

    return tuple(MODELS)


def hint(dimension, unit):
    """Help text for an input: numbers are SI, or type a quantity with units."""
    example = EXAMPLES.get(dimension, "")
    if not unit:
        return "a plain number"
    return f"a number in {unit}, or a value with units" + (f", e.g. '{example}'" if example else "")
