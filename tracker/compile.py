"""Compile a Scenario into the read-only arrays every kernel works on: the ``Bundle``.

This is the one place that knows both the Python objects and the kernel layouts, and
the one place where start-up physics happens (``kernel.start_states``: the half step
back and the first radiation kick, with the loop's own compiled leaf functions).
Unknown model codes are refused here, loudly, before any kernel runs.
"""

import math
from dataclasses import dataclass

import numpy as np

from . import constants as k
from .errors import ScenarioError
from .fields.evaluate import EVALUATORS
from .kernel import start_states
from .plan import RunPlan
from .pushers import PUSHERS
from .pushers.dispatch import DISPATCHED
from .radiation.power import chi_scale, power_scale
from .radiation.reaction import MODELS as RR_MODELS
from .radiation.stochastic import rate_unit
from .step import (PL_ADAPTIVE, PL_DAMPING, PL_DT, PL_DTMAX, PL_DTMIN, PL_GRID, PL_INTERVAL, PL_LAST,
                   PL_PHOTON_MIN, PL_PUSHER, PL_SAVE, PL_SEED, PL_SPP, PL_TEND, PLAN_SIZE, SP_CHARGE, SP_CHI,
                   SP_POWER, SP_QM, SP_RATE, SP_TAU0, SPECIES_SIZE, STATE_SIZE)


@dataclass(frozen=True)
class Bundle:
    """Everything a kernel needs, as read-only arrays (SI units).

    kinds (F,) int64, params (F, FIELD_PARAMS), data (D,): the field table;
    species (SPECIES_SIZE,): q/m C/kg, tau0 s, q^2 tau0/m, |q| hbar/(m^2 c^3), q C, alpha_q m c^2/hbar 1/s;
    plan_row (PLAN_SIZE,): see ``tracker.step`` PL_* slots; plan: the RunPlan;
    x0 (N, 3) m, u0 (N, 3) gamma*beta, weight (N,): the particles at t = 0;
    state (STATE_SIZE, N): the kernel state at t = 0 (u half a step back).
    """

    kinds: np.ndarray
    params: np.ndarray
    data: np.ndarray
    species: np.ndarray
    plan_row: np.ndarray
    plan: RunPlan
    x0: np.ndarray
    u0: np.ndarray
    weight: np.ndarray
    state: np.ndarray

    @property
    def count(self):
        """Number of particles."""
        return self.x0.shape[0]

    @property
    def table(self):
        """(kinds, params, data) for ``field_at``-style calls."""
        return self.kinds, self.params, self.data


def species_row(charge, mass):
    """[q/m (C/kg), tau0 (s), q^2 tau0/m, |q| hbar/(m^2 c^3), q (C), alpha_q m c^2/hbar (1/s)] for the kernel."""
    row = np.zeros(SPECIES_SIZE)
    row[SP_QM] = charge / mass
    row[SP_TAU0] = k.tau0(charge, mass)
    row[SP_POWER] = power_scale(charge, mass)
    row[SP_CHI] = chi_scale(charge, mass)
    row[SP_CHARGE] = charge
    row[SP_RATE] = rate_unit(charge, mass)
    return row


def save_interval(scenario, plan):
    """Time between saved states (s) for adaptive beams, which save on a common time grid; 0 otherwise."""
    if not (plan.adaptive and scenario.particle_count > 1):
        return 0.0
    intervals = max(1, round(scenario.run.duration / (plan.dt * scenario.run.save_every)))
    return scenario.run.duration / intervals


def plan_row(scenario, plan):
    """The kernel's float64 plan row (see ``tracker.step`` PL_* slots)."""
    run = scenario.run
    row = np.zeros(PLAN_SIZE)
    row[PL_DT] = plan.dt
    row[PL_LAST] = plan.steps if not plan.adaptive else run.max_steps
    row[PL_SAVE] = plan.save_every
    row[PL_PUSHER] = PUSHERS[run.pusher]
    row[PL_DAMPING] = RR_MODELS[run.radiation_reaction]
    row[PL_ADAPTIVE] = 1.0 if plan.adaptive else 0.0
    row[PL_SPP] = plan.steps_per_period or 0.0
    row[PL_DTMIN] = plan.dt_min
    row[PL_DTMAX] = plan.dt_max
    row[PL_TEND] = run.duration
    interval = save_interval(scenario, plan)
    row[PL_GRID] = 1.0 if interval > 0 else 0.0
    row[PL_INTERVAL] = interval
    row[PL_SEED] = float(getattr(run, "seed", 0) or 0)
    row[PL_PHOTON_MIN] = float(getattr(run, "photon_min_energy", 0.0) or 0.0)
    return row


def check_codes(kinds, pusher, damping):
    """Refuse a model code that no dispatcher knows (the kernels would stop every particle)."""
    for i, kind in enumerate(kinds):
        if int(kind) not in EVALUATORS:
            raise ScenarioError(f"field[{i}].type", f"kind code {int(kind)} has no evaluator in the field dispatcher.")
    if int(pusher) not in DISPATCHED:
        raise ScenarioError("run.pusher", f"pusher code {int(pusher)} has no branch in the pusher dispatcher.")
    if int(damping) not in RR_MODELS.values():
        raise ScenarioError("run.radiation_reaction", f"damping code {int(damping)} is not a known model.")


def compile_scenario(scenario, plan=None):
    """Turn a Scenario into a ``Bundle``; raises ScenarioError (the plan's refusals, unknown codes)."""
    plan = plan or scenario.plan()
    kinds, params, data = scenario.field_table
    row = plan_row(scenario, plan)
    check_codes(kinds, row[PL_PUSHER], row[PL_DAMPING])
    species = species_row(scenario.species_charge, scenario.species_mass)
    x0, u0, weight = scenario.initial_particles()
    x0 = np.ascontiguousarray(x0, dtype=np.float64)
    u0 = np.ascontiguousarray(u0, dtype=np.float64)
    weight = np.ascontiguousarray(weight, dtype=np.float64)
    state = np.empty((STATE_SIZE, x0.shape[0]))
    start_states(kinds, params, data, species, row, x0, u0, plan.dt, state)
    for a in (species, row, x0, u0, weight, state):
        a.setflags(write=False)
    if not math.isfinite(plan.dt):
        raise ScenarioError("run.dt", f"the step {plan.dt!r} s is not finite.")
    return Bundle(kinds, params, data, species, row, plan, x0, u0, weight, state)
