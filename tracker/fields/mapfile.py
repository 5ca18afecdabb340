"""Field-map files: our own HDF5 layout and a CSV table with a units line; loading and writing.

HDF5 layout (``radorbit field map``, version 1)
-----------------------------------------------
Root attributes: ``format = "radorbit field map"``, ``version = 1``,
``geometry = "cartesian"`` or ``"axisymmetric"``.

Coordinate datasets, 1-D, equally spaced and increasing, each with a ``units``
attribute (any length unit: "m", "mm", "cm", ...):

- cartesian: ``x`` (nx,), ``y`` (ny,), ``z`` (nz,)
- axisymmetric (axis along z, r >= 0): ``r`` (nr,), ``z`` (nz,)

Field datasets of shape (nx, ny, nz) or (nr, nz), index order as the coordinates,
each with a ``units`` attribute (an electric-field unit such as "V/m", "kV/cm", or a
magnetic one such as "T", "mT", "gauss"):

- cartesian: ``Ex Ey Ez Bx By Bz``; axisymmetric: ``Er Ephi Ez Br Bphi Bz``
- any subset; a missing component of a present field is zero
- optional quadrature parts of a time-harmonic map, same names + ``_imag``
  (``Ex_imag`` ...): the field is F(r, t) = F(r) cos(w t + phase) - F_imag(r) sin(w t + phase)

CSV layout
----------
Optional comment lines starting with ``#``; then one header line of column names
(the coordinate names and any of the field names above); then one line of units, one
per column (``mm, mm, mm, T, T, T``); then one row per grid node, in any order. The
rows must fill the regular grid exactly. CSV suits small maps; use HDF5 for large ones.

Loading converts everything to SI once and lays the map out as one contiguous
float64 block (``MapData.block``), the model's slice of the kernels' ``data`` array:
a header of ``HEADER_SIZE`` numbers (geometry, nodes, origin, inverse spacing, where
each group starts), then the groups E, B, E_imag, B_imag (those present), each three
components, each component in C order over the grid. Loaded
maps are cached by (path, size, modification time), so validating, previewing and
tracking the same map reads the file once.
"""

import os
import threading
from collections import OrderedDict
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..errors import ScenarioError

FORMAT_NAME = "radorbit field map"
FORMAT_VERSION = 1
GEOMETRIES = ("cartesian", "axisymmetric")
AXES = {"cartesian": ("x", "y", "z"), "axisymmetric": ("r", "z")}
COMPONENTS = {"cartesian": ("x", "y", "z"), "axisymmetric": ("r", "phi", "z")}
GROUPS = ("E", "B", "E_imag", "B_imag")
GROUP_DIMENSION = {"E": "electric_field", "B": "magnetic_field", "E_imag": "electric_field",
                   "B_imag": "magnetic_field"}
#: relative tolerance on equal grid spacing (common practice, no source: well above the
#: rounding of coordinates written with ~7 significant digits)
SPACING_TOLERANCE = 1e-5
#: maps kept loaded at once (each may be hundreds of MB)
CACHE_SIZE = 2

# block header: [geometry (0 cartesian, 1 axisymmetric), n0, n1, n2, origin0..2 (m),
#                1/spacing0..2 (1/m), start of E, B, E_imag, B_imag in the block (-1 if absent)]
H_GEOMETRY, H_N, H_ORIGIN, H_INV, H_GROUPS = 0, 1, 4, 7, 10
HEADER_SIZE = 14


@dataclass(frozen=True)
class MapData:
    """A loaded field map in SI.

    geometry : "cartesian" | "axisymmetric"
    origin, spacing : tuple of floats (m), one per grid axis (3 or 2)
    shape : tuple of ints, nodes per axis
    groups : tuple of the group names present, in block order (subset of GROUPS)
    block : 1-D float64 array (treat as read-only): header, then 3 components per group, each C order over ``shape``
    """

    geometry: str
    origin: tuple
    spacing: tuple
    shape: tuple
    groups: tuple
    block: np.ndarray

    @property
    def nodes(self):
        return int(np.prod(self.shape))

    def group_offset(self, name):
        """Start of group ``name`` in ``block`` (index), or -1 when absent."""
        if name not in self.groups:
            return -1
        return HEADER_SIZE + self.groups.index(name) * 3 * self.nodes

    def component(self, group, index):
        """One component array, shape ``shape`` (a view into ``block``)."""
        start = self.group_offset(group) + index * self.nodes
        return self.block[start:start + self.nodes].reshape(self.shape)

    @property
    def extent(self):
        """[(low, high)] in m per grid axis."""
        return [(o, o + d * (n - 1)) for o, d, n in zip(self.origin, self.spacing, self.shape)]


_cache = OrderedDict()
_cache_lock = threading.Lock()


def resolve_path(name, base_dir, key):
    """Absolute Path of a map file named in a scenario (relative to ``base_dir``); must exist."""
    path = Path(os.path.expanduser(name))
    if not path.is_absolute():
        path = Path(base_dir or ".") / path
    path = path.resolve()
    if not path.is_file():
        where = f"the scenario's directory {str(base_dir)!r}" if base_dir else "the current directory"
        raise ScenarioError(key, f"no field-map file {name!r} (looked for {str(path)!r}, relative to {where}).")
    return path


def load_map(name, base_dir=None, key="file"):
    """The MapData of a map file (cached); raises ScenarioError naming ``key`` on any problem."""
    path = resolve_path(name, base_dir, key)
    stat = path.stat()
    token = (str(path), stat.st_size, stat.st_mtime_ns)
    with _cache_lock:
        if token in _cache:
            _cache.move_to_end(token)
            return _cache[token]
    suffix = path.suffix.lower()
    try:
        if suffix in (".h5", ".hdf5", ".hdf"):
            data = _read_hdf5(path, key)
        elif suffix in (".csv", ".txt"):
            data = _read_csv(path, key)
        else:
            raise ScenarioError(key, f"unknown field-map file type {path.suffix!r}; use .h5 (HDF5) or .csv.")
    except OSError as exc:
        raise ScenarioError(key, f"cannot read field map {name!r}: {exc}.") from None
    # the block stays writeable: numba compiles a separate specialisation for read-only arrays,
    # and the one-kernel rule wants the same array type for every scenario. Nothing writes to it.
    with _cache_lock:
        _cache[token] = data
        while len(_cache) > CACHE_SIZE:
            _cache.popitem(last=False)
    return data


def _unit_factor(unit, dimension, where, key):
    """Factor from ``unit`` to SI for ``dimension``; ScenarioError when it does not fit."""
    from ..units import parse_scalar

    if not isinstance(unit, str) or not unit.strip():
        raise ScenarioError(key, f"{where}: a units attribute is required (e.g. 'm', 'T', 'V/m').")
    try:
        return parse_scalar(f"1 {unit.strip()}", dimension, key)
    except ScenarioError as exc:
        raise ScenarioError(key, f"{where}: unit {unit!r}: {exc.message}") from None


def _regular_axis(values, name, key):
    """(origin, spacing, n) of an equally spaced increasing axis (SI)."""
    values = np.asarray(values, dtype=np.float64)
    if values.ndim != 1 or values.size < 2:
        raise ScenarioError(key, f"axis {name!r} needs at least 2 nodes, not shape {values.shape}.")
    steps = np.diff(values)
    spacing = (values[-1] - values[0]) / (values.size - 1)
    if not (np.all(np.isfinite(values)) and spacing > 0):
        raise ScenarioError(key, f"axis {name!r} must be finite and increasing.")
    if np.max(np.abs(steps - spacing)) > SPACING_TOLERANCE * spacing:
        raise ScenarioError(key, f"axis {name!r} is not equally spaced (steps from {steps.min():.6g} to "
                                 f"{steps.max():.6g}); the map must be a regular grid.")
    return float(values[0]), float(spacing), int(values.size)


def _field_names(geometry):
    comps = COMPONENTS[geometry]
    names = {}
    for group in GROUPS:
        letter, _, suffix = group.partition("_")
        for index, comp in enumerate(comps):
            names[f"{letter}{comp}" + (f"_{suffix}" if suffix else "")] = (group, index)
    return names


def _new_block(geometry, origin, spacing, shape, groups):
    """Zeroed block with its header filled in (see HEADER_SIZE)."""
    nodes = int(np.prod(shape))
    block = np.zeros(HEADER_SIZE + len(groups) * 3 * nodes, dtype=np.float64)
    block[H_GEOMETRY] = GEOMETRIES.index(geometry)
    n = list(shape) + [1] * (3 - len(shape))
    block[H_N:H_N + 3] = n
    block[H_ORIGIN:H_ORIGIN + len(origin)] = origin
    block[H_INV:H_INV + len(spacing)] = [1.0 / d for d in spacing]
    for g, name in enumerate(GROUPS):
        block[H_GROUPS + g] = HEADER_SIZE + groups.index(name) * 3 * nodes if name in groups else -1.0
    return block


def _field_start(groups, group, index, nodes):
    return HEADER_SIZE + (groups.index(group) * 3 + index) * nodes


def _read_hdf5(path, key):
    import h5py

    with h5py.File(path, "r") as f:
        geometry = f.attrs.get("geometry", "cartesian")
        if isinstance(geometry, bytes):
            geometry = geometry.decode()
        if geometry not in GEOMETRIES:
            raise ScenarioError(key, f"{path.name}: geometry attribute must be one of {GEOMETRIES}, not {geometry!r}.")
        origin, spacing, shape = [], [], []
        for axis in AXES[geometry]:
            if axis not in f:
                raise ScenarioError(key, f"{path.name}: coordinate dataset {axis!r} is missing "
                                         f"({geometry} maps need {', '.join(AXES[geometry])}).")
            factor = _unit_factor(f[axis].attrs.get("units"), "length", f"{path.name}:{axis}", key)
            o, d, n = _regular_axis(f[axis][()] * factor, axis, key)
            origin.append(o)
            spacing.append(d)
            shape.append(n)
        shape = tuple(shape)
        names = _field_names(geometry)
        unknown = [n for n in f if n not in names and n not in AXES[geometry]]
        if unknown:
            raise ScenarioError(key, f"{path.name}: unknown datasets {unknown}; allowed: "
                                     f"{', '.join(AXES[geometry])}, {', '.join(names)}.")
        present = [n for n in names if n in f]
        if not present:
            raise ScenarioError(key, f"{path.name}: no field datasets (any of {', '.join(names)}).")
        groups = tuple(g for g in GROUPS if any(names[n][0] == g for n in present))
        block = _new_block(geometry, origin, spacing, shape, groups)
        nodes = int(np.prod(shape))
        for name in present:
            group, index = names[name]
            ds = f[name]
            if ds.shape != shape:
                raise ScenarioError(key, f"{path.name}: {name} has shape {ds.shape}, the grid is {shape}.")
            factor = _unit_factor(ds.attrs.get("units"), GROUP_DIMENSION[group], f"{path.name}:{name}", key)
            start = _field_start(groups, group, index, nodes)
            view = block[start:start + nodes].reshape(shape)
            ds.read_direct(view)  # straight into the block: no second copy of a large map
            if factor != 1.0:
                view *= factor
    if not np.all(np.isfinite(block)):
        raise ScenarioError(key, f"{path.name}: the field values contain NaN or Inf.")
    return MapData(geometry, tuple(origin), tuple(spacing), shape, groups, block)


def _read_csv(path, key):
    import pandas as pd

    with open(path, encoding="utf-8") as handle:
        skipped = 0
        line = handle.readline()
        while line.startswith("#"):
            skipped += 1
            line = handle.readline()
        columns = [c.strip() for c in line.strip().split(",")]
        units = [u.strip() for u in handle.readline().strip().split(",")]
    if len(units) != len(columns):
        raise ScenarioError(key, f"{path.name}: the units line has {len(units)} entries for {len(columns)} columns "
                                 f"({', '.join(columns)}); the second line must give one unit per column.")
    geometry = "axisymmetric" if "r" in columns else "cartesian"
    axes = AXES[geometry]
    names = _field_names(geometry)
    missing = [a for a in axes if a not in columns]
    if missing:
        raise ScenarioError(key, f"{path.name}: coordinate columns {missing} are missing ({geometry} maps need "
                                 f"{', '.join(axes)}).")
    unknown = [c for c in columns if c not in names and c not in axes]
    if unknown or len(set(columns)) != len(columns):
        raise ScenarioError(key, f"{path.name}: unknown or repeated columns {unknown or columns}; allowed: "
                                 f"{', '.join(axes)}, {', '.join(names)}.")
    try:
        table = pd.read_csv(path, skiprows=skipped + 2, header=None, names=columns, dtype=np.float64,
                            skipinitialspace=True).to_numpy()
    except ValueError as exc:
        raise ScenarioError(key, f"{path.name}: not a table of numbers ({exc}).") from None
    if table.shape[0] == 0:
        raise ScenarioError(key, f"{path.name}: no data rows.")
    factors = {}
    for column, unit in zip(columns, units):
        dimension = "length" if column in axes else GROUP_DIMENSION[names[column][0]]
        factors[column] = _unit_factor(unit, dimension, f"{path.name}:{column}", key)
    origin, spacing, shape, index = [], [], [], []
    for axis in axes:
        values = table[:, columns.index(axis)] * factors[axis]
        nodes = np.unique(values)
        o, d, n = _regular_axis(nodes, axis, key)
        origin.append(o)
        spacing.append(d)
        shape.append(n)
        index.append(np.rint((values - o) / d).astype(np.int64))
    shape = tuple(shape)
    flat = np.ravel_multi_index(index, shape)
    if table.shape[0] != int(np.prod(shape)) or np.unique(flat).size != flat.size:
        raise ScenarioError(key, f"{path.name}: {table.shape[0]} rows do not fill the {'x'.join(map(str, shape))} "
                                 "grid exactly once.")
    present = [c for c in columns if c in names]
    if not present:
        raise ScenarioError(key, f"{path.name}: no field columns (any of {', '.join(names)}).")
    groups = tuple(g for g in GROUPS if any(names[c][0] == g for c in present))
    block = _new_block(geometry, origin, spacing, shape, groups)
    nodes = int(np.prod(shape))
    for column in present:
        group, comp = names[column]
        start = _field_start(groups, group, comp, nodes)
        block[start + flat] = table[:, columns.index(column)] * factors[column]
    if not np.all(np.isfinite(block)):
        raise ScenarioError(key, f"{path.name}: the field values contain NaN or Inf.")
    return MapData(geometry, tuple(origin), tuple(spacing), shape, groups, block)


def write_map(path, geometry, axes, fields, attrs=None):
    """Write a field map atomically (.h5 in the layout above, or .csv).

    Parameters
    ----------
    path : str or Path
    geometry : "cartesian" | "axisymmetric"
    axes : dict name -> 1-D array in m (``x, y, z`` or ``r, z``)
    fields : dict dataset name (``Bx``, ``Er``, ``Ex_imag`` ...) -> array on the grid, SI (V/m, T)
    attrs : dict, optional extra root attributes (HDF5 only), e.g. the source scenario
    """
    from ..io import atomic_path

    path = Path(path)
    names = _field_names(geometry)
    with atomic_path(path) as tmp:
        if path.suffix.lower() == ".csv":
            grids = np.meshgrid(*[axes[a] for a in AXES[geometry]], indexing="ij")
            columns = list(AXES[geometry]) + list(fields)
            units = ["m"] * len(AXES[geometry]) + ["V/m" if names[n][0].startswith("E") else "T" for n in fields]
            table = np.column_stack([g.ravel() for g in grids] + [np.asarray(fields[n]).ravel() for n in fields])
            with open(tmp, "w", encoding="utf-8") as out:
                out.write(f"# {FORMAT_NAME}, version {FORMAT_VERSION}, geometry {geometry}\n")
                out.write(",".join(columns) + "\n" + ",".join(units) + "\n")
                np.savetxt(out, table, delimiter=",", fmt="%.17g")
        else:
            import h5py

            with h5py.File(tmp, "w") as f:
                f.attrs["format"] = FORMAT_NAME
                f.attrs["version"] = FORMAT_VERSION
                f.attrs["geometry"] = geometry
                for key, value in (attrs or {}).items():
                    f.attrs[key] = value
                for axis in AXES[geometry]:
                    f.create_dataset(axis, data=np.asarray(axes[axis], dtype=np.float64)).attrs["units"] = "m"
                for name, values in fields.items():
                    ds = f.create_dataset(name, data=np.asarray(values, dtype=np.float64))
                    ds.attrs["units"] = "V/m" if names[name][0].startswith("E") else "T"
    return path
