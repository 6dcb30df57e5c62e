"""The objectives a problem file may name, one declarative entry each.

An objective's value is one function of an :class:`Outcome`: the NLP builds the outcome
from its decision variables (CasADi symbols) and the replay from the flown trajectory
(floats), so the two can never disagree about what is optimised. Adding an objective is
one :class:`ObjectiveSpec` here plus its test.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any


@dataclass(frozen=True)
class Outcome:
    """What an objective reads from a flight (numbers on the replay, symbols in the NLP).

    Attributes
    ----------
    kind : DynamicsKind
        The dynamics flown; states are read through it.
    planet : Planet
    burnout_state : sequence
        State at the end of the last powered phase.
    apogee_altitude : float or symbol or None
        Highest altitude of the flight including a final coast [m] (``max_apogee``).
    payload_mass, propellant_used, liftoff_mass : float or symbol or None
        [kg]; propellant burnt over all powered phases.
    """

    kind: Any
    planet: Any
    burnout_state: Any
    apogee_altitude: Any = None
    payload_mass: Any = None
    propellant_used: Any = None
    liftoff_mass: Any = None


@dataclass(frozen=True)
class ObjectiveSpec:
    """One objective.

    Attributes
    ----------
    name : str
        The value of ``objective:`` in a problem file.
    description : str
        One line for help texts and reports.
    sense : int
        +1 to maximise, -1 to minimise.
    unit : str
        User unit; ``divisor`` converts: ``value_user = value_SI / divisor``.
    value : callable
        ``value(outcome) -> float or symbol`` [SI].
    scale : str
        Which variable scale brings the value to order one in the NLP:
        ``"speed"``, ``"altitude"`` or ``"mass"``.
    needs_target : bool
        Meaningless without a terminal target (the loader refuses it).
    fixed_by : tuple of str
        Target keys that would fix the optimised quantity (the loader refuses the pair).
    final_coast : bool
        The phase plan adds a coast to apogee after burnout.
    payload_free : bool
        The optimiser chooses the payload mass (a decision variable, not an input); a
        stage-mass split may then not hold the payload.
    requires_split_hold : str or None
        The ``mass_split.hold`` the objective only makes sense with (the loader requires a
        mass split holding that), or None.
    """

    name: str
    description: str
    sense: int
    unit: str
    divisor: float
    value: Callable[[Outcome], Any]
    scale: str
    needs_target: bool = False
    fixed_by: tuple = ()
    final_coast: bool = False
    payload_free: bool = False
    requires_split_hold: str | None = None

    @property
    def maximise(self) -> bool:
        return self.sense > 0


OBJECTIVE_SPECS: dict[str, ObjectiveSpec] = {spec.name: spec for spec in (
    ObjectiveSpec("max_burnout_speed", "maximise inertial speed at burnout of the last stage",
                  +1, "m/s", 1.0, lambda o: o.kind.speed(o.burnout_state), "speed",
                  fixed_by=("speed", "circular_orbit_altitude")),
    ObjectiveSpec("max_burnout_altitude", "maximise altitude at burnout of the last stage",
                  +1, "km", 1000.0, lambda o: o.kind.altitude(o.burnout_state, o.planet),
                  "altitude", fixed_by=("altitude", "circular_orbit_altitude")),
    ObjectiveSpec("max_apogee", "maximise the apogee altitude reached by coasting after burnout",
                  +1, "km", 1000.0, lambda o: o.apogee_altitude, "altitude",
                  fixed_by=("circular_orbit_altitude",), final_coast=True),
    ObjectiveSpec("max_payload", "maximise payload mass delivered to the target",
                  +1, "kg", 1.0, lambda o: o.payload_mass, "mass", needs_target=True,
                  payload_free=True),
    ObjectiveSpec("min_propellant", "minimise propellant used to reach the target",
                  -1, "kg", 1.0, lambda o: o.propellant_used, "mass", needs_target=True),
    ObjectiveSpec("min_liftoff_mass",
                  "minimise liftoff mass that reaches the target (stage-mass split, payload "
                  "held)", -1, "kg", 1.0, lambda o: o.liftoff_mass, "mass", needs_target=True,
                  requires_split_hold="payload"),
)}

#: one-line description of each objective by name (what the loader validates against)
OBJECTIVES = {name: spec.description for name, spec in OBJECTIVE_SPECS.items()}
#: user unit and SI divisor of each objective
OBJECTIVE_UNITS = {name: (spec.unit, spec.divisor) for name, spec in OBJECTIVE_SPECS.items()}
