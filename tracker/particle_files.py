"""Particle lists for ``[beam] file``: openPMD HDF5 (``tracker.openpmd``) or CSV with units.

CSV layout: lines starting with ``#`` are comments; the first other line is the header,
one column name per field with its unit in brackets; then one particle per line::

    # my bunch
    x [um], y [um], z [mm], ux [1], uy [1], uz [1], weight [1]
    0.5, -1.2, 0.0, 0.001, 0.0, 1956.9, 1

Columns (any order): ``x``, ``y``, ``z`` (a length unit); either ``ux``, ``uy``, ``uz``
(gamma*beta, unit ``1``) or ``px``, ``py``, ``pz`` (a momentum unit, e.g. ``MeV/c``);
optional ``weight`` (real particles per line, unit ``1``; default 1).
"""

import csv
from pathlib import Path

import numpy as np

from . import constants as k
from .errors import ScenarioError
from .units import parse_scalar

OPENPMD_SUFFIXES = (".h5", ".hdf5", ".he5")
CSV_SUFFIXES = (".csv", ".txt")


def resolve(name, base_dir):
    """Path of a file named in a scenario: absolute as is, else relative to ``base_dir`` (or the cwd)."""
    path = Path(name).expanduser()
    if path.is_absolute() or base_dir is None:
        return path
    return Path(base_dir) / path


def read_particle_file(path, species, iteration, key):
    """(x (N, 3) m, u (N, 3) gamma*beta, weight (N,)) from a file; errors name ``key``.

    ``species`` (tracker.species.Species) gives the mass that turns momenta into u and
    is checked against the file's charge and mass records (openPMD).
    """
    path = Path(path)
    if not path.is_file():
        raise ScenarioError(key, f"cannot read the particle file {str(path)!r} (no such file).")
    suffix = path.suffix.lower()
    if suffix in OPENPMD_SUFFIXES:
        x, u, w = _read_openpmd(path, species, iteration, key)
    elif suffix in CSV_SUFFIXES:
        if iteration is not None:
            raise ScenarioError(key, "a CSV particle list has no iterations; leave beam.iteration out.")
        x, u, w = _read_csv(path, species, key)
    else:
        raise ScenarioError(key, f"unknown particle file type {suffix!r}; use openPMD "
                                 f"({', '.join(OPENPMD_SUFFIXES)}) or CSV ({', '.join(CSV_SUFFIXES)}).")
    if len(w) == 0:
        raise ScenarioError(key, f"the particle file {path.name!r} holds no particles.")
    for name, a in (("positions", x), ("momenta", u), ("weights", w)):
        bad = ~np.isfinite(a).reshape(len(a), -1).all(axis=1)
        if bad.any():
            raise ScenarioError(key, f"{path.name}: {name} of particle {int(np.argmax(bad))} are not finite.")
    if not np.all(w > 0):
        raise ScenarioError(key, f"{path.name}: weights must be positive (particle {int(np.argmax(~(w > 0)))}).")
    return x, u, w


def _read_openpmd(path, species, iteration, key):
    from .openpmd import OpenPMDError, read_particles

    try:
        data = read_particles(path, mass=species.mass, iteration=iteration, species=species.name)
    except OpenPMDError as exc:
        raise ScenarioError(key, f"{path.name}: {exc}") from None
    except OSError as exc:
        raise ScenarioError(key, f"{path.name}: not a readable HDF5 file ({exc}).") from None
    for name, expected in (("charge", species.charge), ("mass", species.mass)):
        found = data[name]
        if found is not None and abs(found - expected) > 1e-6 * abs(expected):
            raise ScenarioError(key, f"{path.name}: the file's particle {name} {found:.6g} does not match "
                                     f"species {species.name!r} ({expected:.6g}).")
    return data["x"], data["u"], data["weight"]


def _read_csv(path, species, key):
    with open(path, newline="", encoding="utf-8") as fh:
        rows = [row for row in csv.reader(line for line in fh if line.strip() and not line.lstrip().startswith("#"))]
    if not rows:
        raise ScenarioError(key, f"{path.name}: no header line (e.g. 'x [m], y [m], z [m], ux [1], uy [1], uz [1]').")
    columns = {}
    for index, cell in enumerate(rows[0]):
        name, _, unit = cell.strip().partition("[")
        name = name.strip()
        if not unit.endswith("]"):
            raise ScenarioError(key, f"{path.name}: header {cell.strip()!r} needs its unit in brackets, e.g. 'x [m]'.")
        columns[name] = (index, unit[:-1].strip() or "1")
    momentum = ("ux", "uy", "uz") if "ux" in columns else ("px", "py", "pz")
    needed = ("x", "y", "z") + momentum
    missing = [c for c in needed if c not in columns]
    if missing:
        raise ScenarioError(key, f"{path.name}: the header lacks {', '.join(missing)} "
                                 "(needs x, y, z and ux, uy, uz or px, py, pz).")
    try:
        table = np.array([[float(v) for v in row] for row in rows[1:]], dtype=np.float64).reshape(-1, len(rows[0]))
    except ValueError as exc:
        raise ScenarioError(key, f"{path.name}: every row needs {len(rows[0])} numbers ({exc}).") from None

    def column(name, dimension):
        index, unit = columns[name]
        scale = parse_scalar(f"1 {unit}", dimension, f"{key} column {name}")
        return table[:, index] * scale if scale != 1.0 else table[:, index].copy()

    x = np.column_stack([column(c, "length") for c in ("x", "y", "z")])
    if momentum[0] == "ux":
        u = np.column_stack([column(c, "dimensionless") for c in momentum])
    else:
        u = np.column_stack([column(c, "momentum") for c in momentum]) / (species.mass * k.c)
    w = column("weight", "dimensionless") if "weight" in columns else np.ones(len(table))
    return x, u, w
