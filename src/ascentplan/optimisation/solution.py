"""What goes into the collocation NLP (a first guess) and what comes out (a solution).

:class:`NLPSolution` also owns the reading of IPOPT's raw answer: the status the tool
reports (:meth:`NLPSolution.status_of`) and which path limits bind
(:meth:`NLPSolution.binding_of`).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

#: IPOPT return statuses that are its own verdict of infeasibility
_INFEASIBLE_RETURNS = ("Infeasible_Problem_Detected", "Local_Infeasibility")

#: a failed restoration counts as infeasible above this constraint violation (scaled rows)
_RESTORATION_VIOLATION = 1e-4

#: a scaled constraint row within this distance of its bound is at the bound
_AT_BOUND = 1e-4

#: a multiplier above this prices its row (the objective is scaled to order one)
_PRICED = 1e-7


@dataclass
class Guess:
    """A first guess on the mesh.

    Attributes
    ----------
    durations : list of float
        Per phase, its duration [s].
    states : list of ndarray
        Per phase, physical states (n_x, N) at the nodes.
    controls : list of ndarray
        Per phase, controls (n_u, N) at the nodes (throttle, pitch [rad]).
    payload_mass : float
        [kg]
    propellant : list of float
        Per stage, the propellant mass [kg].
    multipliers : dict or None
        ``lam_x``, ``lam_g`` of a previous solve on the same mesh, for a warm start.
    """

    durations: list
    states: list
    controls: list
    payload_mass: float
    propellant: list
    multipliers: dict | None = None
    #: per booster group, the propellant per booster [kg]; None: as the vehicle is written
    booster_propellant: list | None = None


@dataclass
class NLPSolution:
    """The optimiser's answer on its own mesh (physical units)."""

    status: str
    return_status: str
    success: bool
    iterations: int
    solve_time: float
    objective: float
    durations: list
    times: list  # per phase, absolute node times [s]
    states: list
    controls: list
    payload_mass: float
    propellant: list
    dry: list
    shadow_prices: dict  # limit name -> d objective / d bound (SI objective per SI bound)
    constraint_violation: float
    #: NLP parameter name -> d objective / d parameter per entry (SI), from the parameter
    #: multipliers (envelope theorem); meaningful at a converged optimum only
    sensitivities: dict = field(default_factory=dict)
    multipliers: dict = field(default_factory=dict)
    binding: list = field(default_factory=list)
    #: the elastic form only: per condition its ``slack`` and the ``phases`` that need it
    slacks: dict = field(default_factory=dict)
    #: the control-smoothness penalty at the solution, in the objective's SI unit (0 when
    #: ``mesh.control_smoothing`` is 0); :attr:`objective` does not include it
    smoothing_penalty: float = 0.0
    #: per booster group, the propellant per booster [kg] (a split may choose it)
    booster_propellant: list = field(default_factory=list)
    #: per booster group, its throttle setting [-] (chosen where the group gives a range)
    booster_setting: list = field(default_factory=list)

    @staticmethod
    def status_of(return_status: str, success: bool, violation: float) -> str:
        """``"optimal"``, ``"infeasible"`` or ``"failed"`` from IPOPT's answer.

        Parameters
        ----------
        return_status : str
            IPOPT's return status.
        success : bool
            Whether IPOPT reports success.
        violation : float
            Largest violation of a scaled constraint row where IPOPT stopped.
        """
        if success:
            return "optimal"
        if return_status in _INFEASIBLE_RETURNS or (
                return_status == "Restoration_Failed" and violation > _RESTORATION_VIOLATION):
            # IPOPT's own verdict; running out of iterations or time is a failure to
            # converge, whatever the constraint violation where it stopped
            return "infeasible"
        return "failed"

    @staticmethod
    def binding_of(limit_rows: dict, g: np.ndarray, lower: np.ndarray, upper: np.ndarray,
                   lam_g: np.ndarray, success: bool) -> list[str]:
        """Names of the path limits that bind, in the order of ``limit_rows``.

        Parameters
        ----------
        limit_rows : dict
            Limit name -> positions of its rows in the constraint vector.
        g, lower, upper, lam_g : ndarray
            Constraint values, their intervals and multipliers at the solver's answer.
        success : bool
            At a converged optimum a limit binds when a row sits at its bound with a
            multiplier that prices it; elsewhere, when a row is at or past its bound.
        """
        binding = []
        for name, rows in limit_rows.items():
            if rows.size == 0:
                continue
            vals, lb, ub = g[rows], lower[rows], upper[rows]
            at_bound = (vals >= ub - _AT_BOUND) | (vals <= lb + _AT_BOUND)
            if success:
                if np.any(at_bound & (np.abs(lam_g[rows]) > _PRICED)):
                    binding.append(name)
            elif np.any(at_bound | (vals > ub) | (vals < lb)):
                binding.append(name)
        return binding
