"""Hard or soft target and limit rows: the one switch between the NLP and its elastic form.

The NLP adds every terminal target and every path limit through one of these two row
makers. :class:`HardRows` imposes them as written. :class:`SoftRows` gives each
condition nonnegative slack variables and an L1 penalty on them (the elastic form of the
problem, as in the elastic mode of SNOPT: Gill, Murray and Saunders, SIAM Review 47,
2005): solved from a point where the NLP was found infeasible, it says which conditions
must give, and by how much, for a schedule to exist.

Slacks are of order one: a maximum limit's slack is a fraction of its bound (the row is
``value / bound <= 1 + s``), a minimum limit's and a target's are in the variable scale
of the quantity, as their rows are. Each limit has one slack for the whole flight, so
``(1 + s) bound`` is the bound the flight needs; each target equality has two, one per
direction.
"""

from __future__ import annotations

from dataclasses import dataclass

import casadi as ca
import numpy as np

#: weight of the problem's own objective in the elastic objective: small, so that a
#: slack is zero wherever the condition can be met, yet enough to pick one schedule
#: among the many that meet the rest
OBJECTIVE_WEIGHT = 1e-5


class HardRows:
    """Targets and limits imposed as written.

    Parameters
    ----------
    rows : ConstraintRows
    """

    elastic = False

    def __init__(self, rows):
        self._rows = rows

    def limit(self, name: str, phase: int, expr, lower, upper) -> None:
        """Rows ``lower <= expr <= upper`` of limit ``name`` on phase ``phase``."""
        self._rows.add(name, expr, lower, upper)

    def target(self, name: str, expr) -> None:
        """The target equality ``expr == 0`` (scaled)."""
        self._rows.add(name, expr, 0.0, 0.0)

    def fill(self, values: dict) -> None:
        """Nothing to add to a guess: there are no slacks."""

    def finish(self, w, p) -> None:
        """Nothing to prepare."""

    def seed(self, w0: np.ndarray, p: np.ndarray) -> np.ndarray:
        return w0

    def read(self, w: np.ndarray, p: np.ndarray) -> dict:
        return {}


@dataclass
class _Group:
    """Rows of one condition on one phase and the side of the interval they may pass."""

    name: str
    phase: int | None
    excess: object  # rows - upper (upper side) or lower - rows (lower side), before slack


class SoftRows:
    """Targets and limits with nonnegative slacks and an L1 penalty on them.

    Parameters
    ----------
    rows : ConstraintRows
    variables : VariableLayout
        Receives one block ``slack_<name>`` per condition.
    """

    elastic = True

    def __init__(self, rows, variables):
        self._rows = rows
        self._variables = variables
        self._slacks: dict[str, object] = {}
        self._groups: list[_Group] = []
        self._excess_function = None

    def _slack(self, name: str, size: int):
        if name not in self._slacks:
            self._slacks[name] = self._variables.add(f"slack_{name}", (size, 1), 0.0, np.inf)
        return self._slacks[name]

    def limit(self, name: str, phase: int, expr, lower, upper) -> None:
        """Rows of limit ``name`` on phase ``phase``, each side allowed past by the slack."""
        s = self._slack(name, 1)
        expr = ca.vec(expr)
        if np.isfinite(upper):
            self._rows.add(name, expr - s, -np.inf, upper)
            self._groups.append(_Group(name, phase, expr - upper))
        if np.isfinite(lower):
            self._rows.add(name, expr + s, lower, np.inf)
            self._groups.append(_Group(name, phase, lower - expr))

    def target(self, name: str, expr) -> None:
        """``expr == s_above - s_below``: the target may be missed either way."""
        s = self._slack(name, 2)
        self._rows.add(name, expr - s[0] + s[1], 0.0, 0.0)
        self._groups.append(_Group(name, None, ca.vertcat(expr, -expr)))

    @property
    def penalty(self):
        """The L1 penalty: the sum of every slack."""
        return sum(ca.sum1(s) for s in self._slacks.values())

    def fill(self, values: dict) -> None:
        """Zero slacks in a guess; :meth:`seed` sets them from the point."""
        for name, s in self._slacks.items():
            values[f"slack_{name}"] = np.zeros(s.shape[0])

    def finish(self, w, p) -> None:
        """Compile the largest excess of each group over its interval at a point."""
        excess = [ca.mmax(g.excess) if g.phase is not None else g.excess
                  for g in self._groups]
        self._excess_function = ca.Function("excess", [w, p], [ca.vertcat(*excess)])

    def _excesses(self, w: np.ndarray, p: np.ndarray) -> list:
        values = np.array(self._excess_function(w, p)).ravel()
        out, k = [], 0
        for g in self._groups:
            n = 1 if g.phase is not None else 2
            out.append(values[k:k + n])
            k += n
        return out

    def seed(self, w0: np.ndarray, p: np.ndarray) -> np.ndarray:
        """``w0`` with each slack just large enough for its rows to hold there."""
        w = np.array(w0, dtype=float)
        for g, e in zip(self._groups, self._excesses(w, p)):
            block = self._variables.slice(f"slack_{g.name}")
            if g.phase is None:
                w[block] = np.maximum(w[block], np.maximum(e, 0.0))
            else:
                w[block] = np.maximum(w[block], max(float(e[0]), 0.0))
        return w

    def read(self, w: np.ndarray, p: np.ndarray) -> dict:
        """Per condition: ``slack`` (array) and ``phases`` where the rows use it all."""
        out = {name: {"slack": np.asarray(w[self._variables.slice(f"slack_{name}")],
                                          dtype=float).copy(), "phases": []}
               for name in self._slacks}
        for g, e in zip(self._groups, self._excesses(w, p)):
            if g.phase is None:
                continue
            s = float(out[g.name]["slack"][0])
            # the rows of this phase reach the relaxed bound: this phase needs the slack
            if s > 0.0 and float(e[0]) >= s - 1e-3 * max(s, 1e-3):
                out[g.name]["phases"].append(g.phase)
        return out
