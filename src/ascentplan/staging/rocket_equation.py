"""The analytic optimal mass split of serial stages by the rocket equation alone (no trajectory)."""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import asdict, dataclass

import numpy as np
from scipy.optimize import brentq


class StagingError(ValueError):
    """No feasible stage-mass split exists for the requested ideal velocity increment."""


@dataclass(frozen=True)
class StageSplit:
    """An optimal stage-mass split, first stage first.

    Attributes
    ----------
    stage_names : tuple of str
        Label of each stage (``"1"``, ``"2"``, ... when none was given).
    exhaust_speed : tuple of float
        Vacuum effective exhaust speed of each stage [m s^-1].
    structural_ratio : tuple of float
        dry / (dry + propellant) of each stage [-].
    mass_ratio : tuple of float
        n_i = ignition mass / burnout mass of each stage [-]; exactly 1 for a stage
        that the optimum leaves empty.
    propellant_mass : tuple of float
        Propellant of each stage [kg].
    dry_mass : tuple of float
        Dry mass of each stage [kg].
    stage_mass : tuple of float
        Propellant plus dry mass of each stage [kg].
    delta_v : tuple of float
        Ideal velocity increment of each stage, c_i ln n_i [m s^-1] (the field names say
        ``delta_v`` for short).
    payload_mass : float
        Mass above the last stage [kg].
    liftoff_mass : float
        Payload plus all stages [kg].
    payload_fraction : float
        payload / liftoff [-].
    multiplier : float
        The Lagrange multiplier eta of the optimal-staging problem [s m^-1]: the growth
        of ln(liftoff/payload) per m/s of ideal velocity increment along the optimal
        splits; its inverse is the ideal velocity increment one more unit of
        ln(liftoff/payload) buys [m s^-1].
    total_delta_v : float
        The ideal velocity increment of the whole vehicle, the sum over the stages
        [m s^-1].
    """

    stage_names: tuple[str, ...]
    exhaust_speed: tuple[float, ...]
    structural_ratio: tuple[float, ...]
    mass_ratio: tuple[float, ...]
    propellant_mass: tuple[float, ...]
    dry_mass: tuple[float, ...]
    stage_mass: tuple[float, ...]
    delta_v: tuple[float, ...]
    payload_mass: float
    liftoff_mass: float
    payload_fraction: float
    multiplier: float
    total_delta_v: float

    def as_dict(self) -> dict:
        """Plain lists and floats, ready for ``json.dumps``."""
        return {key: list(value) if isinstance(value, tuple) else value
                for key, value in asdict(self).items()}


def optimal_split(exhaust_speeds: Sequence[float], structural_ratios: Sequence[float], *,
                  payload_mass: float | None = None, delta_v: float | None = None,
                  liftoff_mass: float | None = None,
                  stage_names: Sequence[str] | None = None) -> StageSplit:
    """The optimal mass split of serial stages by the rocket equation.

    Give exactly two of ``payload_mass``, ``delta_v`` and ``liftoff_mass``:

    * ``delta_v`` and ``payload_mass``: the split of least liftoff mass (largest payload
      fraction) that reaches the ideal velocity increment.
    * ``liftoff_mass`` and ``payload_mass``: the split of largest ideal velocity increment with the
      liftoff mass fixed.
    * ``delta_v`` and ``liftoff_mass``: the split of largest payload; the same problem as
      the first, scaled to the given liftoff mass.

    Parameters
    ----------
    exhaust_speeds : sequence of float
        Vacuum effective exhaust speed of each stage, first stage first [m s^-1].
    structural_ratios : sequence of float
        dry / (dry + propellant) of each stage, each in (0, 1) [-].
    payload_mass : float, optional
        Mass above the last stage [kg].
    delta_v : float, optional
        Required total ideal velocity increment [m s^-1].
    liftoff_mass : float, optional
        Total mass at liftoff [kg].
    stage_names : sequence of str, optional
        Labels of the stages, used in results and error messages.

    Returns
    -------
    StageSplit

    Raises
    ------
    ValueError
        For bad input, naming the argument and the value.
    StagingError
        When ``delta_v`` is at or beyond the reach of the stages at any split.

    Notes
    -----
    Stage ``i`` (1 is the first to burn) has exhaust speed ``c_i``, stage mass
    ``M_i = m_prop,i + m_dry,i``, structural ratio ``eps_i = m_dry,i / M_i`` and ignition
    mass ``m_0,i`` (the whole stack when it lights); ``m_0,N+1`` is the payload.
    Its mass ratio is ``n_i = m_0,i / (m_0,i - m_prop,i)`` and its ideal velocity increment is
    ``c_i ln n_i``. Eliminating ``M_i`` from the definition of ``n_i`` gives the stack ratio

        r_i = m_0,i / m_0,i+1 = n_i (1 - eps_i) / (1 - n_i eps_i),

    so a split is feasible only with ``1 <= n_i < 1/eps_i`` and
    ``liftoff / payload = prod r_i``.

    Both optimisation problems below are written in ``x_i = ln n_i >= 0``:

        J(x)  = ln(liftoff / payload) = sum g_i(x_i),
                g_i(x) = x + ln(1 - eps_i) - ln(1 - eps_i e^x),
        DV(x) = sum c_i x_i.

    Each ``g_i`` is increasing and convex, ``g_i'(x) = 1 / (1 - eps_i e^x)``.

    *Least liftoff mass for a given ideal velocity increment.* Minimise ``J(x)``
    subject to ``DV(x) = dv`` and ``x_i >= 0``. The objective is convex and the constraints linear,
    so the Karush-Kuhn-Tucker conditions are necessary and sufficient:
    ``g_i'(x_i) = eta c_i + nu_i`` with ``nu_i >= 0`` and ``nu_i x_i = 0``. A stage that
    carries propellant (``x_i > 0``) has ``1 / (1 - eps_i n_i) = eta c_i``, which is the
    textbook optimum [1]_

        n_i = (c_i eta - 1) / (c_i eps_i eta);

    a stage with ``c_i eta (1 - eps_i) <= 1`` (``g_i'(0) >= eta c_i``) is left empty,
    ``n_i = 1``. Both cases are ``n_i(eta) = 1 + max(0, c_i eta (1 - eps_i) - 1) /
    (c_i eps_i eta)``, and each stage mass follows from the mass above it as
    ``M_i = m_0,i+1 max(0, c_i eta (1 - eps_i) - 1) / eps_i``.

    *Largest ideal velocity increment for a given liftoff mass.* Maximise ``DV(x)``
    subject to ``J(x) = L = ln(liftoff / payload)`` and ``x_i >= 0``. Because every ``g_i`` is
    increasing and every ``c_i > 0``, the equality may be relaxed to ``J(x) <= L``
    without changing the optimum (slack could always buy more ideal velocity
    increment); the relaxed problem maximises a linear function over a convex set, so
    its KKT conditions are sufficient. Stationarity of ``DV - mu (J - L) + sum kappa_i x_i`` gives
    ``g_i'(x_i) = c_i / mu`` for a stage in use and ``c_i / mu <= g_i'(0)`` for an empty
    one: the same ``n_i(eta)`` with ``eta = 1 / mu``. Here ``eta`` is fixed not by the
    ideal velocity increment but by the masses: the product of the stack ratios must
    match,

        prod r_i(eta) = liftoff / payload,
        r_i(eta) = 1 + max(0, c_i eta (1 - eps_i) - 1) / eps_i,

    (the product of the stage *mass ratios* ``n_i`` is not the liftoff-to-payload ratio;
    the stack ratios ``r_i`` are). So both problems follow the same one-parameter family
    of splits; the optimum ideal velocity increment at a liftoff mass is the liftoff
    optimum at that ideal velocity increment. By the envelope theorem
    ``eta = dJ*/d(dv)`` and ``1/eta = dDV*/dL``.

    *The multiplier.* Below ``eta_0 = min_i 1 / (c_i (1 - eps_i))`` every stage is
    empty. Above it ``DV(eta)`` and ``J(eta)`` rise strictly and continuously;
    ``J -> infinity`` and ``DV -> DV_max = sum c_i ln(1/eps_i)`` as ``eta -> infinity``
    (``n_i -> 1/eps_i``). An ideal velocity increment at or beyond ``DV_max`` is
    therefore infeasible at any liftoff mass. The root of ``DV(eta) = dv`` is
    bracketed by ``eta_0`` and
    ``eta_1 = max_i 1/c_i + 2 N / (DV_max - dv)``: from ``ln(1 - u) >= -u / (1 - u)``,
    ``DV(eta) >= DV_max - sum_i 1 / (eta - 1/c_i)``, which exceeds ``dv`` at ``eta_1``.
    The root of ``J(eta) = L`` is bracketed by ``eta_0`` and
    ``eta_1 = max_i (1 + e^(L/N) eps_i / (1 - eps_i)) / c_i``, where every
    ``r_i >= e^(L/N)``. Both roots are found with Brent's method.

    References
    ----------
    .. [1] H. D. Curtis, *Orbital Mechanics for Engineering Students*, chapter
       "Rocket vehicle dynamics", section "Optimal staging" (Lagrange multiplier method).
    """
    c = _positive_array("exhaust_speeds", exhaust_speeds, "m/s")
    eps = _structural_array(structural_ratios)
    if c.size != eps.size:
        raise ValueError(f"exhaust_speeds and structural_ratios must have one entry per "
                         f"stage, got {c.size} and {eps.size}")
    names = _stage_names(stage_names, c.size)
    given = {"payload_mass": payload_mass, "delta_v": delta_v, "liftoff_mass": liftoff_mass}
    present = sorted(k for k, v in given.items() if v is not None)
    if len(present) != 2:
        raise ValueError("give exactly two of payload_mass, delta_v and liftoff_mass, got "
                         + (", ".join(f"{k}={given[k]!r}" for k in present) or "none"))
    for key in present:
        _check_positive(key, given[key], "m/s" if key == "delta_v" else "kg")

    c_ref = float(c.max())  # the multiplier is solved for as the dimensionless eta*c_ref
    if delta_v is not None:
        delta_v = float(delta_v)
        limit = float(np.sum(c * np.log(1.0 / eps)))
        if delta_v >= limit:
            raise StagingError(_infeasible_message(delta_v, limit, c, eps, names))
        gap = limit - delta_v
        z_lo = float(np.min(c_ref / (c * (1.0 - eps))))
        z_hi = float(np.max(c_ref / c) + 2.0 * c.size * c_ref / gap)
        eta = _solve(lambda z: _total_delta_v(z / c_ref, c, eps) / delta_v - 1.0,
                     z_lo, z_hi) / c_ref
    else:
        payload_mass, liftoff_mass = float(payload_mass), float(liftoff_mass)
        if payload_mass >= liftoff_mass:
            raise ValueError(f"payload_mass must be less than liftoff_mass, got "
                             f"payload_mass={payload_mass:g} kg, liftoff_mass={liftoff_mass:g} kg")
        log_ratio = math.log(liftoff_mass / payload_mass)
        z_lo = float(np.min(c_ref / (c * (1.0 - eps))))
        z_hi = float(np.max(c_ref * (1.0 + math.exp(log_ratio / c.size) * eps / (1.0 - eps))
                            / c))
        eta = _solve(lambda z: _log_stack_ratio(z / c_ref, c, eps) - log_ratio,
                     z_lo, z_hi) / c_ref

    growth = _stage_growth(eta, c, eps)  # M_i / (mass above stage i)
    if payload_mass is None:
        payload_mass = float(liftoff_mass) / float(np.prod(1.0 + growth))
    split = _build(names, c, eps, eta, float(payload_mass), growth)
    if not (math.isfinite(split.liftoff_mass) and split.payload_mass > 0.0):
        raise StagingError(f"delta_v = {delta_v!r} m/s lies so close to the ideal limit of "
                           f"these stages that the masses are not representable")
    return split


def format_split(split: StageSplit) -> str:
    """A plain-text table of a stage split.

    Parameters
    ----------
    split : StageSplit

    Returns
    -------
    str
        One row per stage (mass ratio, ideal velocity increment [m/s], propellant, dry
        and stage mass [kg]), then payload, liftoff mass, payload fraction, the total
        ideal velocity increment and the Lagrange multiplier, explained in words.
    """
    if not isinstance(split, StageSplit):
        raise ValueError(f"split must be a StageSplit, got {type(split).__name__}")
    header = ("stage", "mass ratio", "ideal velocity increment [m/s]", "propellant [kg]",
              "dry [kg]", "stage mass [kg]")
    rows = [(name, f"{n:.4f}", f"{dv:.1f}", f"{mp:.1f}", f"{md:.1f}", f"{ms:.1f}")
            for name, n, dv, mp, md, ms in zip(split.stage_names, split.mass_ratio,
                                                 split.delta_v, split.propellant_mass,
                                                 split.dry_mass, split.stage_mass)]
    widths = [max(len(r[k]) for r in [header, *rows]) for k in range(len(header))]

    def line(cells):
        return "  ".join([cells[0].ljust(widths[0])]
                         + [cell.rjust(w) for cell, w in zip(cells[1:], widths[1:])])

    out = [line(header), "  ".join("-" * w for w in widths), *(line(r) for r in rows)]
    out += [
        "",
        f"payload mass                      {split.payload_mass:.1f} kg",
        f"liftoff mass                      {split.liftoff_mass:.1f} kg",
        f"payload fraction                  {split.payload_fraction:.6f}",
        f"ideal velocity increment, total   {split.total_delta_v:.1f} m/s",
        f"Lagrange multiplier eta           {split.multiplier:.6e} s/m",
        "  (the Lagrange multiplier of the optimal-staging problem: along the optimal",
        "  splits ln(liftoff/payload) grows by eta per m/s of ideal velocity increment;",
        f"  one more unit of ln(liftoff/payload) buys {1.0 / split.multiplier:.1f} m/s)",
    ]
    return "\n".join(out)


def split_for_vehicle(vehicle, *, delta_v: float | None = None,
                      hold: str = "liftoff_mass") -> StageSplit:
    """The optimal rocket-equation split of a vehicle's stages.

    Parameters
    ----------
    vehicle : ascentplan.problem.Vehicle
        Its stages give the exhaust speeds and structural ratios (a stage without a
        structural ratio uses dry / (dry + propellant) as written).
    delta_v : float, optional
        Required ideal velocity increment with ``hold="payload"`` [m s^-1]; default: the vehicle's
        own ideal velocity increment as written, sum c_i ln(ignition / burnout mass).
    hold : {"liftoff_mass", "payload"}
        ``"liftoff_mass"`` keeps the vehicle's liftoff and payload masses and maximises
        the ideal velocity increment; ``"payload"`` keeps the payload and minimises the liftoff mass
        for ``delta_v``.

    Returns
    -------
    StageSplit
    """
    holds = ("liftoff_mass", "payload")
    if hold not in holds:
        raise ValueError(f"hold must be one of {', '.join(holds)}, got {hold!r}")
    stages = getattr(vehicle, "stages", None)
    if not stages:
        raise ValueError(f"vehicle must be a Vehicle with at least one stage, got {vehicle!r}")
    c, eps, names = [], [], []
    for i, stage in enumerate(stages):
        ratio = stage.structural_ratio
        if ratio is None:
            total = stage.dry_mass + stage.propellant_mass
            if not total > 0.0:
                raise ValueError(f"vehicle.stages[{i}] ({stage.name}): dry_mass + "
                                 f"propellant_mass must be > 0 kg to give a structural "
                                 f"ratio, got {total!r}")
            ratio = stage.dry_mass / total
        if not 0.0 < ratio < 1.0:
            raise ValueError(f"vehicle.stages[{i}] ({stage.name}): structural ratio must "
                             f"be in (0, 1), got {ratio!r}")
        c.append(stage.exhaust_speed)
        eps.append(ratio)
        names.append(stage.name)
    if hold == "liftoff_mass":
        if delta_v is not None:
            raise ValueError(f"delta_v is only used with hold='payload', got "
                             f"delta_v={delta_v!r} with hold='liftoff_mass'")
        return optimal_split(c, eps, payload_mass=vehicle.payload_mass,
                             liftoff_mass=vehicle.liftoff_mass, stage_names=names)
    if delta_v is None:
        delta_v = sum(s.exhaust_speed * math.log(vehicle.ignition_mass(i)
                                                 / vehicle.burnout_mass(i))
                      for i, s in enumerate(stages))
    return optimal_split(c, eps, payload_mass=vehicle.payload_mass, delta_v=delta_v,
                         stage_names=names)


def _stage_growth(eta, c, eps):
    """M_i / m_0,i+1 at multiplier eta [s m^-1]; zero for a stage left empty."""
    return np.maximum(0.0, c * eta * (1.0 - eps) - 1.0) / eps


def _total_delta_v(eta, c, eps):
    """Ideal velocity increment of the optimal family at multiplier eta [m s^-1]."""
    excess = np.maximum(0.0, c * eta * (1.0 - eps) - 1.0)
    return float(np.sum(c * np.log1p(excess / (c * eps * eta))))


def _log_stack_ratio(eta, c, eps):
    """ln(liftoff / payload) of the optimal family at multiplier eta [-]."""
    return float(np.sum(np.log1p(_stage_growth(eta, c, eps))))


def _solve(residual, lo, hi):
    """Root of a continuous increasing residual with residual(lo) < 0 <= residual(hi)."""
    if not residual(lo) < 0.0:
        raise StagingError(f"no stage can carry propellant at the multiplier bracket's "
                           f"lower end {lo!r}")
    # The upper end is proven to enclose the root in exact arithmetic; rounding can only
    # spoil that within a few ulps of the limit of the ideal velocity increment, and
    # widening then is harmless.
    for _ in range(64):
        if residual(hi) >= 0.0:
            return brentq(residual, lo, hi, xtol=1e-15, rtol=4.0 * np.finfo(float).eps,
                          maxiter=500)
        hi *= 2.0
    raise StagingError("the requested ideal velocity increment lies too close to the ideal "
                       "limit of these stages for the multiplier to be found in floating point")


def _build(names, c, eps, eta, payload_mass, growth):
    stage_mass = np.empty_like(c)
    above = payload_mass
    for i in range(c.size - 1, -1, -1):  # each stage is sized by the mass it carries
        stage_mass[i] = growth[i] * above
        above += stage_mass[i]
    ignition = payload_mass + np.cumsum(stage_mass[::-1])[::-1]
    dry = eps * stage_mass
    propellant = stage_mass - dry
    mass_ratio = ignition / (ignition - propellant)
    stage_dv = c * np.log(mass_ratio)
    liftoff = float(ignition[0])

    def floats(a):
        return tuple(float(v) for v in a)

    return StageSplit(
        stage_names=tuple(names), exhaust_speed=floats(c), structural_ratio=floats(eps),
        mass_ratio=floats(mass_ratio), propellant_mass=floats(propellant),
        dry_mass=floats(dry), stage_mass=floats(stage_mass), delta_v=floats(stage_dv),
        payload_mass=payload_mass, liftoff_mass=liftoff,
        payload_fraction=payload_mass / liftoff, multiplier=float(eta),
        total_delta_v=float(np.sum(stage_dv)))


def _infeasible_message(delta_v, limit, c, eps, names):
    parts = [f"delta_v = {delta_v:g} m/s cannot be reached at any split: the ideal limit "
             f"of these stages, approached only as the liftoff mass grows without bound, "
             f"is sum c ln(1/eps) = {limit:.6g} m/s"]
    for i in range(c.size):
        try:
            # even with every other stage at its own limit, this one must make up the rest
            needed = math.exp((delta_v - limit) / c[i])
        except OverflowError:
            needed = math.inf
        parts.append(f"stage {_label(names, i)}: mass ratio would need n*eps = "
                     f"{needed:.4g} >= 1; its exhaust speed {c[i]:g} m/s and structural "
                     f"ratio {eps[i]:g} contribute at most {c[i] * math.log(1 / eps[i]):.6g} "
                     f"m/s")
    return "; ".join(parts)


def _label(names, i):
    default = str(i + 1)
    return default if names[i] == default else f"{i + 1} ({names[i]})"


def _stage_names(stage_names, count):
    if stage_names is None:
        return [str(i + 1) for i in range(count)]
    if isinstance(stage_names, str) or len(stage_names) != count:
        raise ValueError(f"stage_names must give one name per stage ({count}), "
                         f"got {stage_names!r}")
    return [str(n) for n in stage_names]


def _as_array(name, values):
    if isinstance(values, str):
        raise ValueError(f"{name} must be a sequence of numbers, got {values!r}")
    try:
        array = np.asarray(values, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be a sequence of numbers, got {values!r}") from None
    if array.ndim != 1 or array.size == 0:
        raise ValueError(f"{name} must be a non-empty sequence with one number per stage, "
                         f"got {values!r}")
    return array


def _positive_array(name, values, unit):
    array = _as_array(name, values)
    for i, v in enumerate(array.tolist()):
        if not (math.isfinite(v) and v > 0.0):
            raise ValueError(f"{name}[{i}] must be a finite number > 0 {unit}, got {v!r}")
    return array


def _structural_array(values):
    array = _as_array("structural_ratios", values)
    for i, v in enumerate(array.tolist()):
        if not 0.0 < v < 1.0:  # also rejects NaN
            raise ValueError(f"structural_ratios[{i}] must be in (0, 1), got {v!r}")
    return array


def _check_positive(name, value, unit):
    try:
        number = float(value)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be a number [{unit}], got {value!r}") from None
    if not (math.isfinite(number) and number > 0.0):
        raise ValueError(f"{name} must be a finite number > 0 {unit}, got {value!r}")
