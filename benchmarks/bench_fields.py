"""Cost of the lab-bench field types: a 200^3 field map and formula fields, against built-in fields.

Run: ``OMP_WAIT_POLICY=PASSIVE python benchmarks/bench_fields.py [--nodes 200] [--steps 200000]``

Measures, in one run on this machine:
- writing and loading a nodes^3 map of (Bx, By, Bz) (HDF5, written by ``tracker.fields.mapfile``),
  a second validation of the same scenario (served from the cache, no re-read), the bytes the
  plan counts, and that the tracked data array is the loaded block (no copy);
- particle-steps/s of the map (linear and cubic) against the built-in mirror field it samples;
- particle-steps/s of a formula (expression) mirror field against the built-in mirror.
Absolute numbers on a shared machine move by +-30 %: compare the ratios.
"""

import argparse
import tempfile
import time
from pathlib import Path

import numpy as np

from tracker import Scenario, track
from tracker.fields.mapfile import write_map

ELECTRON = {"species": "electron", "position": [0.01, 0.0, 0.0], "kinetic_energy": "10 MeV", "direction": [0, 1, 0.3]}


def steps_per_second(fields, steps, base_dir=None, particle=ELECTRON):
    s = Scenario.from_dict({"run": {"duration": steps * 2e-12, "dt": 2e-12, "radiation_reaction": "none",
                                    "save_every": 1000}, "particle": particle, "field": fields}, base_dir=base_dir)
    track(s)  # load the kernel
    best = 0.0
    for _ in range(3):
        r = track(s)
        best = max(best, r.meta["steps_per_second"])
    return best, r


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--nodes", type=int, default=200)
    parser.add_argument("--steps", type=int, default=50_000)
    args = parser.parse_args()
    n = args.nodes
    with tempfile.TemporaryDirectory() as folder:
        folder = Path(folder)
        # the built-in mirror (B0 = 1 T, L = 0.3 m) sampled on a 0.5 m cube: the orbit stays inside
        axis_x = axis_y = axis_z = np.linspace(-0.25, 0.25, n)
        mirror = [{"type": "mirror", "B0": 1.0, "L": 0.3}]
        ref = Scenario.from_dict({"run": {"duration": 1e-9, "dt": 1e-12}, "particle": ELECTRON, "field": mirror})
        start = time.perf_counter()
        fields = {name: np.empty((n, n, n)) for name in ("Bx", "By", "Bz")}
        gy, gz = np.meshgrid(axis_y, axis_z, indexing="ij")
        for i, x in enumerate(axis_x):
            _, b = ref.fields_at(np.column_stack([np.full(gy.size, x), gy.ravel(), gz.ravel()]), 0.0)
            for c, name in enumerate(("Bx", "By", "Bz")):
                fields[name][i] = b[:, c].reshape(n, n)
        write_map(folder / "mirror.h5", "cartesian", {"x": axis_x, "y": axis_y, "z": axis_z}, fields)
        del fields
        print(f"{n}^3 map: sampled and written in {time.perf_counter() - start:.2f} s, "
              f"{(folder / 'mirror.h5').stat().st_size / 2**20:.0f} MiB on disk")
        mapped = [{"type": "field-map", "file": "mirror.h5"}]
        run = {"duration": 1e-9, "dt": 1e-12}
        start = time.perf_counter()
        s1 = Scenario.from_dict({"run": run, "particle": ELECTRON, "field": mapped}, base_dir=folder)
        first = time.perf_counter() - start
        start = time.perf_counter()
        s2 = Scenario.from_dict({"run": run, "particle": ELECTRON, "field": mapped}, base_dir=folder)
        second = time.perf_counter() - start
        shared = np.shares_memory(s1.field_table[2], s2.field_table[2])
        print(f"validate + load: {first:.2f} s; again (cached): {second * 1e3:.1f} ms; one block shared by both "
              f"scenarios: {shared}; plan memory {s1.plan().memory_bytes / 2**20:.0f} MiB")

        rows = []
        for label, f in (("built-in mirror", mirror), ("map, linear", mapped),
                         ("map, cubic", [{**mapped[0], "interpolation": "cubic"}])):
            rate, r = steps_per_second(f, args.steps, folder)
            rows.append((label, rate, r))
        base = rows[0][1]
        for label, rate, r in rows:
            print(f"{label:<18} {rate:10.3g} steps/s  ({base / rate:5.2f}x the built-in time per step; "
                  f"{r.meta['steps']} steps, {r.meta['stop_reason']})")
        print(f"map vs built-in final position difference: linear {np.linalg.norm(rows[1][2].x[-1] - rows[0][2].x[-1]):.3g} m, "
              f"cubic {np.linalg.norm(rows[2][2].x[-1] - rows[0][2].x[-1]):.3g} m")

    builtin, _ = steps_per_second([{"type": "mirror", "B0": 1.0, "L": 0.3}], args.steps)
    formula, _ = steps_per_second([{"type": "expression", "Bx": "-B0*x*z/L**2", "By": "-B0*y*z/L**2",
                                    "Bz": "B0*(1 + (z/L)**2)", "parameters": {"B0": 1.0, "L": 0.3}}], args.steps)
    print(f"built-in mirror    {builtin:10.3g} steps/s")
    print(f"formula mirror     {formula:10.3g} steps/s  ({builtin / formula:5.2f}x the built-in time per step; "
          "3 programs, 20 operations)")


if __name__ == "__main__":
    main()
