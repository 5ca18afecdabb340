"""Result of a run: saved states with units, the Scenario that made them, and metadata."""

import csv
import json
from dataclasses import dataclass, field

import numpy as np

from pathlib import Path

from . import constants as k
from .io import atomic_path

#: saved arrays and their SI units (the HDF5 "unit" attribute and CSV headers use these)
ARRAYS = {
    "t": "s",
    "x": "m",
    "u": "1 (gamma*beta)",
    "gamma": "1",
    "power": "W",
    "radiated_energy": "J",
    "field_work": "J",
    "chi": "1",
    "dt": "s",
}
FORMAT = "radorbit-result"
FORMAT_VERSION = 1


@dataclass
class Result:
    """Saved states of one particle.

    Attributes
    ----------
    t : ndarray, shape (n,), s
    x : ndarray, shape (n, 3), m
    u : ndarray, shape (n, 3), gamma*beta (synchronous with x)
    gamma : ndarray, shape (n,)
    power : ndarray, shape (n,), W -- instantaneous Lienard power of the state
    radiated_energy : ndarray, shape (n,), J -- cumulative integral of ``power``
    field_work : ndarray, shape (n,), J -- cumulative work done by E
    chi : ndarray, shape (n,) -- quantum parameter
    dt : ndarray, shape (n,), s -- step in use at each saved state
    scenario : Scenario
    meta : dict -- steps, wall_time (s), stop_reason, complete, ...
    warnings : list of dict -- kind, message, time (s)
    photons : PhotonTable or None -- photons recorded by the ``quantum-stochastic`` model
        (tracker.photons); None for the continuous models
    """

    t: np.ndarray
    x: np.ndarray
    u: np.ndarray
    gamma: np.ndarray
    power: np.ndarray
    radiated_energy: np.ndarray
    field_work: np.ndarray
    chi: np.ndarray
    dt: np.ndarray
    scenario: object
    meta: dict = field(default_factory=dict)
    warnings: list = field(default_factory=list)
    photons: object = None

    # ------------------------------------------------------------------ derived
    @property
    def rest_energy(self):
        """m c^2 of the particle in J."""
        return self.scenario.particle.mass * k.c**2

    @property
    def kinetic_energy(self):
        """(gamma - 1) m c^2 in J, shape (n,)."""
        return (self.gamma - 1.0) * self.rest_energy

    @property
    def complete(self):
        """False when the run was cancelled or stopped early (partial result), or when a
        check found it wrong (a warning of a kind in ``validity.FAILING_KINDS``, e.g. an
        energy balance that fails)."""
        from .validity import FAILING_KINDS

        if not self.meta.get("complete", False):
            return False
        return not any(w.get("kind") in FAILING_KINDS for w in self.warnings)

    @property
    def status(self):
        """One word or phrase for people: 'completed', the stop reason, or why a finished
        run is not to be trusted ('failed check: energy-balance')."""
        from .validity import FAILING_KINDS

        reason = str(self.meta.get("stop_reason", ""))
        if not self.meta.get("complete", False):
            return reason or "incomplete"
        failed = sorted({w.get("kind") for w in self.warnings if w.get("kind") in FAILING_KINDS})
        return f"failed check: {', '.join(failed)}" if failed else (reason or "completed")

    def energy_balance_residual(self):
        """[Delta KE - (field work - radiated)] relative to the largest energy in the balance.

        The scale is the largest of the initial kinetic energy, |Delta KE|, |field work| and
        the radiated energy (a particle starting at rest has no kinetic energy to compare
        with). Zero for an exact integration when radiation reaction is on; for an undamped
        orbit the radiated energy is only what it *would* radiate, so the balance is
        Delta KE = field work. See ``energy_balance_error`` for the value in J.
        """
        ke = self.kinetic_energy
        scale = max(abs(ke[0]), abs(ke[-1] - ke[0]), abs(self.field_work[-1]), abs(self.radiated_energy[-1]))
        return float(self.energy_balance_error() / scale) if scale > 0 else 0.0

    def energy_balance_error(self):
        """Delta KE - (field work - radiated energy) in J at the last saved state."""
        d_ke = self.kinetic_energy[-1] - self.kinetic_energy[0]
        damped = self.scenario.run.radiation_reaction != "none"
        loss = self.radiated_energy[-1] if damped else 0.0
        return float(d_ke - (self.field_work[-1] - loss))

    def summary(self):
        """Headline numbers: energies in J, power in W, fractions dimensionless, times s.

        ``final_energy`` is the total energy gamma m c^2; ``fraction_lost`` is the energy
        radiated over the initial kinetic energy (for an undamped run: what it would radiate).
        """
        ke0 = self.kinetic_energy[0]
        steps = self.meta.get("steps", 0)
        wall = self.meta.get("wall_time", float("nan"))
        return {
            "end_time": float(self.t[-1]),
            "initial_kinetic_energy": float(ke0),
            "final_energy": float(self.gamma[-1] * self.rest_energy),
            "final_kinetic_energy": float(self.kinetic_energy[-1]),
            "energy_radiated": float(self.radiated_energy[-1]),
            "fraction_lost": float(self.radiated_energy[-1] / ke0) if ke0 > 0 else float("nan"),
            "peak_power": float(np.max(self.power)),
            "peak_chi": float(np.max(self.chi)),
            "energy_balance_residual": self.energy_balance_residual(),
            "wall_time": wall,
            "steps": steps,
            "steps_per_second": steps / wall if wall and wall > 0 else float("nan"),
        }

    # ------------------------------------------------------------------ files
    def to_hdf5(self, path):
        """Write arrays (with unit attributes), the scenario TOML and metadata; atomic."""
        import h5py

        with atomic_path(path) as tmp:
            with h5py.File(tmp, "w") as h5:
                h5.attrs["format"] = FORMAT
                h5.attrs["format_version"] = FORMAT_VERSION
                h5.attrs["scenario_toml"] = self.scenario.to_toml()
                h5.attrs["meta_json"] = json.dumps(self.meta)
                h5.attrs["warnings_json"] = json.dumps(self.warnings)
                h5.attrs["complete"] = self.complete
                for name, unit in ARRAYS.items():
                    ds = h5.create_dataset(name, data=getattr(self, name))
                    ds.attrs["unit"] = unit
                if self.photons is not None:
                    self.photons.to_group(h5.create_group("photons"))
        return path

    def to_csv(self, path):
        """One row per saved state, SI units in the header; atomic."""
        header = ["t_s", "x_m", "y_m", "z_m", "ux", "uy", "uz", "gamma", "power_W",
                  "radiated_energy_J", "field_work_J", "chi", "dt_s"]
        columns = np.column_stack([self.t, self.x, self.u, self.gamma, self.power, self.radiated_energy,
                                   self.field_work, self.chi, self.dt])
        with atomic_path(path) as tmp:
            with open(tmp, "w", newline="", encoding="utf-8") as fh:
                # json quoting keeps a multi-line or comma-laden title on the one comment line
                fh.write(f"# radorbit result: {json.dumps(self.scenario.title or 'untitled')}; "
                         f"complete={self.complete}; status={json.dumps(self.status)}\n")
                writer = csv.writer(fh)
                writer.writerow(header)
                for row in columns:
                    writer.writerow([repr(float(v)) for v in row])
        return path


#: shape of each saved array after its first axis (n saved states)
ARRAY_TRAILING_SHAPES = {"x": (3,), "u": (3,)}


def validated_arrays(arrays, source="result", names=None):
    """Check every saved array against the format: float64-convertible real numbers,
    shape (n,) or (n, 3), the same n >= 1 for all, t non-decreasing. Returns float64
    C-contiguous copies; raises ScenarioError naming the array. Nothing from a file
    reaches a compiled analysis without passing here."""
    from .errors import ScenarioError

    out = {}
    n = None
    for name in names or ARRAYS:
        if name not in arrays:
            raise ScenarioError(source, f"the array {name!r} is missing.")
        raw = np.asarray(arrays[name])
        if raw.dtype.kind not in "fiu":
            raise ScenarioError(source, f"the array {name!r} holds {raw.dtype} values, not real numbers.")
        want = ARRAY_TRAILING_SHAPES.get(name, ())
        if raw.ndim != 1 + len(want) or raw.shape[1:] != want:
            shape = "(n, 3)" if want else "(n,)"
            raise ScenarioError(source, f"the array {name!r} has shape {raw.shape}, not {shape}.")
        if n is None:
            n = raw.shape[0]
        if raw.shape[0] != n or n < 1:
            raise ScenarioError(source, f"the array {name!r} has {raw.shape[0]} saved states, not {n} like 't'"
                                        if n else "there are no saved states.")
        out[name] = np.ascontiguousarray(raw, dtype=np.float64)
    t = out["t"]
    if np.any(~np.isfinite(t)) or np.any(np.diff(t) < 0):
        raise ScenarioError(source, "the times 't' are not finite and non-decreasing.")
    return out


def load_result(path):
    """Read a Result (``Result.to_hdf5``) or a BeamResult (``BeamResult.to_hdf5``) from .h5,
    chosen by the file's ``format`` attribute.

    Every array of a Result is checked against the format (``validated_arrays``); a file of a newer
    format version, another format, or a damaged one raises ScenarioError (one line,
    naming the file).
    """
    import h5py

    from .errors import ScenarioError
    from .scenario import Scenario

    where = f"result file {str(path)!r}"
    if Path(path).suffix.lower() == ".csv":
        raise ScenarioError(where, "is a CSV table; reading a result back needs the HDF5 file "
                                   "(radorbit run -o name.h5), which keeps the scenario with the arrays.")
    try:
        h5 = h5py.File(path, "r")
    except (OSError, ValueError) as exc:
        raise ScenarioError(where, f"cannot be opened as HDF5 ({exc}).") from None
    with h5:
        file_format = h5.attrs.get("format")
    from .beam_result import FORMAT as BEAM_FORMAT

    if file_format == BEAM_FORMAT:
        from .beam_result import load_beam_result

        return load_beam_result(path)
    h5 = h5py.File(path, "r")
    with h5:
        if file_format != FORMAT:
            raise ScenarioError(where, "is not a radorbit result file.")
        version = h5.attrs.get("format_version")
        try:
            version = int(version)
        except (TypeError, ValueError):
            raise ScenarioError(where, f"has no readable format_version ({version!r}).") from None
        if version > FORMAT_VERSION:
            raise ScenarioError(where, f"has format version {version}, newer than this radorbit reads "
                                       f"({FORMAT_VERSION}); update radorbit to read it.")
        try:
            raw = {name: h5[name][()] for name in ARRAYS if name in h5 and isinstance(h5[name], h5py.Dataset)}
            toml = h5.attrs["scenario_toml"]
            meta = json.loads(h5.attrs["meta_json"])
            warnings = json.loads(h5.attrs["warnings_json"])
            photons = None
            if "photons" in h5:
                from .photons import PhotonTable

                photons = PhotonTable.from_group(h5["photons"], where, count=1)
        except ScenarioError:
            raise
        except (KeyError, OSError, ValueError, TypeError) as exc:
            raise ScenarioError(where, f"is damaged or incomplete ({exc}).") from None
    arrays = validated_arrays(raw, where)
    if isinstance(toml, bytes):
        toml = toml.decode("utf-8", errors="replace")
    scenario = Scenario.from_toml(str(toml))
    if not isinstance(meta, dict) or not isinstance(warnings, list):
        raise ScenarioError(where, "has metadata of the wrong form.")
    return Result(scenario=scenario, meta=meta, warnings=warnings, photons=photons, **arrays)
