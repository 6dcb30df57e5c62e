"""Drag-coefficient models C_D(Mach, Reynolds)."""

from __future__ import annotations

from dataclasses import dataclass

from ._registry import Param


@dataclass(frozen=True)
class ConstantDrag:
    """C_D independent of Mach and Reynolds number."""

    cd: float
    needs_reynolds = False
    parameters = {"cd": Param("", positive=True, doc="drag coefficient")}

    def drag_coefficient(self, mach, reynolds=None):
        return 0.0 * mach + self.cd


#: drag-coefficient models by the name used in problem files
DRAG_MODELS = {"constant": ConstantDrag}
