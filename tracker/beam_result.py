"""Result of a beam run: per-particle saved states (or statistics only), losses, snapshots.

Statistics definitions (``beam_statistics``; the engine's in-kernel statistics for
``save = "statistics"`` use the same keys and definitions). At each saved time t_k the
*alive* particles are those with ``lost == 0`` or ``t_k < lost_time`` and finite state;
moments are weighted by the particle weights w_i and centred (two passes: means first,
then moments of the deviations, which keeps the subtraction in emittance well conditioned):

- ``mean_gamma``        <gamma>
- ``rms_gamma_spread``  sqrt(<(gamma - <gamma>)^2>) / <gamma>
- ``emittance_x``       normalised rms emittance sqrt(<dx^2><dux^2> - <dx dux>^2) in m rad,
                        dx = x - <x>, dux = ux - <ux>, ux = gamma beta_x (lab frame, moments
                        taken at equal time); ``emittance_y`` likewise with y, uy.
                        Source: M. Reiser, "Theory and Design of Charged Particle Beams"
                        (Wiley, 2nd ed. 2008), ch. 3 on rms emittance and its normalised form
                        (chapter from memory); K. Floettmann, "Some basic features of the beam
                        emittance", Phys. Rev. ST Accel. Beams 6, 034202 (2003), normalised rms
                        emittance from the momenta p_x/(m c) (from memory).
- ``radiated_energy``   sum_i w_i W_i of every particle (lost ones keep what they radiated), J
- ``mean_chi``          <chi>; ``max_chi`` the largest chi of an alive particle
- ``lost``              number of particles lost by t_k (counted, not weighted; excluded from moments)
"""

import dataclasses
import json
from dataclasses import dataclass, field

import numpy as np

from . import constants as k
from .errors import ScenarioError
from .io import atomic_path
from .photons import PhotonTable

#: per-particle saved arrays (n_saved, N[, 3]) and their SI units
PARTICLE_ARRAYS = {
    "x": "m",
    "u": "1 (gamma*beta)",
    "gamma": "1",
    "power": "W",
    "radiated_energy": "J",
    "field_work": "J",
    "chi": "1",
    "dt": "s",
}
#: beam statistics per saved time and their units
STAT_KEYS = {
    "t": "s",
    "mean_gamma": "1",
    "rms_gamma_spread": "1",
    "emittance_x": "m rad",
    "emittance_y": "m rad",
    "radiated_energy": "J",
    "mean_chi": "1",
    "max_chi": "1",
    "lost": "1 (particles)",
}
FORMAT = "radorbit-beam-result"
FORMAT_VERSION = 1


def alive_mask(t, lost, lost_time):
    """(n_saved, N) bool: particle i is alive at t_k when lost_i == 0 or t_k < lost_time_i."""
    t = np.asarray(t, dtype=float)[:, None]
    return (np.asarray(lost)[None, :] == 0) | (t < np.asarray(lost_time, dtype=float)[None, :])


def _forward_filled(values):
    """(n, N) array whose non-finite entries take the last finite value above them (0 before any)."""
    finite = np.isfinite(values)
    index = np.where(finite, np.arange(len(values))[:, None], 0)
    np.maximum.accumulate(index, axis=0, out=index)
    filled = np.take_along_axis(values, index, axis=0)
    seen = np.maximum.accumulate(finite, axis=0)
    return np.where(seen, filled, 0.0)


def beam_statistics(t, x, u, gamma, radiated_energy, chi, weight, lost, lost_time):
    """Beam statistics per saved time (definitions in the module docstring).

    t (n,) s; x, u (n, N, 3) in m and gamma*beta; gamma, radiated_energy (J), chi (n, N);
    weight (N,); lost (N,) stop codes (0 = alive); lost_time (N,) s. Returns a dict of
    (n,) arrays with the keys of ``STAT_KEYS``.
    """
    t = np.asarray(t, dtype=float)
    alive = alive_mask(t, lost, lost_time)
    alive &= np.isfinite(gamma) & np.isfinite(chi) & np.all(np.isfinite(x), axis=2) & np.all(np.isfinite(u), axis=2)
    w = np.where(alive, np.asarray(weight, dtype=float)[None, :], 0.0)
    total = w.sum(axis=1)
    with np.errstate(invalid="ignore", divide="ignore"):
        def mean(values):
            return np.sum(w * np.where(alive, values, 0.0), axis=1) / total

        def centred(values):
            return np.where(alive, values - mean(values)[:, None], 0.0)

        g_mean = mean(gamma)
        dg = centred(gamma)
        spread = np.sqrt(np.sum(w * dg * dg, axis=1) / total) / g_mean
        emittance = []
        for axis in (0, 1):
            dx, du = centred(x[:, :, axis]), centred(u[:, :, axis])
            xx = np.sum(w * dx * dx, axis=1) / total
            uu = np.sum(w * du * du, axis=1) / total
            xu = np.sum(w * dx * du, axis=1) / total
            emittance.append(np.sqrt(np.maximum(xx * uu - xu * xu, 0.0)))
        max_chi = np.max(np.where(alive, chi, -np.inf), axis=1)
    return {
        "t": t.copy(),
        "mean_gamma": g_mean,
        "rms_gamma_spread": spread,
        "emittance_x": emittance[0],
        "emittance_y": emittance[1],
        "radiated_energy": _forward_filled(np.asarray(radiated_energy, dtype=float)) @ np.asarray(weight, float),
        "mean_chi": mean(chi),
        "max_chi": np.where(np.isfinite(max_chi), max_chi, np.nan),
        "lost": (~alive_mask(t, lost, lost_time)).sum(axis=1).astype(np.int64),
    }


@dataclass
class BeamResult:
    """Saved states of a beam of N particles.

    Attributes
    ----------
    t : ndarray (n_saved,), s
    x, u : ndarray (n_saved, N, 3), m and gamma*beta -- None when run.save = "statistics"
    gamma, power (W), radiated_energy (J), field_work (J), chi, dt (s) : ndarray (n_saved, N) or None
    lost : ndarray (N,) int8 -- stop code of each particle, 0 = alive to the end
    lost_time : ndarray (N,), s -- when it was lost (NaN or inf if never)
    weight : ndarray (N,) -- real particles per tracked particle
    stats : dict of (n_saved,) arrays (keys of ``STAT_KEYS``) computed by the engine
    snapshots : list of (time s, x (N, 3) m, u (N, 3), weight (N,)) -- the run.snapshots dumps
    scenario, meta, warnings, photons : as for ``Result`` (photons: a ``tracker.photons.PhotonTable``
        for the quantum-stochastic model, None otherwise)
    """

    t: np.ndarray
    scenario: object
    x: np.ndarray | None = None
    u: np.ndarray | None = None
    gamma: np.ndarray | None = None
    power: np.ndarray | None = None
    radiated_energy: np.ndarray | None = None
    field_work: np.ndarray | None = None
    chi: np.ndarray | None = None
    dt: np.ndarray | None = None
    lost: np.ndarray | None = None
    lost_time: np.ndarray | None = None
    weight: np.ndarray | None = None
    stats: dict = field(default_factory=dict)
    snapshots: list = field(default_factory=list)
    meta: dict = field(default_factory=dict)
    warnings: list = field(default_factory=list)
    photons: object = None

    def __post_init__(self):
        n = self.scenario.particle_count
        if self.lost is None:
            self.lost = np.zeros(n, dtype=np.int8)
        if self.lost_time is None:
            self.lost_time = np.full(n, np.inf)
        if self.weight is None:
            self.weight = np.array(self.scenario.initial_particles()[2])

    # ------------------------------------------------------------------ shape
    @property
    def count(self):
        """Number of particles N."""
        return len(self.lost)

    @property
    def has_particles(self):
        """True when the per-particle arrays were saved (run.save = "all")."""
        return self.x is not None

    @property
    def complete(self):
        """False when the run was cancelled or stopped early (partial result)."""
        return bool(self.meta.get("complete", False))

    @property
    def rest_energy(self):
        """m c^2 of one particle in J."""
        return self.scenario.species_mass * k.c**2

    # ------------------------------------------------------------------ analyses
    def statistics(self):
        """Beam statistics per saved time: a dict of (n_saved,) arrays (see ``STAT_KEYS``).

        Computed here with numpy when the particle arrays were saved, else the engine's.
        """
        if not self.has_particles:
            return {key: np.array(value) for key, value in self.stats.items()}
        return beam_statistics(self.t, self.x, self.u, self.gamma, self.radiated_energy, self.chi,
                               self.weight, self.lost, self.lost_time)

    def particle(self, i):
        """The ``Result`` of particle i (its saved states up to its loss, a one-particle scenario)."""
        from .result import Result

        if not self.has_particles:
            raise ValueError("this run saved statistics only (run.save = 'statistics'); track with save = 'all'.")
        i = int(i)
        if not 0 <= i < self.count:
            raise IndexError(f"particle {i} out of range (N = {self.count}).")
        keep = (self.t <= self.lost_time[i]) | (self.lost[i] == 0)
        keep &= np.all(np.isfinite(self.x[:, i]), axis=1) & np.all(np.isfinite(self.u[:, i]), axis=1)
        arrays = {name: getattr(self, name)[keep, i] for name in PARTICLE_ARRAYS}
        meta = dict(self.meta, particle=i, lost=int(self.lost[i]), lost_time=float(self.lost_time[i]))
        warnings = [w for w in self.warnings if w.get("particle", i) == i]
        return Result(t=self.t[keep], scenario=self.particle_scenario(i), meta=meta, warnings=warnings, **arrays)

    def particle_scenario(self, i):
        """The one-particle Scenario that starts as particle i of this beam."""
        scenario = self.scenario
        x0, u0, _ = scenario.initial_particles()
        particle = dataclasses.replace(scenario.particle, position=tuple(float(v) for v in x0[i]),
                                       momentum_key="u", momentum_value=tuple(float(v) for v in u0[i]),
                                       direction=None)
        entered = tuple(e for e in scenario.entered if not e[0].startswith("beam."))
        return dataclasses.replace(scenario, particle=particle, beam=None, entered=entered)

    def warning_counts(self):
        """{warning kind: number of particles that raised it}.

        Beam warnings (``tracker.beam_validity``) carry their count in ``"particles"``
        (None when a statistics-only run cannot tell); other warnings count their
        distinct ``"particle"`` indices (one without an index counts once).
        """
        counted, seen = {}, {}
        for w in self.warnings:
            kind = w["kind"]
            if "particles" in w:
                n = w["particles"]
                counted[kind] = None if n is None or counted.get(kind, 0) is None else counted.get(kind, 0) + int(n)
            else:
                seen.setdefault(kind, set()).add(w.get("particle", -1))
        out = {kind: len(who) for kind, who in seen.items()}
        for kind, n in counted.items():
            out[kind] = None if n is None else n + out.get(kind, 0)
        return out

    def summary(self):
        """Headline numbers over the beam: energies in J, emittances in m rad, wall time s."""
        stats = self.statistics()
        x0, u0, w = self.scenario.initial_particles()
        ke0 = float(np.sum(w * (np.sqrt(1.0 + np.sum(u0 * u0, axis=1)) - 1.0))) * self.rest_energy
        radiated = float(stats["radiated_energy"][-1]) if len(stats.get("t", ())) else float("nan")
        steps = self.meta.get("steps", 0)
        wall = self.meta.get("wall_time", float("nan"))

        def first_last(key):
            values = stats.get(key, ())
            return (float(values[0]), float(values[-1])) if len(values) else (float("nan"), float("nan"))

        return {
            "particles": self.count,
            "lost": int(np.count_nonzero(self.lost)),
            "mean_gamma": first_last("mean_gamma"),
            "rms_gamma_spread": first_last("rms_gamma_spread"),
            "emittance_x": first_last("emittance_x"),
            "emittance_y": first_last("emittance_y"),
            "energy_radiated": radiated,
            "fraction_lost": radiated / ke0 if ke0 > 0 else float("nan"),
            "peak_chi": float(np.nanmax(stats["max_chi"])) if len(stats.get("max_chi", ())) else float("nan"),
            "warnings": self.warning_counts(),
            "wall_time": wall,
            "particle_steps": steps,
            "lost_by_reason": dict(self.meta.get("lost", {})),
            # meta["steps"] of a beam run is already summed over its particles (engine._meta)
            "particle_steps_per_second": steps / wall if wall and wall > 0 else float("nan"),
        }

    # ------------------------------------------------------------------ files
    def to_hdf5(self, path):
        """Write arrays (unit attributes), statistics, snapshots, scenario TOML and metadata; atomic."""
        import h5py

        with atomic_path(path) as tmp:
            with h5py.File(tmp, "w") as h5:
                h5.attrs["format"] = FORMAT
                h5.attrs["format_version"] = FORMAT_VERSION
                h5.attrs["scenario_toml"] = self.scenario.to_toml()
                h5.attrs["base_dir"] = self.scenario.base_dir or ""
                h5.attrs["meta_json"] = json.dumps(self.meta)
                h5.attrs["warnings_json"] = json.dumps(self.warnings)
                h5.attrs["complete"] = self.complete
                h5.create_dataset("t", data=self.t).attrs["unit"] = "s"
                for name, unit in PARTICLE_ARRAYS.items():
                    if getattr(self, name) is not None:
                        h5.create_dataset(name, data=getattr(self, name)).attrs["unit"] = unit
                h5.create_dataset("lost", data=np.asarray(self.lost, dtype=np.int8)).attrs["unit"] = "stop code"
                h5.create_dataset("lost_time", data=self.lost_time).attrs["unit"] = "s"
                h5.create_dataset("weight", data=self.weight).attrs["unit"] = "1"
                stats = h5.create_group("stats")
                for key, values in self.stats.items():
                    stats.create_dataset(key, data=np.asarray(values)).attrs["unit"] = STAT_KEYS.get(key, "")
                snaps = h5.create_group("snapshots")
                for j, (time, x, u, weight) in enumerate(self.snapshots):
                    g = snaps.create_group(str(j))
                    g.attrs["time"] = float(time)
                    g.create_dataset("x", data=x).attrs["unit"] = "m"
                    g.create_dataset("u", data=u).attrs["unit"] = PARTICLE_ARRAYS["u"]
                    g.create_dataset("weight", data=weight).attrs["unit"] = "1"
                if hasattr(self.photons, "to_group"):      # tracker.photons.PhotonTable
                    self.photons.to_group(h5.create_group("photons"))
                elif self.photons is not None:
                    photons = self.photons if isinstance(self.photons, dict) else {"data": self.photons}
                    g = h5.create_group("photons")
                    g.attrs["is_dict"] = isinstance(self.photons, dict)
                    for key, values in photons.items():
                        g.create_dataset(key, data=np.asarray(values))
        return path

    def to_csv(self, path):
        """Write the statistics per saved time as CSV (units in the header, ``#`` comments); atomic.

        The per-particle arrays do not fit a table: use ``to_hdf5`` for them.
        """
        import csv

        stats = self.statistics()
        keys = [key for key in STAT_KEYS if key in stats]
        with atomic_path(path) as tmp:
            with open(tmp, "w", newline="", encoding="utf-8") as fh:
                fh.write(f"# radorbit beam statistics: {self.count} particles; {self.scenario.title or ''}\n")
                fh.write(f"# stop reason: {self.meta.get('stop_reason', '')}\n")
                writer = csv.writer(fh)
                writer.writerow([f"{key} [{STAT_KEYS[key]}]" for key in keys])
                for row in zip(*(np.asarray(stats[key]) for key in keys)):
                    writer.writerow([repr(float(v)) for v in row])
        return path

    def snapshots_to_openpmd(self, path):
        """Write the snapshots as an openPMD 1.1.0 HDF5 series (``tracker.openpmd``); atomic."""
        from . import __version__
        from .openpmd import write_particles

        dt = float(self.meta.get("dt", 0.0) or 0.0)
        return write_particles(path, self.snapshots, self.scenario.particle.species, self.scenario.species_charge,
                               self.scenario.species_mass, dt=dt, software_version=__version__)


def load_beam_result(path):
    """Read a BeamResult written by ``BeamResult.to_hdf5`` (path to .h5).

    Every array is checked against the format before it is used (``validated_beam_arrays``:
    dtypes, shapes consistent with ``t``, the particle count and the scenario's ``run.save``,
    snapshots, the photon table); a truncated, damaged or foreign file, or one of a newer
    format version, raises ScenarioError (one line, naming the file).
    """
    import h5py

    from .scenario import Scenario

    where = f"result file {str(path)!r}"
    try:
        h5 = h5py.File(path, "r")
    except (OSError, ValueError) as exc:
        raise ScenarioError(where, f"cannot be opened as HDF5 ({exc}).") from None
    with h5:
        if h5.attrs.get("format") != FORMAT:
            raise ScenarioError(where, "is not a radorbit beam result file.")
        version = h5.attrs.get("format_version")
        try:
            version = int(version)
        except (TypeError, ValueError):
            raise ScenarioError(where, f"has no readable format_version ({version!r}).") from None
        if version > FORMAT_VERSION:
            raise ScenarioError(where, f"has format version {version}, newer than this radorbit reads "
                                       f"({FORMAT_VERSION}); update radorbit to read it.")
        try:
            raw = _read_raw(h5, where)
        except ScenarioError:
            raise
        except (KeyError, OSError, ValueError, TypeError, AttributeError) as exc:
            raise ScenarioError(where, f"is damaged or incomplete ({exc}).") from None
    try:
        scenario = Scenario.from_toml(raw.pop("scenario_toml"), base_dir=raw.pop("base_dir"))
    except ScenarioError as exc:
        raise ScenarioError(where, f"holds a scenario that does not validate here ({exc}).") from None
    if not isinstance(raw["meta"], dict) or not isinstance(raw["warnings"], list):
        raise ScenarioError(where, "has metadata of the wrong form.")
    arrays = validated_beam_arrays(raw, scenario, where)
    photons = raw["photons"]
    if photons is not None and not isinstance(photons, PhotonTable):
        photons = _validated_photon_dict(photons, where)
    return BeamResult(scenario=scenario, meta=raw["meta"], warnings=raw["warnings"], photons=photons, **arrays)


def _text_attr(value):
    return value.decode("utf-8", errors="replace") if isinstance(value, bytes) else str(value)


def _read_raw(h5, where):
    """Everything of a beam result file as plain values (no checks beyond what reading needs)."""
    import h5py

    def dataset(node, name):
        item = node[name]
        if not isinstance(item, h5py.Dataset):
            raise ScenarioError(where, f"{name!r} is a {type(item).__name__}, not a dataset.")
        return item[()]

    raw = {"scenario_toml": _text_attr(h5.attrs["scenario_toml"]),
           "base_dir": _text_attr(h5.attrs.get("base_dir", "")) or None,
           "meta": json.loads(h5.attrs["meta_json"]), "warnings": json.loads(h5.attrs["warnings_json"])}
    for name in ("t", "lost", "lost_time", "weight"):
        if name not in h5:
            raise ScenarioError(where, f"the array {name!r} is missing.")
        raw[name] = dataset(h5, name)
    raw["particle_arrays"] = {name: dataset(h5, name) for name in PARTICLE_ARRAYS if name in h5}
    stats = h5.get("stats")
    raw["stats"] = {} if stats is None else {key: dataset(stats, key) for key in stats}
    raw["snapshots"] = []
    snaps = h5.get("snapshots")
    for j in sorted(snaps or (), key=lambda name: int(name) if str(name).isdigit() else -1):
        g = snaps[j]
        raw["snapshots"].append((g.attrs["time"], dataset(g, "x"), dataset(g, "u"), dataset(g, "weight")))
    raw["photons"] = None
    if "photons" in h5:
        group = h5["photons"]
        if "min_energy" in group.attrs:
            raw["photons"] = PhotonTable.from_group(group, where, count=len(raw["lost"]))
        else:   # a hand-built result's photons (a dict of arrays, or one array)
            values = {key: dataset(group, key) for key in group}
            raw["photons"] = values if group.attrs.get("is_dict", True) else values.get("data")
    return raw


def _real(raw, name, where, shape):
    """``raw`` as float64 after checking it holds real numbers of ``shape`` (None: any length)."""
    a = np.asarray(raw)
    if a.dtype.kind not in "fiu":
        raise ScenarioError(where, f"the array {name!r} holds {a.dtype} values, not real numbers.")
    if a.ndim != len(shape) or any(want is not None and got != want for got, want in zip(a.shape, shape)):
        text = "(" + ", ".join("n" if w is None else str(w) for w in shape) + ("," if len(shape) == 1 else "") + ")"
        raise ScenarioError(where, f"the array {name!r} has shape {a.shape}, not {text}.")
    return np.ascontiguousarray(a, dtype=np.float64)


def validated_beam_arrays(raw, scenario, where="beam result"):
    """Check a beam result's arrays against the format and its scenario; return the keyword
    arrays of ``BeamResult`` (float64; ``lost`` int8). Raises ScenarioError naming ``where``.

    ``t`` (n,) non-decreasing; ``lost``, ``lost_time``, ``weight`` (N,) with N the scenario's
    particle count; with ``run.save = "all"`` every per-particle array (n, N) or (n, N, 3),
    with ``"statistics"`` none; statistics (n,); snapshots x, u (N, 3), weight (N,) at a
    finite time.
    """
    t = _real(raw["t"], "t", where, (None,))
    if np.any(~np.isfinite(t)) or np.any(np.diff(t) < 0):
        raise ScenarioError(where, "the times 't' are not finite and non-decreasing.")
    n, count = len(t), scenario.particle_count
    lost = np.asarray(raw["lost"])
    if lost.dtype.kind not in "iu":
        raise ScenarioError(where, f"the array 'lost' holds {lost.dtype} values, not whole-number stop codes.")
    if lost.shape != (count,):
        raise ScenarioError(where, f"the array 'lost' has shape {lost.shape}, not ({count},) for the scenario's "
                                   f"{count:,} particles.")
    if np.any(lost < 0) or np.any(lost > np.iinfo(np.int8).max):
        raise ScenarioError(where, "the array 'lost' holds stop codes outside 0..127.")
    out = {"t": t, "lost": lost.astype(np.int8)}
    for name in ("lost_time", "weight"):
        out[name] = _real(raw[name], name, where, (count,))
    arrays = raw["particle_arrays"]
    if scenario.run.save == "all":
        for name in PARTICLE_ARRAYS:
            if name not in arrays:
                raise ScenarioError(where, f"the array {name!r} is missing (the scenario saves every particle).")
            out[name] = _real(arrays[name], name, where, (n, count, 3) if name in ("x", "u") else (n, count))
    elif arrays:
        raise ScenarioError(where, f"holds per-particle arrays ({', '.join(arrays)}) although its scenario saves "
                                   "statistics only.")
    out["stats"] = {}
    for key, values in raw["stats"].items():
        if key not in STAT_KEYS:
            raise ScenarioError(where, f"the statistic {key!r} is not one of {', '.join(STAT_KEYS)}.")
        out["stats"][key] = _real(values, f"stats/{key}", where, (n,))
    out["snapshots"] = []
    for j, (time, x, u, weight) in enumerate(raw["snapshots"]):
        try:
            time = float(time)
        except (TypeError, ValueError):
            time = float("nan")
        if not np.isfinite(time):
            raise ScenarioError(where, f"snapshot {j} has no finite time.")
        out["snapshots"].append((time, _real(x, f"snapshots/{j}/x", where, (count, 3)),
                                 _real(u, f"snapshots/{j}/u", where, (count, 3)),
                                 _real(weight, f"snapshots/{j}/weight", where, (count,))))
    return out


def _validated_photon_dict(photons, where):
    """A hand-built result's photons (a dict of arrays, or one array): real numbers only, kept as stored."""
    values = photons if isinstance(photons, dict) else {"data": photons}
    for key, v in values.items():
        if np.asarray(v).dtype.kind not in "fiu":
            raise ScenarioError(where, f"the array 'photons/{key}' holds {np.asarray(v).dtype} values, not real numbers.")
    return photons
