"""A flown ascent: samples, events, the loss budget, dense solutions and peaks."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np
from scipy.optimize import minimize_scalar

from ascentplan.models import dynamics
from ascentplan.problem.model import Phase
from ascentplan.replay.budget import LOSS_NAMES, LOSS_QUANTITIES

#: quantities whose peak is of the magnitude: an angle of attack of either sign loads the
#: vehicle alike
_MAGNITUDE_PEAKS = ("q_alpha", "angle_of_attack")


def require_pandas():
    """The ``pandas`` module, or an ImportError that says how to install it.

    pandas is an optional extra: only the ``to_dataframe`` methods need it.
    """
    try:
        import pandas
    except ImportError as exc:
        raise ImportError("to_dataframe needs pandas, an optional extra of ascentplan: "
                          "pip install \"ascentplan[pandas]\" (or pip install pandas)") from exc
    return pandas


@dataclass
class Trajectory:
    """A flown ascent: samples, events, the loss budget and dense solutions.

    Attributes
    ----------
    dynamics : str
        Name of the dynamics kind (a key of :data:`ascentplan.models.dynamics.DYNAMICS`);
        :attr:`kind` is the kind itself.
    time : numpy.ndarray, shape (N,)
        Sample times from liftoff [s]; within a phase strictly increasing, and the time
        of a phase boundary appears once in each of the two phases (so the mass drop at
        staging shows as two samples at one time).
    state : numpy.ndarray, shape (n, N)
        Flight states, see ``state_names``.
    controls : numpy.ndarray, shape (n_u, N)
        Throttle and, planar, pitch [rad] as flown.
    phase : numpy.ndarray of int, shape (N,)
        Index of the phase of each sample.
    phase_kinds, phase_stages : tuple
        Kind (``"rise"``, ``"burn"``, ``"coast"``) and stage index of each phase flown;
        a final coast to apogee added by
        :func:`~ascentplan.replay.simulate.simulate` comes last.
    phase_bounds : list of (float, float)
        Start and end time of each phase [s].
    quantities : dict of numpy.ndarray
        :func:`ascentplan.models.dynamics.flight_quantities` at the samples (``altitude``,
        ``speed``, ``flight_path_angle``, ``dynamic_pressure``, ``mach``,
        ``axial_acceleration`` [g0], ``angle_of_attack``, ``q_alpha``, ``thrust``,
        ``drag``, ...), plus the running totals of the loss budget
        (:data:`LOSS_QUANTITIES`) [m s^-1].
    events : list of dict
        ``kind`` (``liftoff``, ``burnout``, ``flameout``, ``staging``, ``apogee``,
        ``impact``), ``time`` [s], ``phase``, ``stage``, ``altitude`` [m], ``speed``
        [m s^-1], ``flight_path_angle`` [rad], ``mass`` [kg], and for some kinds
        ``propellant_remaining`` [kg], ``scheduled_end`` [s], ``dropped_mass`` [kg].
    losses : dict
        The velocity budget to burnout (end of the last powered phase) [m s^-1]:
        ``ideal``, ``achieved``, ``gravity``, ``drag``, ``steering``,
        ``back_pressure``; see :mod:`ascentplan.replay.budget`.
    status : str
        ``"ok"``, ``"impact"`` or ``"failed"``; ``message`` says why.
    solutions : list of scipy.integrate.OdeSolution or None
        Dense solution of each phase over [start, end]: the flight states followed by
        the budget terms; None for a phase of zero length.
    """

    dynamics: str
    time: np.ndarray
    state: np.ndarray
    controls: np.ndarray
    phase: np.ndarray
    phase_kinds: tuple
    phase_stages: tuple
    phase_bounds: list
    quantities: dict
    events: list
    losses: dict
    status: str
    message: str
    solutions: list
    state_names: tuple = ()
    control_names: tuple = ()
    _model: Any = field(default=None, repr=False)
    _props: list = field(default_factory=list, repr=False)
    _rules: list = field(default_factory=list, repr=False)
    _fixed: list = field(default_factory=list, repr=False)

    @property
    def kind(self) -> dynamics.DynamicsKind:
        """The :class:`~ascentplan.models.dynamics.DynamicsKind` flown."""
        return dynamics.dynamics_kind(self.dynamics)

    @property
    def ok(self) -> bool:
        return self.status == "ok"

    def columns(self) -> list[tuple[str, np.ndarray]]:
        """The sampled time histories as ``(name, values)`` pairs, SI units in the names.

        The columns of ``trajectory.csv`` in its order: time_s, phase, the kind's state
        and control columns (planar: altitude_m, speed_m_s, flight_path_angle_deg,
        mass_kg, throttle, pitch_deg, radius_m, range_angle_deg, radial_speed_m_s,
        horizontal_speed_m_s), relative_speed_m_s, dynamic_pressure_kPa, mach,
        axial_acceleration_g0, the kind's extra columns (planar: angle_of_attack_deg,
        q_alpha_kPa_deg), thrust_N, drag_N, mass_flow_kg_s, density_kg_m3, pressure_Pa and
        the running loss budget (ideal_velocity_increment_m_s, gravity_loss_m_s, ...) [m s^-1].
        """
        q = self.quantities
        kind = self.kind

        def values(spec):
            header, source, name, factor = spec
            if source == "state":
                v = self.state[kind.index(name)]
            elif source == "control":
                v = self.controls[kind.control_index(name)]
            else:
                v = q[name]
            return header, v * factor if factor != 1.0 else v

        cols = [("time_s", self.time), ("phase", self.phase.astype(float))]
        cols += [values(spec) for spec in kind.trajectory_columns]
        cols += [("relative_speed_m_s", q["relative_speed"]),
                 ("dynamic_pressure_kPa", q["dynamic_pressure"] / 1000.0), ("mach", q["mach"]),
                 ("axial_acceleration_g0", q["axial_acceleration"])]
        cols += [values(spec) for spec in kind.extra_trajectory_columns]
        cols += [("thrust_N", q["thrust"]), ("drag_N", q["drag"]),
                 ("mass_flow_kg_s", q["mass_flow"]), ("density_kg_m3", q["density"]),
                 ("pressure_Pa", q["pressure"])]
        cols += [(f"{LOSS_QUANTITIES[name]}_m_s", q[LOSS_QUANTITIES[name]])
                 for name in LOSS_NAMES]
        return cols

    def to_dataframe(self):
        """The samples as a :class:`pandas.DataFrame`, one row per sample.

        Columns as in ``trajectory.csv`` (:meth:`columns`, SI units in the names), with
        ``phase`` as an integer and two more columns naming each sample's phase:
        ``phase_kind`` (``rise``, ``burn``, ``coast``) and ``stage`` (index, first stage
        0).

        Raises
        ------
        ImportError
            When pandas is not installed (``pip install "ascentplan[pandas]"``).
        """
        pd = require_pandas()
        data = {name: np.asarray(v, dtype=float) for name, v in self.columns()}
        phase = np.asarray(self.phase, dtype=int)
        data["phase"] = phase
        frame = pd.DataFrame(data)
        at = frame.columns.get_loc("phase") + 1
        frame.insert(at, "phase_kind", [self.phase_kinds[k] for k in phase])
        frame.insert(at + 1, "stage", np.asarray([self.phase_stages[k] for k in phase],
                                                 dtype=int))
        return frame

    def burnout_index(self) -> int:
        """Index of the last sample of the last powered phase flown."""
        powered = [k for k, (kind, stage) in enumerate(zip(self.phase_kinds, self.phase_stages))
                   if Phase(kind, stage).powered]
        last = max(powered) if powered else 0
        idx = np.nonzero(self.phase <= last)[0]
        return int(idx[-1]) if idx.size else len(self.time) - 1

    def burnout_state(self) -> np.ndarray:
        """Flight state at the end of the last powered phase flown."""
        return self.state[:, self.burnout_index()].copy()

    def burnout_time(self) -> float:
        """Time [s] of the end of the last powered phase flown."""
        return float(self.time[self.burnout_index()])

    def state_at(self, t: float, phase: int | None = None) -> np.ndarray:
        """Flight state at time ``t`` [s] from the dense solution.

        At a phase boundary the later phase is taken unless ``phase`` says otherwise.
        """
        k = self._phase_of(t) if phase is None else int(phase)
        return self._augmented_at(k, t)[:len(self.state_names)]

    def state_at_phase_end(self, k: int) -> np.ndarray:
        """Flight state at the end of phase ``k`` as flown (before any mass dropped there)."""
        return np.asarray(self._fixed[k][:len(self.state_names)], dtype=float).copy()

    def _phase_of(self, t):
        for k in range(len(self.phase_bounds) - 1, -1, -1):
            if self.phase_bounds[k][0] <= t:
                return k
        return 0

    def _augmented_at(self, k, t):
        sol = self.solutions[k]
        if sol is None:
            return self._fixed[k].copy()
        t0, t1 = self.phase_bounds[k]
        return sol(min(max(t, t0), t1))

    def _rule_at(self, k, t):
        starts = [s for s, _ in self._rules[k]]
        j = max(int(np.searchsorted(starts, t, side="right")) - 1, 0)
        return self._rules[k][j][1]

    def quantities_at(self, t: float, phase: int | None = None) -> dict:
        """Flight quantities (as in :attr:`quantities`) at time ``t`` [s], as floats.

        Evaluated on the dense solution with the controls as flown; at a phase boundary
        the later phase is taken unless ``phase`` says otherwise.
        """
        k = self._phase_of(t) if phase is None else int(phase)
        y = self._augmented_at(k, t)
        n = len(self.state_names)
        x = y[:n]
        u = np.asarray(self._rule_at(k, t)(t, x), dtype=float)
        q = {name: float(v) for name, v in
             dynamics.flight_quantities(x, u, self._model, self._props[k]).items()}
        for i, name in enumerate(LOSS_NAMES):
            q[LOSS_QUANTITIES[name]] = float(y[n + i])
        return q

    def peak(self, name: str, phases=None) -> tuple[float, float, int]:
        """Extreme of a quantity, refined between samples on the dense solution.

        The largest sample is refined by a bounded scalar maximisation between its two
        neighbours in the same phase.

        Parameters
        ----------
        name : str
            A key of :attr:`quantities` for its maximum (``dynamic_pressure``,
            ``axial_acceleration``, ...; ``q_alpha`` and ``angle_of_attack`` by absolute
            value), or ``"min_altitude"`` for the lowest altitude.
        phases : iterable of int, optional
            Only these phases are searched; default all.

        Returns
        -------
        value, time, index : float, float [s], int
            The extreme, its time, and the index of the largest sample.
        """
        minimum = name == "min_altitude"
        key = "altitude" if minimum else name
        if key not in self.quantities:
            raise ValueError(f"peak: unknown quantity {name!r} for a {self.dynamics} "
                             f"trajectory; valid: min_altitude, "
                             f"{', '.join(sorted(self.quantities))}")
        return self.extreme(key, sense="min" if minimum else "max",
                            magnitude=key in _MAGNITUDE_PEAKS, phases=phases, label=name)

    def extreme(self, quantity: str, *, sense: str = "max", magnitude: bool = False,
                phases=None, refine: bool = True, label: str | None = None
                ) -> tuple[float, float, int]:
        """Largest or smallest value of a quantity over the samples of some phases.

        The one search for a peak: :meth:`peak` and the limit checks of
        :func:`ascentplan.replay.verify.limit_peaks` both use it.

        Parameters
        ----------
        quantity : str
            A key of :attr:`quantities`.
        sense : str
            ``"max"`` or ``"min"``.
        magnitude : bool
            Search |value| (the value returned is then the magnitude).
        phases : iterable of int, optional
            Only these phases are searched; default all.
        refine : bool
            Refine the extreme sample by a bounded scalar search between its two
            neighbours in the same phase, on the dense solution; else the sample itself.
        label : str, optional
            The name used in error messages; default ``quantity``.

        Returns
        -------
        value, time, index : float, float [s], int
            The extreme, its time, and the index of the extreme sample.
        """
        values = np.asarray(self.quantities[quantity], dtype=float)
        if magnitude:
            values = np.abs(values)
        sign = -1.0 if sense == "min" else 1.0
        searched = np.isfinite(values)
        if phases is not None:
            searched &= np.isin(self.phase, list(phases))
        if not np.any(searched):
            raise ValueError(f"peak: no samples of {label or quantity!r} in phases {phases}")
        i = int(np.argmax(np.where(searched, sign * values, -np.inf)))
        best_value, best_time = float(values[i]), float(self.time[i])
        if not refine:
            return best_value, best_time, i
        return self._refined(quantity, sign, magnitude, i, best_value, best_time)

    def _refined(self, key, sign, magnitude, i, best_value, best_time):
        """The extreme near sample ``i`` on the dense solution of its phase."""
        k = int(self.phase[i])
        if self.solutions[k] is None:
            return best_value, best_time, i
        lo = self.time[i - 1] if i > 0 and self.phase[i - 1] == k else self.time[i]
        hi = self.time[i + 1] if i + 1 < len(self.time) and self.phase[i + 1] == k \
            else self.time[i]
        if hi <= lo:
            return best_value, best_time, i

        def objective(t):
            v = self.quantities_at(t, phase=k)[key]
            return -sign * (abs(v) if magnitude else v)

        res = minimize_scalar(objective, bounds=(float(lo), float(hi)), method="bounded",
                              options={"xatol": 1e-9 * max(1.0, float(hi))})
        if np.isfinite(res.fun) and -res.fun > sign * best_value:
            best_value, best_time = sign * float(-res.fun), float(res.x)
        return best_value, best_time, i
