"""Photons recorded by the stochastic emission model: a table, its HDF5 form and an openPMD photon species.

One row per photon (SI units): emission time t (s), position x (m) where it left,
momentum p (kg m/s, along the emitter's momentum), energy (J, = |p| c), index of the
emitting particle, and that particle's weight (real particles per macroparticle).
Photons below ``[run] photon_min_energy`` are not recorded (their energy is still in
the emitter's ``radiated_energy``); at most ``MAX_PHOTONS`` are kept per run, and the
count and energy of the rest are reported (``dropped``, ``dropped_energy``) with a
warning of kind ``photons``.
"""

import datetime
from dataclasses import dataclass, field

import numpy as np

from .io import atomic_path

#: photons kept per run: 2e6 rows of 80 bytes = 160 MB (common practice, no source: a laptop-sized
#: share of memory next to the saved states). Photons beyond it are counted, not kept.
MAX_PHOTONS = 2_000_000
#: bytes per recorded photon (t, x(3), p(3), energy, particle index, weight)
BYTES_PER_PHOTON = 10 * 8

OPENPMD_VERSION = "1.1.0"
#: powers of (L, M, T, I, theta, N, J) of the records written to openPMD
UNIT_DIMENSION = {
    "position": (1.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0),
    "momentum": (1.0, 1.0, -1.0, 0.0, 0.0, 0.0, 0.0),
    "energy": (2.0, 1.0, -2.0, 0.0, 0.0, 0.0, 0.0),
    "emissionTime": (0.0, 0.0, 1.0, 0.0, 0.0, 0.0, 0.0),
    "charge": (0.0, 0.0, 1.0, 1.0, 0.0, 0.0, 0.0),
    "mass": (0.0, 1.0, 0.0, 0.0, 0.0, 0.0, 0.0),
    "none": (0.0,) * 7,
}
#: how each record scales with the weighting (values are for one real photon)
WEIGHTING_POWER = {"position": 0.0, "positionOffset": 0.0, "momentum": 1.0, "energy": 1.0, "emissionTime": 0.0,
                   "weighting": 1.0, "id": 0.0, "emitterId": 0.0, "charge": 1.0, "mass": 1.0}


#: columns of a photon table in a result file and their shape after the photon axis
PHOTON_COLUMNS = {"t": (), "x": (3,), "p": (3,), "energy": (), "particle": (), "weight": ()}


@dataclass
class PhotonTable:
    """Recorded photons of one run (SI units; n photons).

    Attributes
    ----------
    t : (n,) s -- emission time
    x : (n, 3) m -- emission point
    p : (n, 3) kg m/s -- momentum (energy/c along the emitter's momentum)
    energy : (n,) J
    particle : (n,) int64 -- index of the emitting particle (0 for a single particle)
    weight : (n,) -- real photons per recorded photon (the emitter's weight)
    min_energy : J -- recording threshold (``[run] photon_min_energy``)
    dropped : int -- photons above the threshold not kept for lack of room (MAX_PHOTONS)
    dropped_energy : J -- their total energy (weights not applied)
    """

    t: np.ndarray
    x: np.ndarray
    p: np.ndarray
    energy: np.ndarray
    particle: np.ndarray
    weight: np.ndarray
    min_energy: float = 0.0
    dropped: int = 0
    dropped_energy: float = 0.0
    meta: dict = field(default_factory=dict)

    @classmethod
    def empty(cls, min_energy=0.0):
        return cls(np.zeros(0), np.zeros((0, 3)), np.zeros((0, 3)), np.zeros(0), np.zeros(0, dtype=np.int64),
                   np.zeros(0), float(min_energy))

    @classmethod
    def from_rows(cls, rows, weights, min_energy=0.0, dropped=0, dropped_energy=0.0):
        """From kernel rows (n, PHOTON_FIELDS) (radiation.stochastic PH_* columns) and particle weights (N,)."""
        from .radiation.stochastic import PH_ENERGY, PH_P, PH_PARTICLE, PH_T, PH_X

        rows = np.asarray(rows, dtype=np.float64)
        particle = rows[:, PH_PARTICLE].astype(np.int64)
        return cls(t=rows[:, PH_T].copy(), x=rows[:, PH_X:PH_X + 3].copy(), p=rows[:, PH_P:PH_P + 3].copy(),
                   energy=rows[:, PH_ENERGY].copy(), particle=particle,
                   weight=np.asarray(weights, dtype=np.float64)[particle], min_energy=float(min_energy),
                   dropped=int(dropped), dropped_energy=float(dropped_energy))

    def __len__(self):
        return len(self.energy)

    @property
    def direction(self):
        """Unit vectors of the photon momenta, (n, 3)."""
        norm = np.linalg.norm(self.p, axis=1)
        return self.p / np.where(norm > 0, norm, 1.0)[:, None]

    def total_energy(self):
        """Weighted energy of the recorded photons in J (real photons)."""
        return float(np.sum(self.energy * self.weight))

    @property
    def nbytes(self):
        return len(self) * BYTES_PER_PHOTON

    # ------------------------------------------------------------------ HDF5 (inside a result file)
    def to_group(self, group):
        """Write the table into an h5py group (datasets with unit attributes)."""
        for name, values, unit in (("t", self.t, "s"), ("x", self.x, "m"), ("p", self.p, "kg m/s"),
                                   ("energy", self.energy, "J"), ("particle", self.particle, "1"),
                                   ("weight", self.weight, "1")):
            ds = group.create_dataset(name, data=values)
            ds.attrs["unit"] = unit
        group.attrs["min_energy"] = self.min_energy
        group.attrs["dropped"] = self.dropped
        group.attrs["dropped_energy"] = self.dropped_energy

    @classmethod
    def from_group(cls, group, source="photons", count=None):
        """Read a table written by ``to_group``, checked against the format: every column present,
        real numbers, one row per photon, (n, 3) for x and p, whole particle indices below
        ``count`` (the number of emitters, when known). Raises ScenarioError naming ``source``."""
        from .errors import ScenarioError

        columns = {}
        for name, trailing in PHOTON_COLUMNS.items():
            if name not in group or not hasattr(group[name], "shape"):
                raise ScenarioError(source, f"the photon table lacks its {name!r} column.")
            raw = np.asarray(group[name][()])
            if raw.dtype.kind not in "fiu":
                raise ScenarioError(source, f"the photon column {name!r} holds {raw.dtype} values, not real numbers.")
            if raw.ndim != 1 + len(trailing) or raw.shape[1:] != trailing:
                shape = "(n, 3)" if trailing else "(n,)"
                raise ScenarioError(source, f"the photon column {name!r} has shape {raw.shape}, not {shape}.")
            columns[name] = raw
        rows = {len(a) for a in columns.values()}
        if len(rows) != 1:
            raise ScenarioError(source, "the photon columns differ in length "
                                        f"({', '.join(f'{k}: {len(a)}' for k, a in columns.items())}).")
        particle = columns["particle"]
        if len(particle) and (np.any(particle != np.floor(particle)) or particle.min() < 0
                              or (count is not None and particle.max() >= count)):
            raise ScenarioError(source, "the photon column 'particle' holds indices that name no particle"
                                        + (f" (0 to {count - 1})." if count is not None else "."))
        try:
            attrs = (float(group.attrs["min_energy"]), int(group.attrs["dropped"]),
                     float(group.attrs["dropped_energy"]))
        except (KeyError, TypeError, ValueError) as exc:
            raise ScenarioError(source, f"the photon table's attributes are damaged ({exc}).") from None
        real = {name: np.ascontiguousarray(a, dtype=np.float64) for name, a in columns.items() if name != "particle"}
        return cls(particle=particle.astype(np.int64), min_energy=attrs[0], dropped=attrs[1],
                   dropped_energy=attrs[2], **real)

    # ------------------------------------------------------------------ openPMD
    def to_openpmd(self, path, time=None, species="photons", software_version=""):
        """Write the photons as one openPMD 1.1.0 particle species (HDF5, one iteration); atomic.

        Records: position (m, emission point), momentum (kg m/s per real photon), weighting,
        id (photon index), charge and mass (constant 0), and the non-standard records
        ``energy`` (J), ``emissionTime`` (s) and ``emitterId`` (index of the emitting
        particle). The iteration's ``time`` is the last emission time unless given (s).
        """
        import h5py

        n = len(self)
        time = float(self.t.max()) if time is None and n else float(time or 0.0)
        with atomic_path(path) as tmp:
            with h5py.File(tmp, "w") as h5:
                _series_attrs(h5, software_version)
                it = h5.create_group("data").create_group("0")
                it.attrs["time"] = np.float64(time)
                it.attrs["dt"] = np.float64(0.0)
                it.attrs["timeUnitSI"] = np.float64(1.0)
                group = it.create_group("particles").create_group(species)
                for record, values, dimension in (("position", self.x, "position"),
                                                  ("momentum", self.p, "momentum")):
                    rec = group.create_group(record)
                    _record_attrs(rec, record, dimension)
                    for axis, name in enumerate("xyz"):
                        ds = rec.create_dataset(name, data=np.ascontiguousarray(values[:, axis]))
                        ds.attrs["unitSI"] = np.float64(1.0)
                offset = group.create_group("positionOffset")
                _record_attrs(offset, "positionOffset", "position")
                for name in "xyz":
                    _constant(offset, name, 0.0, n, 1.0)
                for record, values, dimension, dtype in (
                        ("weighting", self.weight, "none", np.float64),
                        ("energy", self.energy, "energy", np.float64),
                        ("emissionTime", self.t, "emissionTime", np.float64),
                        ("id", np.arange(n), "none", np.uint64),
                        ("emitterId", self.particle, "none", np.uint64)):
                    ds = group.create_dataset(record, data=np.asarray(values, dtype=dtype))
                    _record_attrs(ds, record, dimension)
                    ds.attrs["unitSI"] = np.float64(1.0)
                for record in ("charge", "mass"):
                    rec = _constant(group, record, 0.0, n, 1.0)
                    _record_attrs(rec, record, record)
        return path


def _text(s):
    """Fixed-length ASCII string attribute (openPMD's string type)."""
    return np.bytes_(s.encode("ascii"))


def _series_attrs(h5, software_version):
    h5.attrs["openPMD"] = _text(OPENPMD_VERSION)
    h5.attrs["openPMDextension"] = np.uint32(0)
    h5.attrs["basePath"] = _text("/data/%T/")
    h5.attrs["particlesPath"] = _text("particles/")
    h5.attrs["iterationEncoding"] = _text("groupBased")
    h5.attrs["iterationFormat"] = _text("/data/%T/")
    h5.attrs["software"] = _text("radorbit")
    h5.attrs["softwareVersion"] = _text(software_version or "unknown")
    h5.attrs["date"] = _text(datetime.datetime.now(datetime.timezone.utc).strftime("%Y-%m-%d %H:%M:%S %z"))


def _record_attrs(obj, record, dimension):
    obj.attrs["unitDimension"] = np.array(UNIT_DIMENSION[dimension], dtype=np.float64)
    obj.attrs["timeOffset"] = np.float64(0.0)
    obj.attrs["macroWeighted"] = np.uint32(1 if record == "weighting" else 0)
    obj.attrs["weightingPower"] = np.float64(WEIGHTING_POWER[record])


def _constant(group, name, value, n, unit_si):
    sub = group.create_group(name)
    sub.attrs["value"] = np.float64(value)
    sub.attrs["shape"] = np.array([n], dtype=np.uint64)
    sub.attrs["unitSI"] = np.float64(unit_si)
    return sub
