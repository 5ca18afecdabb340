"""What the particle and run editors ask for, read from the engine's input descriptors.

The inputs themselves (name, kind, dimension, unit, bounds, default, label, doc) are
``tracker.inputs``: the same list the scenario parser and the TOML writer read, so a
new [run], [particle] or [beam] key appears in the forms with no change here. Field inputs come
from ``tracker.fields.MODELS``. This module keeps only what is about the page: which
inputs go together, short labels of choices, and example quantities for hints.
"""

from tracker import inputs
from tracker import scenario as schema
from tracker.fields.base import REQUIRED

#: particle inputs by name (``tracker.inputs.Input``: ``label``, ``kind``, ``unit``, ``parse``, ...)
PARTICLE_ENTRIES = inputs.PARTICLE

#: [run] inputs by name
RUN_ENTRIES = inputs.RUN

#: [beam] inputs by name: the particle inputs (the centroid) and the beam's own
BEAM_ENTRIES = inputs.BEAM

#: the beam's own inputs (not [particle] keys), in the engine's order
BEAM_ONLY = tuple(name for name in inputs.BEAM if name not in inputs.PARTICLE)

#: beam inputs of a beam sampled about its centroid (count, seed, spreads, ...)
BEAM_SAMPLED = tuple(name for name in BEAM_ONLY if name in inputs.BEAM_SAMPLING_KEYS)

#: beam inputs of a beam read from a particle file (file, iteration)
BEAM_FROM_FILE = tuple(name for name in BEAM_ONLY if name not in inputs.BEAM_SAMPLING_KEYS)

#: the particle card's switch: the draft's table and its label
PARTICLE_MODES = {"particle": "one particle", "beam": "a beam"}

#: how a beam's particles are made, with a label for the selector
BEAM_SOURCES = {"sampled": "sampled about a centroid", "file": "read from a particle file"}

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


def entries(section):
    """Input descriptors of the draft table ``section`` ('particle' or 'beam') by name."""
    return BEAM_ENTRIES if section == "beam" else PARTICLE_ENTRIES


def particle_file_types():
    """File name endings a [beam] particle file may have (read from the engine), for the upload box."""
    from tracker.particle_files import CSV_SUFFIXES, OPENPMD_SUFFIXES

    return ",".join(OPENPMD_SUFFIXES + CSV_SUFFIXES)


def species_names():
    """Species the Scenario accepts (read from the engine)."""
    return tuple(inputs.SPECIES_NAMES)


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
    """Default of a [run] input from its descriptor (None when it has none)."""
    entry = RUN_ENTRIES.get(name)
    if entry is None or entry.default is REQUIRED:
        return None
    return entry.default


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
