"""Drag-coefficient models C_D(Mach, Reynolds) of the whole vehicle.

Every model has ``drag_coefficient(mach, reynolds)``, which works on floats, numpy
arrays and CasADi symbols alike (see :mod:`ascentplan._math`) and is smooth and finite
at every argument the optimiser may try, and a class attribute ``needs_reynolds``
telling the dynamics whether to compute the Reynolds number.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ascentplan import _math as m_
from ascentplan._registry import REQUIRED, Param, float_tuple


@dataclass(frozen=True)
class ConstantDrag:
    """C_D independent of Mach and Reynolds number.

    Attributes
    ----------
    cd : float
        Drag coefficient [-], > 0.
    """

    cd: float
    needs_reynolds = False
    parameters = {"cd": Param("", REQUIRED, positive=True, doc="drag coefficient")}

    def __post_init__(self):
        if not np.isfinite(self.cd) or self.cd <= 0.0:
            raise ValueError(f"cd: must be > 0, got {self.cd!r}")

    @classmethod
    def from_params(cls, cd):
        """Build from problem-file parameters; see ``parameters``."""
        return cls(cd=float(cd))

    def drag_coefficient(self, mach, reynolds=None):
        """C_D [-] (shaped like ``mach``)."""
        return 0.0 * mach + self.cd


@dataclass(frozen=True)
class MachTableDrag:
    """C_D tabulated against Mach number, interpolated without overshoot.

    A monotone piecewise cubic Hermite curve through the points (Fritsch-Butland
    interior slopes, the rule of SciPy's ``PchipInterpolator``): between two points it
    never leaves their range, and its slope is continuous. It leaves the first and last
    points horizontally and is held at the end values outside the table, so the
    clamped continuation joins with a continuous slope too (a table that ends at
    Mach 4 gives C_D(Mach 6) = C_D(Mach 4), never zero).

    Attributes
    ----------
    mach : tuple of float
        Mach numbers [-], >= 0, strictly increasing, at least 2.
    cd : tuple of float
        Drag coefficients [-], > 0, one per Mach number.
    """

    mach: tuple
    cd: tuple
    _slopes: tuple = field(init=False, repr=False, compare=False)
    needs_reynolds = False
    parameters = {
        "mach": Param("", REQUIRED, kind="list", nonnegative=True,
                      doc="Mach numbers, strictly increasing"),
        "cd": Param("", REQUIRED, kind="list", positive=True,
                    doc="drag coefficient at each Mach number"),
    }

    def __post_init__(self):
        mach = float_tuple("mach", self.mach)
        cd = float_tuple("cd", self.cd)
        if len(mach) < 2:
            raise ValueError(f"mach: needs at least 2 points, got {list(mach)}")
        if len(cd) != len(mach):
            raise ValueError(f"cd: needs one value per Mach number ({len(mach)}), "
                             f"got {len(cd)}: {list(cd)}")
        for i, v in enumerate(mach):
            if v < 0.0:
                raise ValueError(f"mach: must be >= 0, got {v!r} at index {i}")
            if i and v <= mach[i - 1]:
                raise ValueError(f"mach: must be strictly increasing, got {v!r} after "
                                 f"{mach[i - 1]!r} at index {i}")
        for i, v in enumerate(cd):
            if v <= 0.0:
                raise ValueError(f"cd: must be > 0, got {v!r} at index {i}")
        object.__setattr__(self, "mach", mach)
        object.__setattr__(self, "cd", cd)
        object.__setattr__(self, "_slopes", tuple(
            float(v) for v in m_.monotone_cubic_slopes(mach, cd, "zero")))

    @classmethod
    def from_params(cls, mach, cd):
        """Build from problem-file parameters; see ``parameters``."""
        return cls(mach=mach, cd=cd)

    def drag_coefficient(self, mach, reynolds=None):
        """C_D [-] at Mach number ``mach`` (float, array or CasADi symbol)."""
        return m_.cubic_hermite(mach, self.mach, self.cd, self._slopes,
                                extrapolation="constant")


#: smooth floor of the Reynolds number in the sphere correlation: Re is replaced by
#: Re + f exp(-Re/f), equal to Re to 1e-10 for Re >= 1 and to f at Re = 0 with zero
#: slope, so C_D and its derivatives stay finite at zero speed or zero density
_REYNOLDS_FLOOR = 0.05


@dataclass(frozen=True)
class SphereDrag:
    """Drag of a sphere vs Reynolds number: C_D = 24/Re + 6/(1 + sqrt(Re)) + 0.4.

    F. M. White, *Viscous Fluid Flow*, 2nd ed., McGraw-Hill, 1991; valid for
    0 < Re <= 2e5 to about 10 %. Above 2e5 the formula is used as it is (C_D about
    0.41), without the drag crisis of a real sphere. Re = rho |v| L / mu with L the
    reference length. Mach number has no effect.

    At very small Re (zero speed, near vacuum) Re is floored smoothly at 0.05 so that
    C_D stays finite (at most 485.3); the drag q C_D A stays finite and smooth since q
    vanishes there too. The floor changes C_D by less than 1e-9 relative for Re >= 1.
    """

    needs_reynolds = True
    parameters = {}

    @classmethod
    def from_params(cls):
        """The sphere correlation; it takes no parameters."""
        return cls()

    def drag_coefficient(self, mach, reynolds=None):
        """C_D [-] at Reynolds number ``reynolds`` [-] (Mach ignored).

        Parameters
        ----------
        mach : float, array or CasADi symbol
            Mach number [-]; only sets the shape of the result.
        reynolds : float, array or CasADi symbol
            Reynolds number [-], >= 0 (negative values are treated as 0).
        """
        if reynolds is None:
            raise ValueError("reynolds: the sphere_reynolds drag model needs the Reynolds "
                             "number (give aerodynamics.reference_length), got None")
        if not m_.is_symbolic(reynolds):
            reynolds = np.asarray(reynolds, dtype=float)
        nonnegative = m_.fmax(reynolds, 0.0)
        floored = nonnegative + _REYNOLDS_FLOOR * m_.exp(-nonnegative / _REYNOLDS_FLOOR)
        cd = 24.0 / floored + 6.0 / (1.0 + m_.sqrt(floored)) + 0.4
        return cd if mach is None else cd + 0.0 * mach


#: drag-coefficient models by the name used in problem files
DRAG_MODELS = {
    "constant": ConstantDrag,
    "mach_table": MachTableDrag,
    "sphere_reynolds": SphereDrag,
}
