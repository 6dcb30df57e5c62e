"""First guesses and variable scales for the collocation NLP, from a forward simulation."""

from __future__ import annotations

import numpy as np

from ascentplan.models.dynamics import dynamics_kind
from ascentplan.optimisation.phases import nodes_for_phase
from ascentplan.optimisation.solution import Guess
from ascentplan.problem.model import Problem, phase_plan


def _phase_samples(trajectory, j):
    mask = np.asarray(trajectory.phase) == j
    return np.asarray(trajectory.time)[mask], np.asarray(trajectory.state)[:, mask], \
        np.asarray(trajectory.controls)[:, mask]


def guess_from_trajectory(problem: Problem, trajectory, nodes_per_phase: int) -> Guess:
    """Sample a simulated trajectory on the mesh of each phase of ``problem``.

    Phases the simulation did not reach (an impact, say) are filled with the last state
    and the stage's full-throttle burn time, so the guess is always complete.
    """
    phases = phase_plan(problem)
    stages = problem.vehicle.stages
    durations, states, controls = [], [], []
    last_state = np.asarray(trajectory.state)[:, -1]
    kind = dynamics_kind(problem.dynamics)
    n_u = kind.n_controls
    steered = kind.has_control("pitch")
    throttle = kind.control_index("throttle")
    for j, ph in enumerate(phases):
        N = nodes_for_phase(ph, nodes_per_phase)
        t, x, u = _phase_samples(trajectory, j)
        if t.size >= 2 and t[-1] > t[0]:
            d = float(t[-1] - t[0])
            tn = t[0] + d * np.linspace(0.0, 1.0, N)
            X = np.vstack([np.interp(tn, t, row) for row in x])
            Uc = np.vstack([np.interp(tn, t, row) for row in u[:n_u]])
            last_state = X[:, -1]
        else:
            d = ph.duration if ph.duration is not None else stages[ph.stage].full_throttle_burn_time
            X = np.repeat(last_state[:, None], N, axis=1)
            Uc = np.zeros((n_u, N))
            Uc[throttle] = stages[ph.stage].throttle_max if ph.powered else 0.0
        if ph.duration is not None:
            d = ph.duration
        if not ph.powered:
            Uc[:] = 0.0
        elif steered:
            pitch = kind.control_index("pitch")
            if ph.kind == "rise":
                Uc[pitch] = 0.5 * np.pi
            Uc[pitch] = np.clip(Uc[pitch], -0.5 * np.pi, 0.5 * np.pi)
        Uc[throttle] = np.clip(Uc[throttle], stages[ph.stage].throttle_min if ph.powered else 0.0,
                               stages[ph.stage].throttle_max if ph.powered else 0.0)
        durations.append(d)
        states.append(X)
        controls.append(Uc)
    return Guess(durations=durations, states=states, controls=controls,
                 payload_mass=problem.vehicle.payload_mass,
                 propellant=[s.propellant_mass for s in stages])


def guess_from_solution(problem: Problem, solution, nodes_per_phase: int) -> Guess:
    """Interpolate a previous NLP solution onto a (finer or coarser) mesh: a warm start."""
    phases = phase_plan(problem)
    durations, states, controls = [], [], []
    for j, ph in enumerate(phases):
        N = nodes_for_phase(ph, nodes_per_phase)
        tau_old = np.linspace(0.0, 1.0, solution.states[j].shape[1])
        tau = np.linspace(0.0, 1.0, N)
        states.append(np.vstack([np.interp(tau, tau_old, r) for r in solution.states[j]]))
        controls.append(np.vstack([np.interp(tau, tau_old, r) for r in solution.controls[j]]))
        durations.append(solution.durations[j])
    multipliers = None
    if all(solution.states[j].shape[1] == nodes_for_phase(ph, nodes_per_phase)
           for j, ph in enumerate(phases)):
        multipliers = solution.multipliers
    return Guess(durations=durations, states=states, controls=controls,
                 payload_mass=solution.payload_mass, propellant=list(solution.propellant),
                 multipliers=multipliers,
                 booster_propellant=list(getattr(solution, "booster_propellant", []) or [])
                 or None)


def scales_for(problem: Problem, guess: Guess) -> dict:
    """Offsets and scales that bring every NLP variable to order one."""
    allx = np.hstack(guess.states)
    offset, scale = dynamics_kind(problem.dynamics).state_scales(allx, problem)
    durations = [max(1e-3, float(d)) for d in guess.durations]
    return {"x_offset": offset, "x_scale": scale, "durations": durations,
            "mass": problem.vehicle.liftoff_mass}


#: a spatial kind's mesh of more nodes per phase than this starts from the optimum on
#: this many nodes per phase, interpolated: on the three-dimensional transfer-orbit
#: example a cold start at 160 nodes per phase took 161 IPOPT iterations (or failed),
#: and 44 from the optimum at 40 (measured)
COARSE_START_NODES = 40


def coarse_start(problem: Problem, nodes_per_phase: int, solve_on) -> tuple[Guess | None, int]:
    """A first guess on a fine mesh from the optimum on a coarse one (mesh continuation).

    ``solve_on(n)`` solves ``problem`` cold on ``n`` nodes per phase and returns its
    ``NLPSolution``. Only for kinds that fly out of a plane (``spatial``) on more than
    :data:`COARSE_START_NODES` nodes per phase. Returns the interpolated optimum, or None
    (no coarse start, or the coarse solve was not optimal), and the IPOPT iterations spent.
    """
    kind = dynamics_kind(problem.dynamics)
    if not kind.spatial or nodes_per_phase <= COARSE_START_NODES:
        return None, 0
    solution = solve_on(COARSE_START_NODES)
    if solution.status != "optimal":
        return None, solution.iterations
    return guess_from_solution(problem, solution, nodes_per_phase), solution.iterations


def guess_schedule(problem: Problem):
    """The schedule flown for the first guess: the default (full throttle, gravity turn),
    except over a vacuum or with no pitch-over, where a gravity turn never leaves the
    vertical; there, pitch falls linearly from 90 deg to 0 over the estimated burn time."""
    from ascentplan.models.atmosphere import Vacuum
    from ascentplan.problem.model import TimeSchedule

    kind = dynamics_kind(problem.dynamics)
    if not kind.steered:
        return None
    # a flight out of the launch plane always takes the ramp, with its heading along the
    # target plane (the control law's default): a gravity turn drifts with the wind of
    # the planet's rotation, and a guess off the plane converged poorly (measured)
    if not kind.spatial and not isinstance(problem.atmosphere, Vacuum) \
            and problem.launch.pitch_over > 0:
        return None
    rise = problem.launch.vertical_rise
    total = sum(s.full_throttle_burn_time + s.coast_after for s in problem.vehicle.stages)
    if problem.launch.in_circular_orbit:
        # in orbit: thrust along the flight path
        return TimeSchedule(time=(0.0, max(total, 1.0)), throttle=(1.0, 1.0), pitch=(0.0, 0.0))
    return TimeSchedule(time=(0.0, max(rise, 1e-3), max(total, rise + 1.0)),
                        throttle=(1.0, 1.0, 1.0), pitch=(0.5 * np.pi, 0.5 * np.pi, 0.0))
