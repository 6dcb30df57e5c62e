"""The path limits a problem file may impose, one declarative entry each.

Every part of the tool that knows about limits (the loader, the NLP's path constraints,
verification by replay, plots, studies, printed and JSON results) iterates over
:data:`LIMITS`. Adding a limit is one :class:`LimitSpec` here plus its test.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

#: phase kinds of the phase plan (see :func:`ascentplan.problem.model.phase_plan`)
ALL_PHASES = ("rise", "burn", "coast")
POWERED_PHASES = ("rise", "burn")


@dataclass(frozen=True)
class LimitSpec:
    """One path limit.

    Attributes
    ----------
    name : str
        Key under ``limits:`` in a problem file, e.g. ``"max_dynamic_pressure"``.
    quantity : str
        The flight quantity bounded (a key of
        :func:`ascentplan.models.dynamics.flight_quantities`).
    sense : str
        ``"max"`` (quantity <= bound) or ``"min"`` (quantity >= bound).
    magnitude : bool
        Bound the magnitude |quantity| (two-sided, e.g. q-alpha of either sign).
    si_unit, unit : str
        Unit of the SI value inside the tool, and the unit shown to users.
    factor : float
        ``value_user = value_SI / factor``.
    phases : tuple of str
        Phase kinds on which the limit is imposed (and checked by the replay).
    positive : bool
        Whether the bound must be > 0 (else any finite value).
    excess_floor : float
        Verification measures an excess as a fraction of max(|bound|, excess_floor) [SI].
    at_liftoff : bool
        Whether the NLP imposes it at the liftoff node too (not where the fixed pad
        state would make the constraint degenerate).
    label : str
        Words for legends and tables, e.g. ``"max dynamic pressure"``.
    """

    name: str
    quantity: str
    sense: str
    si_unit: str
    unit: str
    factor: float
    phases: tuple
    label: str
    magnitude: bool = False
    positive: bool = True
    excess_floor: float = 0.0
    at_liftoff: bool = True

    def applies_to(self, kind) -> bool:
        """Whether a :class:`~ascentplan.models.dynamics.DynamicsKind` computes the quantity."""
        return kind.provides(self.quantity)

    def to_user(self, value_si: float) -> float:
        return value_si / self.factor

    def measured(self, values):
        """The values that the bound applies to: |values| for a magnitude limit."""
        return np.abs(values) if self.magnitude else values

    def worst_index(self, values) -> int:
        """Index of the sample nearest to (or furthest past) the bound."""
        v = self.measured(np.asarray(values, dtype=float))
        return int(np.argmin(v)) if self.sense == "min" else int(np.argmax(v))

    def excess(self, peak: float, bound: float) -> float:
        """Signed excess of ``peak`` over ``bound``, a fraction of the bound (>0 violates)."""
        reference = max(abs(bound), self.excess_floor)
        if self.sense == "min":
            return (bound - peak) / reference
        return (peak - bound) / reference

    def scaled_constraint(self, value, bound, scale):
        """The NLP row of this limit, of order one, and the interval it must lie in.

        A maximum becomes ``value / bound <= 1`` (``-1 <= value / bound <= 1`` for a
        magnitude), so that the bound can be an NLP parameter without rescaling; a
        minimum becomes ``(value - bound) / scale >= 0`` with ``scale`` the variable
        scale of the quantity (a minimum bound may be zero).

        Returns ``(expression, lower, upper)``.
        """
        if self.sense == "min":
            return (value - bound) / scale, 0.0, math.inf
        return value / bound, (-1.0 if self.magnitude else -math.inf), 1.0


#: the limits by problem-file name, in the order they are listed everywhere
LIMITS: dict[str, LimitSpec] = {spec.name: spec for spec in (
    LimitSpec("max_dynamic_pressure", "dynamic_pressure", "max", "Pa", "kPa", 1000.0,
              ALL_PHASES, "max dynamic pressure"),
    LimitSpec("max_axial_acceleration", "axial_acceleration", "max", "g0", "g0", 1.0,
              POWERED_PHASES, "max axial acceleration"),
    LimitSpec("max_q_alpha", "q_alpha", "max", "Pa rad", "kPa deg", 1000.0 * math.pi / 180.0,
              ("burn",), "max q alpha", magnitude=True),
    LimitSpec("max_heat_flux", "heat_flux", "max", "W/m^2", "W/m^2", 1.0, ALL_PHASES,
              "max heat flux"),
    LimitSpec("min_altitude", "altitude", "min", "m", "km", 1000.0, ALL_PHASES,
              "min altitude", positive=False, excess_floor=1000.0, at_liftoff=False),
)}

#: user unit and SI factor of each limit: ``value_user = value_SI / factor``
LIMIT_UNITS = {name: (spec.unit, spec.factor) for name, spec in LIMITS.items()}
