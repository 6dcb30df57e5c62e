"""The NLP's vectors laid out by name: decision variables, parameters and constraint rows.

IPOPT sees three flat vectors (the decision variables, the parameters and the constraint
values). Every piece of the ascent NLP is placed in them by name through one of the
layouts here, so the symbols, the bounds, the packing of a guess or a parameter set and the
reading of a solution cannot fall out of step: each is derived from the same record of
``name -> (start, shape)``. Blocks are column-major (CasADi's ``vec`` order).
"""

from __future__ import annotations

import casadi as ca
import numpy as np


def _bound_block(value, shape) -> np.ndarray:
    """A bound given as a scalar, or one value per row, spread over a block (column-major)."""
    if np.ndim(value):
        value = np.asarray(value, dtype=float).reshape(-1, 1)
    return np.array(np.broadcast_to(value, shape), dtype=float).flatten(order="F")


class VariableLayout:
    """Decision variables by name: one symbol per block, with its bounds.

    Parameters
    ----------
    symbol_type : type
        ``casadi.MX`` or ``casadi.SX``.

    Notes
    -----
    Blocks are laid out in the order they are added; that order is the order of the
    decision vector, and so the order in which IPOPT meets the variables.
    """

    def __init__(self, symbol_type):
        self._sym = symbol_type
        self._blocks: dict[str, tuple[int, tuple[int, int]]] = {}
        self._position: dict[str, int] = {}
        self._symbols = []
        self._lower = []
        self._upper = []
        self.size = 0

    def add(self, name: str, shape: tuple[int, int], lower=-np.inf, upper=np.inf):
        """Add a block of variables; returns its symbol (scaled units).

        ``lower`` and ``upper`` are scalars or one value per row of the block.
        """
        if name in self._blocks:
            raise ValueError(f"variable block {name!r} added twice")
        symbol = self._sym.sym(name, *shape)
        self._blocks[name] = (self.size, tuple(shape))
        self._position[name] = len(self._symbols)
        self._symbols.append(symbol)
        self._lower.append(_bound_block(lower, shape))
        self._upper.append(_bound_block(upper, shape))
        self.size += shape[0] * shape[1]
        return symbol

    def __contains__(self, name: str) -> bool:
        return name in self._blocks

    def names(self) -> list[str]:
        return list(self._blocks)

    def shape(self, name: str) -> tuple[int, int]:
        return self._blocks[name][1]

    def slice(self, name: str) -> slice:
        """Where block ``name`` sits in the decision vector."""
        start, (rows, cols) = self._blocks[name]
        return slice(start, start + rows * cols)

    def fix(self, name: str, rows, column: int, values) -> None:
        """Fix ``rows`` of one ``column`` of block ``name`` to ``values`` (both bounds)."""
        n_rows = self.shape(name)[0]
        lower, upper = self._lower[self._position[name]], self._upper[self._position[name]]
        for row, value in zip(rows, values):
            lower[column * n_rows + row] = value
            upper[column * n_rows + row] = value

    @property
    def vector(self):
        """All decision variables as one column."""
        return ca.vertcat(*[ca.vec(s) for s in self._symbols])

    @property
    def lower(self) -> np.ndarray:
        return np.concatenate(self._lower)

    @property
    def upper(self) -> np.ndarray:
        return np.concatenate(self._upper)

    def pack(self, values: dict) -> np.ndarray:
        """The decision vector from a value per block name (each block's shape or flat)."""
        missing = [name for name in self._blocks if name not in values]
        if missing:
            raise KeyError(f"no value for variable block(s) {', '.join(missing)}")
        parts = [np.asarray(values[name], dtype=float).reshape(shape, order="F")
                 .flatten(order="F") for name, (_, shape) in self._blocks.items()]
        return np.concatenate(parts)

    def block(self, w: np.ndarray, name: str) -> np.ndarray:
        """Block ``name`` of a decision vector ``w``, in its shape."""
        return np.asarray(w[self.slice(name)]).reshape(self.shape(name), order="F")


class ParameterLayout:
    """NLP parameters by name: one symbol vector, entries handed out by name.

    Parameters
    ----------
    symbol_type : type
        ``casadi.MX`` or ``casadi.SX``.
    sizes : sequence of (str, int)
        Name and length of each entry, in the order of the parameter vector.
    """

    def __init__(self, symbol_type, sizes):
        self._blocks: dict[str, tuple[int, int]] = {}
        start = 0
        for name, size in sizes:
            if name in self._blocks:
                raise ValueError(f"parameter {name!r} declared twice")
            self._blocks[name] = (start, int(size))
            start += int(size)
        self.size = start
        self.symbol = symbol_type.sym("p", self.size)

    def __contains__(self, name: str) -> bool:
        return name in self._blocks

    def scalar(self, name: str):
        """The symbol of a one-element parameter."""
        start, size = self._blocks[name]
        if size != 1:
            raise ValueError(f"parameter {name!r} has {size} entries, not one")
        return self.symbol[start]

    def entries(self, name: str) -> list:
        """The symbols of the entries of parameter ``name``, one per element."""
        start, size = self._blocks[name]
        return [self.symbol[start + i] for i in range(size)]

    def vector(self, values: dict) -> np.ndarray:
        """The parameter vector from a value (scalar or sequence) per name."""
        out = np.empty(self.size)
        for name, (start, size) in self._blocks.items():
            if name not in values:
                raise KeyError(f"no value for parameter {name!r}")
            out[start:start + size] = np.asarray(values[name], dtype=float).reshape(size)
        return out


    def split(self, vector) -> dict:
        """Each parameter's entries of a parameter-sized ``vector`` (values or multipliers),
        as arrays by name."""
        vector = np.asarray(vector, dtype=float).ravel()
        if vector.size != self.size:
            raise ValueError(f"parameter vector: expected {self.size} entries, "
                             f"got {vector.size}")
        return {name: vector[start:start + size].copy()
                for name, (start, size) in self._blocks.items()}


class ConstraintRows:
    """Constraint rows by name, with their intervals; a name may own several groups."""

    def __init__(self):
        self._exprs = []
        self._lower = []
        self._upper = []
        self._groups: dict[str, list[tuple[int, int]]] = {}
        self.size = 0

    def add(self, name: str, expr, lower, upper) -> None:
        """Rows ``lower <= vec(expr) <= upper`` (bounds scalar or one per row)."""
        expr = ca.vec(expr)
        n = expr.shape[0]
        self._exprs.append(expr)
        self._lower.append(np.full(n, lower, dtype=float) if np.isscalar(lower)
                           else np.asarray(lower, dtype=float))
        self._upper.append(np.full(n, upper, dtype=float) if np.isscalar(upper)
                           else np.asarray(upper, dtype=float))
        self._groups.setdefault(name, []).append((self.size, n))
        self.size += n

    def indices(self, name: str) -> np.ndarray:
        """Positions in the constraint vector of every row named ``name`` (may be empty)."""
        groups = self._groups.get(name, [])
        if not groups:
            return np.zeros(0, dtype=int)
        return np.concatenate([np.arange(s, s + n) for s, n in groups])

    @property
    def vector(self):
        return ca.vertcat(*self._exprs)

    @property
    def lower(self) -> np.ndarray:
        return np.concatenate(self._lower)

    @property
    def upper(self) -> np.ndarray:
        return np.concatenate(self._upper)
