"""Particle snapshots in the openPMD standard 1.1.0 (HDF5, h5py), written and read back.

Layout written (openPMD 1.1.0, "groupBased" iterations, one iteration per snapshot)::

    /                       openPMD="1.1.0", openPMDextension=0 (uint32 bit mask: base standard only),
                            basePath="/data/%T/", particlesPath="particles/",
                            iterationEncoding="groupBased", iterationFormat="/data/%T/",
                            software, softwareVersion, date
    /data/<i>/              time (s), dt (s), timeUnitSI = 1.0
    /data/<i>/particles/<species>/
        position/x, y, z        m (unitSI 1), relative to positionOffset
        positionOffset/x, y, z  constant components: value 0.0, shape (N,)
        momentum/x, y, z        u = gamma*beta stored with unitSI = m c (so value * unitSI is the
                                momentum of one particle in kg m/s)
        weighting               real particles per macroparticle (dimensionless)
        id                      particle index 0..N-1 (uint64), the same particle in every iteration
        charge, mass            constant records (C, kg), shape (N,)

Every record has ``unitDimension`` (powers of L, M, T, I, theta, N, J) and ``timeOffset``;
every component ``unitSI``. Strings are fixed-length ASCII, as the standard asks.
Records also carry ``macroWeighted`` / ``weightingPower`` (values for one real particle;
from the standard's ED-PIC extension, harmless elsewhere) so readers know not to divide by
the weighting. No ``meshesPath``: 1.1.0 makes it optional and there are no meshes.
Reading accepts any openPMD 1.x HDF5 file with a 3-D particle species (constant components,
positionOffset, unitSI and macroWeighted are honoured).
"""

import datetime
import re

import numpy as np

from . import constants as k
from .io import atomic_path

OPENPMD_VERSION = "1.1.0"
BASE_PATH = "/data/%T/"
PARTICLES_PATH = "particles/"

#: powers of (L, M, T, I, theta, N, J) for the records written here
UNIT_DIMENSION = {
    "position": (1.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0),
    "momentum": (1.0, 1.0, -1.0, 0.0, 0.0, 0.0, 0.0),
    "charge": (0.0, 0.0, 1.0, 1.0, 0.0, 0.0, 0.0),
    "mass": (0.0, 1.0, 0.0, 0.0, 0.0, 0.0, 0.0),
    "none": (0.0,) * 7,
}
#: how each record scales with the weighting (ED-PIC convention): values are per real particle
WEIGHTING_POWER = {"position": 0.0, "positionOffset": 0.0, "momentum": 1.0, "weighting": 1.0, "id": 0.0,
                   "charge": 1.0, "mass": 1.0}


class OpenPMDError(ValueError):
    """A file that is not an openPMD particle file this reader understands."""


def _text(s):
    """Fixed-length ASCII string attribute (the standard's *(string)*)."""
    return np.bytes_(s.encode("ascii"))


def _record_attrs(group_or_ds, record, dimension):
    group_or_ds.attrs["unitDimension"] = np.array(UNIT_DIMENSION[dimension], dtype=np.float64)
    group_or_ds.attrs["timeOffset"] = np.float64(0.0)
    group_or_ds.attrs["macroWeighted"] = np.uint32(1 if record == "weighting" else 0)
    group_or_ds.attrs["weightingPower"] = np.float64(WEIGHTING_POWER[record])


def _constant(group, name, value, n, unit_si):
    sub = group.create_group(name) if name else group
    sub.attrs["value"] = np.float64(value)
    sub.attrs["shape"] = np.array([n], dtype=np.uint64)
    sub.attrs["unitSI"] = np.float64(unit_si)
    return sub


def write_particles(path, snapshots, species, charge, mass, dt=0.0, software_version=""):
    """Write snapshots as an openPMD 1.1.0 HDF5 series (one file, one iteration each); atomic.

    Parameters
    ----------
    path : str or Path
    snapshots : sequence of (time s, x (N, 3) m, u (N, 3) gamma*beta, weight (N,))
    species : str -- name of the particle group (letters, digits, underscore)
    charge, mass : float -- of one particle, C and kg
    dt : float -- time step that reached the snapshots (s), the iteration's ``dt``
    """
    import h5py

    if not re.fullmatch(r"\w+", species):
        raise ValueError(f"species name {species!r} is not an openPMD record name (letters, digits, _).")
    with atomic_path(path) as tmp:
        with h5py.File(tmp, "w") as h5:
            h5.attrs["openPMD"] = _text(OPENPMD_VERSION)
            h5.attrs["openPMDextension"] = np.uint32(0)
            h5.attrs["basePath"] = _text(BASE_PATH)
            h5.attrs["particlesPath"] = _text(PARTICLES_PATH)
            h5.attrs["iterationEncoding"] = _text("groupBased")
            h5.attrs["iterationFormat"] = _text(BASE_PATH)
            h5.attrs["software"] = _text("radorbit")
            h5.attrs["softwareVersion"] = _text(software_version or "unknown")
            h5.attrs["date"] = _text(datetime.datetime.now(datetime.timezone.utc).strftime("%Y-%m-%d %H:%M:%S %z"))
            data = h5.create_group("data")
            for index, (time, x, u, weight) in enumerate(snapshots):
                x = np.asarray(x, dtype=np.float64)
                u = np.asarray(u, dtype=np.float64)
                weight = np.asarray(weight, dtype=np.float64)
                n = len(weight)
                it = data.create_group(str(index))
                it.attrs["time"] = np.float64(time)
                it.attrs["dt"] = np.float64(dt)
                it.attrs["timeUnitSI"] = np.float64(1.0)
                group = it.create_group(PARTICLES_PATH.strip("/")).create_group(species)
                for record, values, unit_si, dimension in (("position", x, 1.0, "position"),
                                                           ("momentum", u, mass * k.c, "momentum")):
                    rec = group.create_group(record)
                    _record_attrs(rec, record, dimension)
                    for axis, name in enumerate("xyz"):
                        ds = rec.create_dataset(name, data=np.ascontiguousarray(values[:, axis]))
                        ds.attrs["unitSI"] = np.float64(unit_si)
                offset = group.create_group("positionOffset")
                _record_attrs(offset, "positionOffset", "position")
                for name in "xyz":
                    _constant(offset, name, 0.0, n, 1.0)
                ds = group.create_dataset("weighting", data=weight)
                ds.attrs["unitSI"] = np.float64(1.0)
                _record_attrs(ds, "weighting", "none")
                ds = group.create_dataset("id", data=np.arange(n, dtype=np.uint64))
                ds.attrs["unitSI"] = np.float64(1.0)
                _record_attrs(ds, "id", "none")
                for record, value in (("charge", charge), ("mass", mass)):
                    rec = _constant(group.create_group(record), "", value, n, 1.0)
                    _record_attrs(rec, record, record)
    return path


# ---------------------------------------------------------------------- reading
def _attr_text(attrs, name, default=None):
    value = attrs.get(name, default)
    if isinstance(value, bytes):
        return value.decode("ascii", "replace")
    return value if value is None else str(value)


def _component(obj, n=None):
    """SI values of one record component (data set or constant group)."""
    unit_si = float(obj.attrs.get("unitSI", 1.0))
    if "value" in obj.attrs:
        shape = tuple(int(s) for s in obj.attrs.get("shape", [n if n is not None else 1]))
        return np.full(shape, float(obj.attrs["value"])), unit_si
    return np.asarray(obj[()], dtype=np.float64), unit_si


def _vector(group, name, n=None):
    rec = group[name]
    comps = []
    for axis in "xyz":
        if axis not in rec:
            raise OpenPMDError(f"record {name!r} has no component {axis!r} (a 3-D particle list is needed).")
        comps.append(_component(rec[axis], n))
    return rec, comps


def iterations(path):
    """Sorted iteration numbers of an openPMD HDF5 file (group-based or one file of a file series)."""
    import h5py

    with h5py.File(path, "r") as h5:
        return _iterations(h5)


def _iterations(h5):
    version = _attr_text(h5.attrs, "openPMD")
    if version is None or not version.startswith("1."):
        raise OpenPMDError(f"not an openPMD 1.x file (openPMD attribute {version!r}).")
    if _attr_text(h5.attrs, "iterationEncoding", "groupBased") == "variableBased":
        raise OpenPMDError("variable-based iteration encoding is not supported; use group- or file-based.")
    base = _attr_text(h5.attrs, "basePath", BASE_PATH)
    root = base.split("%T")[0].rstrip("/") or "/"
    if root not in h5:
        raise OpenPMDError(f"the basePath group {root!r} is missing.")
    return root, sorted(int(name) for name in h5[root] if name.isdigit())


def read_particles(path, mass=None, iteration=None, species=None):
    """Read one species at one iteration of an openPMD HDF5 file.

    Parameters
    ----------
    mass : float or None -- rest mass (kg) to turn momenta into u = p/(m c); None: the
        file's ``mass`` record
    iteration : int or None -- None: the last one in the file
    species : str or None -- particle group name; None: the only one in the file

    Returns a dict: x (N, 3) m, u (N, 3) gamma*beta, weight (N,), time (s), iteration,
    species, charge (C of one particle or None), mass (kg or None, from the file).
    """
    import h5py

    with h5py.File(path, "r") as h5:
        root, found = _iterations(h5)
        if not found:
            raise OpenPMDError("the file holds no iterations.")
        if iteration is None:
            iteration = found[-1]
        elif iteration not in found:
            raise OpenPMDError(f"no iteration {iteration}; the file has {', '.join(map(str, found))}.")
        it = h5[f"{root}/{iteration}"]
        particles_path = _attr_text(h5.attrs, "particlesPath")
        if particles_path is None or particles_path.strip("/") not in it:
            raise OpenPMDError(f"iteration {iteration} holds no particles (particlesPath missing).")
        groups = it[particles_path.strip("/")]
        names = list(groups)
        if species is None or species not in names:
            if len(names) != 1:
                raise OpenPMDError(f"the file has the particle species {', '.join(names) or 'none'}; "
                                   f"expected one named {species!r}." if species else
                                   f"the file has several particle species ({', '.join(names)}).")
            species = names[0]
        group = groups[species]
        if "position" not in group:
            raise OpenPMDError(f"species {species!r} has no position record.")
        _, pos = _vector(group, "position")
        n = len(pos[0][0])
        x = np.column_stack([values * unit for values, unit in pos])
        if "positionOffset" in group:
            _, off = _vector(group, "positionOffset", n)
            x = x + np.column_stack([np.broadcast_to(values * unit, (n,)) for values, unit in off])
        weight = np.ones(n)
        if "weighting" in group:
            values, unit = _component(group["weighting"], n)
            weight = np.broadcast_to(values * unit, (n,)).astype(np.float64)
        file_charge = _scalar_record(group, "charge", n)
        file_mass = _scalar_record(group, "mass", n)
        if mass is None:
            if file_mass is None:
                raise OpenPMDError(f"species {species!r} has no mass record; give the species.")
            mass = file_mass
        if "momentum" not in group:
            raise OpenPMDError(f"species {species!r} has no momentum record.")
        rec, mom = _vector(group, "momentum", n)
        per_particle = 1.0
        if int(rec.attrs.get("macroWeighted", 0)) == 1:
            per_particle = 1.0 / weight ** float(rec.attrs.get("weightingPower", 1.0))
        mc = mass * k.c
        columns = []
        for values, unit in mom:
            factor = unit / mc
            # exact for files written here (unitSI = m c): no rounding on the way back
            columns.append(values * per_particle if factor == 1.0 else values * unit * per_particle / mc)
        u = np.column_stack(columns)
        time = float(it.attrs.get("time", 0.0)) * float(it.attrs.get("timeUnitSI", 1.0))
    return {"x": x, "u": u, "weight": weight, "time": time, "iteration": iteration, "species": species,
            "charge": file_charge, "mass": file_mass}


def _scalar_record(group, name, n):
    """Value of one particle of a scalar record (C, kg) if the record is uniform, else None."""
    if name not in group:
        return None
    values, unit = _component(group[name], n)
    values = np.asarray(values) * unit
    if int(group[name].attrs.get("macroWeighted", 0)) == 1:
        return None
    if values.size == 0 or not np.all(values == values.flat[0]):
        return None
    return float(values.flat[0])
