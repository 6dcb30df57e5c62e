"""Exchange ratios: d objective / d input at an optimum, in the units vehicle trades use.

At a converged optimum the multiplier of every NLP parameter is the derivative of the
optimal objective with respect to it (envelope theorem; CasADi's ``lam_p`` is -d f*/d p
for the scaled, minimised f, and :attr:`NLPSolution.sensitivities` holds it as d objective
/ d parameter in SI). No re-solve is needed. This module turns those derivatives into the
exchange ratios a performance engineer trades in, one per problem-file input:

========================================  ==================================  =============
input (problem-file key)                  one unit of it                      example unit
========================================  ==================================  =============
``vehicle.payload_mass``                  1 kg (where the payload is given)   m/s per kg
``vehicle.stages[i].dry_mass``            1 kg                                kg per kg
``vehicle.stages[i].propellant_mass``     1 kg                                kg per kg
``vehicle.stages[i].structural_ratio``    0.01 (a percentage point)           kg per %
``vehicle.stages[i].thrust_vacuum``       1 kN                                kg per kN
``vehicle.stages[i].thrust_to_weight``    0.01                                kg per %
``vehicle.stages[i].isp_vacuum``          1 s (d/dIsp = g0 d/dc)              m/s per s
``vehicle.stages[i].nozzle_exit_area``    1 m^2                               m/s per m^2
``aerodynamics.drag_scale``               0.01: 1 % of the model's C_D        kg per %
``mass_split.liftoff_mass``               1 kg (a split that holds it)        m/s per kg
``limits.<name>``                         the limit's user unit               m/s per kPa
========================================  ==================================  =============

Each ratio is a partial derivative: that input moves alone, every other input stays as
written, and what the problem file derives from the input follows it as the loader derives
it (a stage written with a structural ratio keeps the ratio when its propellant mass moves,
so its dry mass follows; a stage written with a thrust-to-weight ratio keeps the ratio, so
its thrust follows the stack mass). These rules are applied by the chain rule through the
mass rules of :mod:`ascentplan.problem.model` (evaluated on CasADi symbols), so a ratio is
what a re-solve with the changed key would show (the tests check it against central
differences of re-solves).

Without a stage-mass split the inputs are each stage's propellant mass, its dry mass or
structural ratio (as written), its thrust or thrust-to-weight ratio (as written), Isp and
nozzle exit area, the payload unless the objective chooses it, and the drag scale. In a
stage-mass split the propellant masses are decision variables: their ratios are zero at
the optimum by stationarity and they are no inputs, so they are left out; so are the dry
masses, which follow the structural ratios (each stage's as written, else as its masses
are written), reported in their place, whichever the file gives. The held liftoff mass
takes their place as an input. The drag scale is left out over a vacuum, where there is
no drag. Propellant reserves, throttle ranges and rates, coast durations and the launch
site are structure (or bounds of decision variables), not NLP parameters, and have no
ratio here.
"""

from __future__ import annotations

from dataclasses import dataclass

import casadi as ca
import numpy as np

from ascentplan.constants import G0
from ascentplan.problem.limits import LIMITS
from ascentplan.problem.model import (
    Problem,
    dry_mass_from_ratio,
    stack_masses,
    thrust_from_ratio,
)
from ascentplan.problem.objectives import OBJECTIVE_SPECS

__all__ = ["ExchangeInput", "exchange_inputs", "exchange_lines", "exchange_ratios"]

#: exchange ratios shown in the printed summary of a solve (the rest are counted)
SHOWN = 5


@dataclass(frozen=True)
class ExchangeInput:
    """One input priced by an exchange ratio.

    Attributes
    ----------
    key : str
        Problem-file key path (``vehicle.stages[0].dry_mass``).
    label : str
        Words for a person (``stage 'first' dry mass``).
    unit : str
        The unit the input is priced per (``kg``, ``kN``, ``s``, ``m^2``, ``%``).
    per_unit : float
        One such unit in the SI unit of the input [SI].
    derivative : float
        d objective / d input, both SI [SI objective per SI input].
    """

    key: str
    label: str
    unit: str
    per_unit: float
    derivative: float


def _is_vacuum(problem: Problem) -> bool:
    from ascentplan.models.atmosphere import Vacuum

    return isinstance(problem.atmosphere, Vacuum)


def _stage_rule_gradients(problem: Problem, sens: dict) -> dict:
    """Without a split: d objective / d (each stage's written mass and thrust inputs).

    The NLP's parameters are the payload, propellant and dry masses and the thrusts; the
    file's inputs may be structural or thrust-to-weight ratios from which the loader
    derives them. The chain rule through the mass rules gives the derivative per input.
    Returns key suffix -> list per stage of (field name, derivative [SI]), and the payload.
    """
    stages = problem.vehicle.stages
    n = len(stages)
    payload = ca.SX.sym("payload")
    prop = ca.SX.sym("propellant", n)
    inputs, values, fields = [payload, prop], [problem.vehicle.payload_mass], []
    values += [s.propellant_mass for s in stages]
    dry = []
    for i, s in enumerate(stages):
        if s.structural_ratio is not None:
            sym = ca.SX.sym(f"ratio{i}")
            dry.append(dry_mass_from_ratio(prop[i], sym))
            fields.append((i, "structural_ratio", s.structural_ratio))
        else:
            sym = ca.SX.sym(f"dry{i}")
            dry.append(sym)
            fields.append((i, "dry_mass", s.dry_mass))
        inputs.append(sym)
        values.append(fields[-1][2])
    veh = problem.vehicle
    fairing = veh.fairing
    _, ignition, _ = stack_masses(payload, [prop[i] for i in range(n)], dry,
                                  [veh.attached_mass(i) for i in range(n)],
                                  0.0 if fairing is None else fairing.mass,
                                  None if fairing is None else fairing.stage)
    thrust = []
    for i, s in enumerate(stages):
        if s.thrust_to_weight is not None:
            sym = ca.SX.sym(f"ttw{i}")
            thrust.append(thrust_from_ratio(sym, ignition[i]))
            fields.append((i, "thrust_to_weight", s.thrust_to_weight))
        else:
            sym = ca.SX.sym(f"thrust{i}")
            thrust.append(sym)
            fields.append((i, "thrust_vacuum", s.thrust_vacuum))
        inputs.append(sym)
        values.append(fields[-1][2])
    params = ca.vertcat(payload, *[prop[i] for i in range(n)], *dry, *thrust)
    weights = np.concatenate([sens["payload"], sens["propellant"], sens["structure"],
                              sens["thrust"]])
    u = ca.vertcat(*inputs)
    jac = ca.Function("rules", [u], [ca.jacobian(params, u)])
    grad = weights @ np.array(jac(np.array(values, dtype=float)))
    out = {"payload": float(grad[0])}
    out.update({(i, "propellant_mass"): float(grad[1 + i]) for i in range(n)})
    out.update({(i, name): float(g) for (i, name, _), g in zip(fields, grad[1 + n:])})
    return out


def _stage_inputs(problem: Problem, sens: dict) -> list[ExchangeInput]:
    """Per stage its mass, thrust, Isp and nozzle inputs (see the module docstring)."""
    stages = problem.vehicle.stages
    split = problem.mass_split is not None
    if split:
        chained = {}
        for i, s in enumerate(stages):
            chained[(i, "structural_ratio")] = float(sens["structure"][i])
            if s.thrust_to_weight is not None:
                chained[(i, "thrust_to_weight")] = float(sens["thrust_to_weight"][i])
            else:
                chained[(i, "thrust_vacuum")] = float(sens["thrust"][i])
    else:
        chained = _stage_rule_gradients(problem, sens)
    words = {"propellant_mass": ("propellant mass", "kg"), "dry_mass": ("dry mass", "kg"),
             "structural_ratio": ("structural ratio", "%"),
             "thrust_vacuum": ("vacuum thrust", "kN"),
             "thrust_to_weight": ("thrust-to-weight ratio", "%")}
    # a dimensionless input is priced per 0.01 of it (pint's %), as a study converts it
    per = {"kg": 1.0, "kN": 1e3, "%": 0.01}
    out = []
    for i, s in enumerate(stages):
        path, who = f"vehicle.stages[{i}]", f"stage '{s.name}'"
        for name, (what, unit) in words.items():
            if (i, name) in chained:
                out.append(ExchangeInput(f"{path}.{name}", f"{who} {what}", unit,
                                         per[unit], chained[(i, name)]))
        out.append(ExchangeInput(f"{path}.isp_vacuum", f"{who} vacuum Isp", "s", G0,
                                 float(sens["exhaust_speed"][i])))
        out.append(ExchangeInput(f"{path}.nozzle_exit_area", f"{who} nozzle exit area",
                                 "m^2", 1.0, float(sens["exit_area"][i])))
    if not split:
        out.insert(0, ExchangeInput("vehicle.payload_mass", "payload mass", "kg", 1.0,
                                    chained["payload"]))
    return out


def _stack_inputs(problem: Problem, sens: dict) -> list[ExchangeInput]:
    """Each booster group's inputs (per booster) and the fairing's."""
    out = []
    split = problem.mass_split is not None
    for k, g in enumerate(problem.vehicle.boosters):
        stage_index = g.stage
        index = problem.vehicle.groups_of(stage_index).index(g)
        path = f"vehicle.stages[{stage_index}].boosters[{index}]"
        who = f"boosters '{g.name}' (per booster)"
        if not (split and g.frees_propellant):
            out.append(ExchangeInput(f"{path}.propellant_mass", f"{who} propellant mass", "kg",
                                     1.0, float(sens["booster_propellant"][k])))
            out.append(ExchangeInput(f"{path}.dry_mass", f"{who} dry mass", "kg", 1.0,
                                     float(sens["booster_dry"][k])))
        out.append(ExchangeInput(f"{path}.thrust_vacuum", f"{who} vacuum thrust", "kN", 1e3,
                                 float(sens["booster_thrust"][k])))
        out.append(ExchangeInput(f"{path}.isp_vacuum", f"{who} vacuum Isp", "s", G0,
                                 float(sens["booster_exhaust_speed"][k])))
        out.append(ExchangeInput(f"{path}.nozzle_exit_area", f"{who} nozzle exit area", "m^2",
                                 1.0, float(sens["booster_exit_area"][k])))
    fairing = problem.vehicle.fairing
    if fairing is not None:
        out.append(ExchangeInput("vehicle.fairing.mass", "fairing mass", "kg", 1.0,
                                 float(sens["fairing_mass"][0])))
        if fairing.time is not None:
            out.append(ExchangeInput("vehicle.fairing.jettison_time", "fairing jettison time",
                                     "s", 1.0, float(sens["fairing_time"][0])))
        else:
            out.append(ExchangeInput("vehicle.fairing.jettison_heat_flux",
                                     "fairing jettison heat-flux bound", "W/m^2", 1.0,
                                     float(sens["fairing_heat_flux"][0])))
    return out


def exchange_inputs(problem: Problem, sensitivities: dict) -> list[ExchangeInput]:
    """The priced inputs of ``problem`` (limits aside), from the NLP's parameter
    sensitivities (:attr:`NLPSolution.sensitivities`, d objective / d parameter, SI).

    Returns the inputs in a fixed order: payload, then per stage its masses, thrust, Isp
    and nozzle exit area, then the held liftoff mass and the drag scale.
    """
    from ascentplan.optimisation.masses import payload_is_free

    out = _stage_inputs(problem, sensitivities) + _stack_inputs(problem, sensitivities)
    split = problem.mass_split
    if payload_is_free(problem):
        out = [e for e in out if e.key != "vehicle.payload_mass"]
    elif split is not None:
        out.insert(0, ExchangeInput("vehicle.payload_mass", "payload mass", "kg", 1.0,
                                    float(sensitivities["payload"][0])))
    if split is not None and split.hold == "liftoff_mass":
        out.append(ExchangeInput("mass_split.liftoff_mass", "held liftoff mass", "kg", 1.0,
                                 float(sensitivities["liftoff_mass"][0])))
    if not _is_vacuum(problem):
        out.append(ExchangeInput("aerodynamics.drag_scale", "drag coefficient C_D", "%",
                                 0.01, float(sensitivities["drag_scale"][0])))
    return out


def _entry(key, label, value, unit, objective_unit, input_unit) -> dict:
    return {"input": key, "label": label, "value": value,
            "unit": f"{objective_unit} per {unit}", "objective_unit": objective_unit,
            "input_unit": input_unit}


def exchange_ratios(problem: Problem, solution, limits: list[dict]) -> list[dict]:
    """The ``exchange_ratios`` block of summary.json, sorted by |value|, largest first.

    Parameters
    ----------
    problem : Problem
        The problem as given (its inputs as written).
    solution : NLPSolution
        The optimiser's answer; its multipliers are sensitivities only when it converged.
    limits : list of dict
        :meth:`Result.limits`, whose shadow prices are the limits' exchange ratios.

    Returns
    -------
    list of dict
        Each ``{"input", "label", "value", "unit", "objective_unit", "input_unit"}``;
        ``value`` is d objective / d input in ``objective_unit`` per ``input_unit``. When
        the solve did not converge every value is None and a ``reason`` says why.
    """
    spec = OBJECTIVE_SPECS[problem.objective]
    converged = solution.status == "optimal" and bool(solution.sensitivities)
    out = []
    if solution.sensitivities:
        for e in exchange_inputs(problem, solution.sensitivities):
            # + 0.0: an input with no effect reads 0, not -0
            value = e.derivative * e.per_unit / spec.divisor + 0.0 if converged else None
            out.append(_entry(e.key, e.label, value, e.unit, spec.unit, e.unit))
    for lim in limits:
        out.append(_entry(f"limits.{lim['name']}", f"{LIMITS[lim['name']].label} bound",
                          lim["shadow_price"] if converged else None, lim["unit"],
                          spec.unit, lim["unit"]))
    if not converged:
        reason = (f"no exchange ratios: the solve did not converge (solver status "
                  f"{solution.status}, IPOPT: {solution.return_status})")
        for entry in out:
            entry["reason"] = reason
        return out
    # stable: equal magnitudes keep the fixed order of the inputs
    return sorted(out, key=lambda entry: -abs(entry["value"]))


def exchange_lines(ratios: list[dict] | None) -> list[str]:
    """The printed summary's block: the :data:`SHOWN` largest ratios, then how many more
    summary.json holds."""
    if not ratios:
        return []
    if ratios[0]["value"] is None:
        return ["  exchange      n/a (not converged)"]
    lines = []
    for k, r in enumerate(ratios[:SHOWN]):
        head = "  exchange      " if k == 0 else " " * 16
        lines.append(f"{head}{r['label']:<40}{r['value']:>+11.4g} {r['unit']}")
    rest = len(ratios) - SHOWN
    if rest > 0:
        lines.append(f"                ({rest} more in summary.json)")
    return lines
