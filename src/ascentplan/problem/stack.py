"""What a stage carries besides itself: strap-on booster groups, and the payload fairing.

A booster group is ``count`` identical boosters burning together beside a core stage,
from liftoff or from the burnout of an earlier group of the same stage (air-lit), at a
fixed throttle setting, and dropped at its own burnout; the core keeps burning. A
fairing is a mass dropped at a given time or, with the optimiser choosing the instant,
once the free-molecular heat flux 1/2 rho v^3 stays below a bound.
"""

from __future__ import annotations

from dataclasses import dataclass

from ascentplan.constants import G0

__all__ = ["BoosterGroup", "Fairing", "booster_burn_time", "booster_burnout_times",
           "group_thrust"]


# the group rules, written once: plain arithmetic, so they take floats and CasADi symbols
# alike (the NLP calls them on its parameters and decision variables)


def group_thrust(count, setting, thrust_vacuum):
    """Vacuum thrust of ``count`` boosters at throttle ``setting`` [N]."""
    return count * setting * thrust_vacuum


def booster_burn_time(propellant_mass, setting, thrust_vacuum, exhaust_speed):
    """Burn time of one booster from ignition to depletion at ``setting`` [s]."""
    return propellant_mass * exhaust_speed / (setting * thrust_vacuum)


@dataclass(frozen=True)
class BoosterGroup:
    """``count`` identical strap-on boosters of stage ``stage`` (per-booster figures).

    Attributes
    ----------
    name : str
    stage : int
        Index of the stage the group burns beside (the core).
    count : int
    propellant_mass, dry_mass : float
        Per booster [kg]; the dry (casing) mass is dropped at the group's burnout.
    thrust_vacuum : float
        Per booster at full throttle [N].
    exhaust_speed : float
        Vacuum effective exhaust speed [m s^-1].
    nozzle_exit_area : float
        Per booster [m^2].
    throttle : float
        The throttle setting the group burns at, constant over its burn [-].
    throttle_min, throttle_max : float or None
        A range for the setting: the optimiser chooses one setting in it (the group's
        burn time follows); None: the setting is fixed at ``throttle``.
    ignition : str or None
        None: the group ignites with its core stage (ground-lit on the first stage);
        else the name of the group of the same stage at whose burnout it ignites.
    """

    name: str
    stage: int
    count: int
    propellant_mass: float
    dry_mass: float
    thrust_vacuum: float
    exhaust_speed: float
    nozzle_exit_area: float = 0.0
    throttle: float = 1.0
    ignition: str | None = None
    #: bounds on the propellant per booster in a stage-mass split [kg]; either given frees
    #: it (the casing then follows its ratio to the propellant as written)
    propellant_min: float | None = None
    propellant_max: float | None = None
    throttle_min: float | None = None
    throttle_max: float | None = None

    @property
    def frees_setting(self) -> bool:
        """Whether the optimiser chooses the group's setting within its range."""
        return (self.throttle_min is not None and self.throttle_max is not None
                and self.throttle_min < self.throttle_max)

    @property
    def frees_propellant(self) -> bool:
        return self.propellant_min is not None or self.propellant_max is not None

    @property
    def casing_ratio(self) -> float:
        """Dry over propellant mass per booster, as written [-]."""
        return self.dry_mass / self.propellant_mass

    @property
    def isp_vacuum(self) -> float:
        return self.exhaust_speed / G0

    @property
    def mass(self) -> float:
        """Propellant plus dry mass of the whole group [kg]."""
        return self.count * (self.propellant_mass + self.dry_mass)

    @property
    def group_thrust(self) -> float:
        """Vacuum thrust of the group at its setting [N]."""
        return group_thrust(self.count, self.throttle, self.thrust_vacuum)

    @property
    def group_mass_flow(self) -> float:
        """Mass flow of the group at its setting [kg s^-1]."""
        return self.group_thrust / self.exhaust_speed

    @property
    def burn_time(self) -> float:
        """Burn time from ignition to depletion at its setting [s]."""
        return booster_burn_time(self.propellant_mass, self.throttle, self.thrust_vacuum,
                                 self.exhaust_speed)


def booster_burnout_times(groups, stage: int, burn_time=None) -> dict[str, object]:
    """Burnout time of each group of ``stage`` from the core's ignition [s], by name.

    ``burn_time(group)`` gives a group's burn time (default :attr:`BoosterGroup.burn_time`);
    a caller may pass one that returns CasADi symbols (the NLP's parameters).
    """
    burn_time = burn_time or (lambda g: g.burn_time)
    own = [g for g in groups if g.stage == stage]
    by_name = {g.name: g for g in own}
    out: dict[str, object] = {}

    def end(g, depth=0):
        if g.name not in out:
            start = 0.0 if g.ignition is None else end(by_name[g.ignition], depth + 1)
            out[g.name] = start + burn_time(g)
        return out[g.name]

    for g in own:
        end(g)
    return out


@dataclass(frozen=True)
class Fairing:
    """The payload fairing: its mass and when it is dropped.

    Attributes
    ----------
    mass : float
        [kg].
    stage : int
        Index of the stage in whose burn it is dropped (its first burn free of boosters).
    time : float or None
        Jettison time from liftoff [s]; None: the optimiser chooses the instant, after
        which the heat flux 1/2 rho v^3 stays below ``heat_flux_bound``.
    heat_flux_bound : float or None
        [W m^-2].
    """

    mass: float
    stage: int
    time: float | None = None
    heat_flux_bound: float | None = None
