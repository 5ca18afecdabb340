"""``radorbit spectrum RESULT.h5``: radiation spectrum of a saved result, as a table.

Called by ``tracker.cli`` (which owns the argparse definition) with:

- ``args.result``: path of a result written by ``radorbit run -o x.h5`` (a CSV result
  is refused in one line: it does not keep the scenario);
- ``args.direction``: list of "nx,ny,nz" strings, or None (then one direction
  along the mean velocity, or the velocity of the middle state when the mean
  is ~0, as for a closed orbit);
- ``args.omega_range``: "low,high,n" (log-spaced grid; numbers are rad/s,
  strings may carry units of angular frequency, frequency (Hz, times 2 pi) or
  photon energy (eV, divided by hbar)), or None for a grid chosen from the orbit;
- ``args.method``: "auto" (default: chosen by the orbit, ``tracker.radiation.choice``,
  with the reason printed), "direct", "nufft" or "synchrotron" (refused for orbits that
  are not synchrotron-like);
- ``args.output``: .csv or .h5 path, or None.

Bad input raises ScenarioError; ``tracker.cli.main`` turns it into exit status 2.
"""

import json
import math
from pathlib import Path

import numpy as np

from .. import constants as k
from ..errors import ScenarioError
from ..io import atomic_path

from .spectra import DEFAULT_POINTS, spectra

METHOD_CHOICES = ("auto",) + tuple(DEFAULT_POINTS)


def _load(path):
    from ..result import load_result

    if not Path(path).exists():
        raise ScenarioError("result", f"no such file: {str(path)!r}.")
    try:
        return load_result(path)
    except ScenarioError:
        raise
    except (OSError, ValueError, KeyError) as exc:
        raise ScenarioError("result", f"cannot read {str(path)!r} as a radorbit result ({exc}).") from None


def parse_direction(text, key="--direction"):
    """'nx,ny,nz' -> unit vector (3,); raises ScenarioError naming ``key``."""
    parts = [p.strip() for p in str(text).split(",")]
    try:
        vec = np.array([float(p) for p in parts])
    except ValueError:
        raise ScenarioError(key, f"must be three numbers 'nx,ny,nz', not {text!r}.") from None
    if vec.shape != (3,) or not np.all(np.isfinite(vec)) or not np.linalg.norm(vec) > 0:
        raise ScenarioError(key, f"must be three finite numbers, not all zero ('nx,ny,nz'), not {text!r}.")
    return vec / np.linalg.norm(vec)


def parse_angular_frequency(text, key="--omega-range"):
    """A number (rad/s) or a quantity string -> omega in rad/s.

    Angular frequency ("2e18 rad/s", "1/fs") is taken as is, frequency in hertz
    ("300 THz") is multiplied by 2 pi, photon energy ("1 keV") divided by hbar.
    """
    from ..units import MAX_QUANTITY_LENGTH

    text = str(text).strip()
    if len(text) > MAX_QUANTITY_LENGTH:
        raise ScenarioError(key, f"is too long for a quantity (at most {MAX_QUANTITY_LENGTH} characters).")
    try:
        return float(text)
    except ValueError:
        pass
    import pint

    from ..units import registry

    ureg = registry()
    try:
        q = ureg.Quantity(text)
    except Exception as exc:  # pint raises several unrelated types for bad text
        raise ScenarioError(key, f"cannot read {text!r} as a number or quantity ({exc}).") from None
    try:
        if q.check("[energy]"):
            return float(q.to("J").magnitude) / k.hbar
        if q.check("1/[time]"):
            value = float(q.to("1/s").magnitude)
            return 2.0 * math.pi * value if "hertz" in str(q.units) else value
    except pint.PintError as exc:
        raise ScenarioError(key, f"cannot convert {text!r} ({exc}).") from None
    raise ScenarioError(key, f"{text!r} is neither an angular frequency (rad/s), a frequency (Hz) nor a photon "
                             "energy (eV).")


def parse_omega_range(text):
    """'low,high,n' -> log-spaced omega grid (rad/s), shape (n,)."""
    parts = [p.strip() for p in str(text).split(",")]
    if len(parts) != 3:
        raise ScenarioError("--omega-range", f"must be 'low,high,n', not {text!r}.")
    low = parse_angular_frequency(parts[0])
    high = parse_angular_frequency(parts[1])
    try:
        n = int(parts[2])
    except ValueError:
        raise ScenarioError("--omega-range", f"n must be a whole number, not {parts[2]!r}.") from None
    if n < 2:
        raise ScenarioError("--omega-range", f"n must be at least 2, not {n}.")
    low, high = min(low, high), max(low, high)
    if not (math.isfinite(low) and math.isfinite(high) and low > 0 and high > low):
        raise ScenarioError("--omega-range", f"needs 0 < low < high, not {text!r}.")
    return np.geomspace(low, high, n)


def _default_omega(result, method, directions):
    from .spectra import default_grid

    return default_grid(result, method, directions)


def _fmt_photon(omega):
    ev = k.hbar * omega / k.e
    for unit, scale in (("GeV", 1e9), ("MeV", 1e6), ("keV", 1e3), ("eV", 1.0), ("meV", 1e-3)):
        if abs(ev) >= scale:
            return f"{ev / scale:.5g} {unit}"
    return f"{ev:.4g} eV"


def _write_csv(path, header, columns, comments):
    import csv

    with atomic_path(path) as tmp:
        with open(tmp, "w", newline="", encoding="utf-8") as fh:
            for line in comments:
                fh.write(f"# {line}\n")
            writer = csv.writer(fh)
            writer.writerow(header)
            for row in np.column_stack(columns):
                writer.writerow([repr(float(v)) for v in row])


def _write_hdf5(path, datasets, attrs):
    import h5py

    with atomic_path(path) as tmp:
        with h5py.File(tmp, "w") as h5:
            h5.attrs["format"] = "radorbit-spectrum"
            h5.attrs["format_version"] = 1
            for name, value in attrs.items():
                h5.attrs[name] = value
            for name, (data, unit) in datasets.items():
                ds = h5.create_dataset(name, data=data)
                ds.attrs["unit"] = unit


def run_spectrum(args):
    """Compute, print a summary and optionally write the table; returns the exit status 0."""
    from ..cli import output_format
    from .beam_spectrum import is_beam, orbit_radiated_energy, require_particles
    from .choice import check_synchrotron, choose_method, clip_to_ceiling, quantum_note

    method = args.method or "auto"
    if method not in METHOD_CHOICES:
        raise ScenarioError("--method", f"must be one of {', '.join(METHOD_CHOICES)}, not {method!r}.")
    if args.output:
        output_format(args.output)
    result = _load(args.result)
    beam = is_beam(result)
    if beam:
        require_particles(result)   # statistics-only beams: refused with the reason
    if args.direction and method == "synchrotron":
        raise ScenarioError("--direction", "does not apply to --method synchrotron (summed over all directions).")
    from .spectrum import default_direction

    given = np.array([parse_direction(d) for d in args.direction]) if args.direction else None
    reason = ""
    probe = result.particle(0) if beam else result   # the method choice looks at one orbit (a beam's first)
    if method == "auto":
        method, reason = choose_method(probe, given)
        if method == "synchrotron" and given is not None:
            raise ScenarioError("--direction", f"the automatic choice is the synchrotron formula, summed over all "
                                               f"directions ({reason}); leave --direction out or choose --method "
                                               "nufft.")
    elif method == "synchrotron":
        check_synchrotron(probe)
    directions = given if given is not None else default_direction(result)[None, :]
    omega = parse_omega_range(args.omega_range) if args.omega_range else _default_omega(result, method, directions)
    omega, cut = clip_to_ceiling(probe, omega)
    photon_ev = k.hbar * omega / k.e
    source = str(args.result)
    what = (f"{len(result.t):,} saved states x {result.count:,} particles; the incoherent sum of their spectra"
            if beam else f"{len(result.t):,} saved states")
    print(f"spectrum of {source} ({what}), method {method}")
    if reason:
        print(f"method chosen: {reason}")
    for note in (cut, quantum_note(probe)):
        if note:
            print(f"note: {note}")
    print(f"omega {omega[0]:.4g} .. {omega[-1]:.4g} rad/s ({_fmt_photon(omega[0])} .. {_fmt_photon(omega[-1])}), "
          f"{len(omega)} points, log-spaced")
    if not args.omega_range and method != "synchrotron":
        print("default grid: from the frequency resolution to half the highest frequency the saved states "
              "resolve; track with a smaller dt and save_every = 1 to reach higher")

    if method == "synchrotron":
        from .synchrotron import largest_critical_frequency, photon_spectrum

        dw = spectra({"result": result}, method, omega).values["result"]
        dn = photon_spectrum(result, omega)
        wc = largest_critical_frequency(result)
        total = float(np.trapezoid(dw, omega))
        print(f"largest critical photon energy {_fmt_photon(wc)}; "
              f"energy in band {total:.4g} J; radiated energy of the orbit {orbit_radiated_energy(result):.4g} J; "
              f"photons in band {float(np.trapezoid(dn, omega)):.4g}")
        header = ["omega_rad_s", "photon_energy_eV", "dW_domega_J_s", "dN_domega_s"]
        columns = [omega, photon_ev, dw, dn]
        datasets = {"omega": (omega, "rad/s"), "photon_energy": (photon_ev, "eV"),
                    "dW_domega": (dw, "J s"), "dN_domega": (dn, "s")}
        comments = ["radorbit synchrotron spectrum (summed over all directions)", f"result: {source}"]
    else:
        values = spectra({"result": result}, method, omega, directions).values["result"]
        rows = []
        for i, n in enumerate(directions):
            j = int(np.argmax(values[i]))
            rows.append(f"  n = ({n[0]:+.4f}, {n[1]:+.4f}, {n[2]:+.4f}): peak {values[i, j]:.4g} J s/sr at "
                        f"{_fmt_photon(omega[j])}; in band {float(np.trapezoid(values[i], omega)):.4g} J/sr")
        print("\n".join(rows))
        header = ["omega_rad_s", "photon_energy_eV"] + [f"d2W_domega_dOmega_J_s_sr_dir{i}" for i in
                                                        range(len(directions))]
        columns = [omega, photon_ev, *values]
        datasets = {"omega": (omega, "rad/s"), "photon_energy": (photon_ev, "eV"),
                    "directions": (directions, "1"), "d2W_domega_dOmega": (values, "J s/sr")}
        comments = ["radorbit radiation spectrum d2W/(domega dOmega)", f"result: {source}"] + [
            f"dir{i} = {float(n[0])!r}, {float(n[1])!r}, {float(n[2])!r}" for i, n in enumerate(directions)]
    if args.output:
        out = Path(args.output)
        if output_format(out) == "csv":
            _write_csv(out, header, columns, comments)
        else:
            _write_hdf5(out, datasets, {"method": method, "result": source,
                                        "directions_json": json.dumps(directions.tolist())})
        print(f"wrote {out}")
    return 0
