"""Cost of stochastic photon emission per particle-step against classical Landau-Lifshitz, in one run.

Problems: (1) the bundled beam ``scenarios/laser_bunch_collision.toml`` (1000 electrons of
1 GeV through an a0 = 10 pulse, statistics only), run with each model on the same beam:
particle-steps per second and photons recorded per second; (2) the bundled scenario
``scenarios/laser_headon_gev.toml`` (a 1 GeV electron through an
a0 = 20 pulse, chi up to ~0.2) stretched to ``--steps`` steps, run with
``radiation_reaction = "landau-lifshitz"`` (baseline) and ``"quantum-stochastic"``; every run is
repeated and the median taken. Also the emission leaves alone (``constant_field_ensemble``: no
push, only rate lookup, random numbers and photon sampling) as photons per second.

Run:  OMP_WAIT_POLICY=PASSIVE python benchmarks/bench_stochastic.py [--repeat 5]
"""

import argparse
import statistics
import time
from pathlib import Path

import numpy as np

from tracker import constants as k
from tracker import load_scenario, track
from tracker.radiation.stochastic import constant_field_ensemble, emission_rate, rate_unit, table

SCENARIO = Path(__file__).resolve().parent.parent / "scenarios" / "laser_headon_gev.toml"
BEAM = Path(__file__).resolve().parent.parent / "scenarios" / "laser_bunch_collision.toml"


def timed_run(scenario):
    result = track(scenario)
    steps = result.meta["steps"]
    return steps / result.meta["wall_time"], result


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=5)
    parser.add_argument("--steps-per-period", type=float, default=2000.0,
                        help="resolution of the laser run (more steps: longer, steadier timing)")
    args = parser.parse_args()
    beam = load_scenario(BEAM)
    beam_rates = {}
    for model in ("landau-lifshitz", "quantum-stochastic"):
        scenario = beam.with_run(radiation_reaction=model, seed=1)
        track(scenario)  # compile / load once
        samples, photons = [], []
        for i in range(args.repeat):
            result = track(scenario.with_run(seed=i + 1))
            wall = result.meta["wall_time"]
            samples.append(result.meta["steps"] / wall)  # a beam counts particle-steps
            if result.photons is not None:
                photons.append(len(result.photons) / wall)
        beam_rates[model] = statistics.median(samples)
        extra = f"; {statistics.median(photons):.3g} photons recorded/s" if photons else ""
        print(f"beam of {result.count}, {model:22s} {beam_rates[model]:.3g} particle-steps/s (median of "
              f"{args.repeat}; {min(samples):.3g} .. {max(samples):.3g}){extra}")
    print(f"beam: cost per particle-step, stochastic / classical LL: "
          f"{beam_rates['landau-lifshitz'] / beam_rates['quantum-stochastic']:.2f}x")

    base = load_scenario(SCENARIO).with_run(steps_per_period=args.steps_per_period, save_every=1000)
    rates = {}
    photons = []
    for model in ("landau-lifshitz", "quantum-stochastic"):
        scenario = base.with_run(radiation_reaction=model, seed=1)
        track(scenario)  # compile / load once
        samples = []
        for i in range(args.repeat):
            rate, result = timed_run(scenario.with_run(seed=i + 1))
            samples.append(rate)
            if model == "quantum-stochastic":
                photons.append(len(result.photons) / result.meta["wall_time"])
        rates[model] = statistics.median(samples)
        print(f"{model:22s} {rates[model]:.3g} particle-steps/s (median of {args.repeat}; "
              f"{min(samples):.3g} .. {max(samples):.3g}); steps {result.meta['steps']}")
    print(f"cost per particle-step, stochastic / classical LL: {rates['landau-lifshitz'] / rates['quantum-stochastic']:.2f}x")
    print(f"photons recorded per second (in the laser run): {statistics.median(photons):.3g}")

    # emission leaves alone: chi = 0.1, gamma = 2000, 0.05 expected photons per step
    tab = table()
    unit = rate_unit(-k.e, k.m_e)
    n, steps = 4096, 2000
    dt = 0.05 / emission_rate(tab, 0.1, 2000.0, unit)
    g, e, c = np.empty(n), np.empty(n), np.empty(n, dtype=np.int64)
    constant_field_ensemble(tab, 1, 2000.0, 0.1 / 2000.0, dt, 10, unit, g, e, c)
    start = time.perf_counter()
    constant_field_ensemble(tab, 2, 2000.0, 0.1 / 2000.0, dt, steps, unit, g, e, c)
    wall = time.perf_counter() - start
    print(f"emission leaves alone: {n * steps / wall:.3g} particle-steps/s, {c.sum() / wall:.3g} photons/s")


if __name__ == "__main__":
    main()
