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
from .io import atomic_path

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
    """Read a BeamResult written by ``BeamResult.to_hdf5`` (path to .h5)."""
    import h5py

    from .scenario import Scenario

    with h5py.File(path, "r") as h5:
        if h5.attrs.get("format") != FORMAT:
            raise ValueError(f"{path}: not a radorbit beam result file.")
        base_dir = str(h5.attrs.get("base_dir", "")) or None
        scenario = Scenario.from_toml(str(h5.attrs["scenario_toml"]), base_dir=base_dir)
        arrays = {name: h5[name][()] for name in PARTICLE_ARRAYS if name in h5}
        stats = {key: h5["stats"][key][()] for key in h5["stats"]}
        snapshots = []
        for j in sorted(h5["snapshots"], key=int):
            g = h5["snapshots"][j]
            snapshots.append((float(g.attrs["time"]), g["x"][()], g["u"][()], g["weight"][()]))
        photons = None
        if "photons" in h5 and "min_energy" in h5["photons"].attrs:
            from .photons import PhotonTable

            photons = PhotonTable.from_group(h5["photons"])
        elif "photons" in h5:
            g = h5["photons"]
            photons = {key: g[key][()] for key in g}
            if not g.attrs.get("is_dict", True):
                photons = photons["data"]
        return BeamResult(
            t=h5["t"][()], scenario=scenario, lost=h5["lost"][()], lost_time=h5["lost_time"][()],
            weight=h5["weight"][()], stats=stats, snapshots=snapshots, meta=json.loads(h5.attrs["meta_json"]),
            warnings=json.loads(h5.attrs["warnings_json"]), photons=photons, **arrays)
