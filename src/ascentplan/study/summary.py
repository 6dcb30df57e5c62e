"""What a study's rows say: the finite-difference slopes of a limit sweep against its
shadow prices, the objective of a one-input study against its exchange ratios, the reserve
a dispersion needs at a stated confidence, and readable tables of the rows."""

from __future__ import annotations

import math
from typing import Any

import numpy as np
from scipy.stats import binom

from ascentplan.problem.limits import LIMITS
from ascentplan.problem.objectives import OBJECTIVE_SPECS
from ascentplan.study.document import is_number
from ascentplan.study.files import STUDY_CSV, KeyUnit, change_keys_of, exchange_ratio

__all__ = ["DEFAULT_CONFIDENCE", "INTERVAL_CONFIDENCE", "curve_slopes", "dispersion_reserve",
           "quantile_interval", "reserve_lines", "summarise_study", "sweep_slopes"]

#: fraction of dispersed cases a reserve covers unless told otherwise (``--confidence``)
DEFAULT_CONFIDENCE = 0.95
#: confidence of the interval told beside a percentile of the cases (its sampling
#: uncertainty)
INTERVAL_CONFIDENCE = 0.90


def _sweep_limit(rows) -> str | None:
    """The limit a study sweeps alone (with plain numbers), or None."""
    keys = {tuple(change_keys_of(r)) for r in rows}
    if len(keys) != 1:
        return None
    (only,) = keys
    if len(only) != 1 or not only[0].startswith("limits.") or only[0][7:] not in LIMITS:
        return None
    if not all(is_number(r[only[0]]) for r in rows):
        return None
    return only[0][7:]


def sweep_slopes(rows) -> list:
    """Finite-difference slopes of the objective against the bound of a one-limit sweep.

    For each pair of neighbouring bounds (sorted) whose points both converged: the slope
    (objective difference over bound difference) in the shadow price's unit (objective
    unit per limit user unit), next to the shadow prices reported at both ends. At a
    smooth optimum the slope lies near the mean of the two prices (exactly between them
    when the objective is concave in the bound).

    Returns
    -------
    list of dict
        Keys ``lower_index``, ``upper_index``, ``lower_bound``, ``upper_bound`` (user
        unit), ``slope``, ``lower_price``, ``upper_price``, ``mean_price``. Empty when the
        rows are not a one-limit sweep.
    """
    name = _sweep_limit(rows)
    if name is None:
        return []
    spec = LIMITS[name]
    key = f"limits.{name}"
    ordered = sorted(rows, key=lambda r: r[key])
    out = []
    for a, b in zip(ordered, ordered[1:]):
        x_a, x_b = spec.to_user(a[key]), spec.to_user(b[key])
        usable = all(r.get("objective") is not None and
                     r.get(f"{name}.shadow_price") is not None for r in (a, b))
        if not usable or x_b == x_a:
            continue
        p_a, p_b = a[f"{name}.shadow_price"], b[f"{name}.shadow_price"]
        out.append({"lower_index": a["index"], "upper_index": b["index"],
                    "lower_bound": x_a, "upper_bound": x_b,
                    "slope": (b["objective"] - a["objective"]) / (x_b - x_a),
                    "lower_price": p_a, "upper_price": p_b, "mean_price": 0.5 * (p_a + p_b)})
    return out


def _fmt(value: Any, spec: str = ".6g") -> str:
    if value is None:
        return "-"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, float):
        return format(value, spec)
    return str(value)


def _table(header: list, lines: list) -> list:
    widths = [max(len(h), *(len(line[i]) for line in lines)) if lines else len(h)
              for i, h in enumerate(header)]
    text = ["  ".join(h.rjust(w) for h, w in zip(header, widths))]
    text += ["  ".join(c.rjust(w) for c, w in zip(line, widths)) for line in lines]
    return text


def _elide(lines: list, max_rows: int, total: int) -> list:
    if len(lines) <= max_rows:
        return lines
    half = max(1, max_rows // 2)
    return lines[:half] + [f"... {total - 2 * half} rows not shown (all in {STUDY_CSV})"] + \
        lines[-half:]


def summarise_study(rows, *, max_rows: int = 40, units: dict | None = None,
                    reserve: dict | None = None) -> str:
    """A readable table of a study's rows.

    For a one-limit sweep: the objective against the bound, the peak, the shadow price,
    and the finite-difference slope from the previous bound next to the mean of the two
    shadow prices (they should agree where the optimum is smooth in the bound). For a
    study of one other input: the objective against the input with the exchange ratio
    of each point and the slope from the previous point. For other studies: the changes
    and the objective per point, then the statistics of the objective over the converged
    points and, per key varied by plain numbers, its correlation with the objective and
    the objective change per 1 % change of the key (least squares); for a dispersion,
    the reserve (:func:`reserve_lines`).

    Parameters
    ----------
    rows : list of dict
        Rows as returned by :func:`~ascentplan.study.runner.run_study` (or read from
        ``study.jsonl``).
    max_rows : int
        Tables longer than this show their first and last rows only.
    units : dict, optional
        :class:`~ascentplan.study.files.KeyUnit` per changed key
        (:func:`~ascentplan.study.files.key_units`); values are shown in these units,
        else as the points hold them.
    reserve : dict, optional
        A dispersion's :func:`dispersion_reserve`.
    """
    rows = sorted(rows, key=lambda r: r["index"])
    if not rows:
        return "no points"
    counts: dict = {}
    for r in rows:
        counts[r["status"]] = counts.get(r["status"], 0) + 1
    raised = sum(1 for r in rows if r.get("error"))
    unit = next((r["objective_unit"] for r in rows if r.get("objective_unit")), "")
    objective = next((r["objective_name"] for r in rows if r.get("objective_name")), "objective")
    head = [f"{len(rows)} points: " + ", ".join(f"{n} {s}" for s, n in counts.items())
            + (f" ({raised} raised an error; see the error column)" if raised else "")]
    name = _sweep_limit(rows)
    if name is not None:
        return "\n".join(head + _sweep_table(rows, name, objective, unit, max_rows))
    units = units or {}
    keys = list(dict.fromkeys(k for r in rows for k in change_keys_of(r)))
    if len(keys) == 1 and keys[0] in units and reserve is None:
        return "\n".join(head + _curve_table(rows, keys[0], units[keys[0]], objective,
                                              unit, max_rows))
    tail = reserve_lines(reserve) if reserve else []
    nominal = reserve.get("nominal_index") if reserve else None
    return "\n".join(head + _generic_table(rows, objective, unit, max_rows, units, nominal)
                     + tail)


def curve_slopes(rows, key: str, unit: KeyUnit, objective_unit: str) -> list:
    """The objective of a one-input study against the input, in order of the input.

    Returns
    -------
    list of dict
        Per row: ``index``, ``x`` (the input in ``unit.shown``), ``objective``,
        ``ratio`` (the row's exchange ratio for the input, objective unit per input unit,
        or None), ``slope`` (finite difference from the previous converged point, or
        None), ``status``, ``verified``.
    """
    points = []
    for r in rows:
        x = unit.user_value(r.get(key))
        if x is not None:
            points.append({"index": r["index"], "x": x, "objective": r.get("objective"),
                           "ratio": exchange_ratio(r, key, unit, objective_unit),
                           "status": r.get("status"), "verified": r.get("verified"),
                           "slope": None})
    points.sort(key=lambda p: p["x"])
    previous = None
    for p in points:
        if p["objective"] is None:
            continue
        if previous is not None and p["x"] != previous["x"]:
            p["slope"] = (p["objective"] - previous["objective"]) / (p["x"] - previous["x"])
        previous = p
    return points


def _curve_table(rows, key, unit: KeyUnit, objective, objective_unit, max_rows) -> list:
    per = f"{objective_unit} per {unit.label}"
    lines = [[str(p["index"]), _fmt(p["x"]), p["status"], _fmt(p["objective"], ".7g"),
              _fmt(p["ratio"], ".5g"), _fmt(p["slope"], ".5g"), _fmt(p["verified"])]
             for p in curve_slopes(rows, key, unit, objective_unit)]
    header = ["index", f"{key} [{unit.label}]", "status", f"{objective} [{objective_unit}]",
              f"exchange ratio [{per}]", "slope from previous", "verified"]
    return _elide(_table(header, lines), max_rows + 1, len(lines)) + [
        f"exchange ratio: d(objective)/d(input) of each optimum [{per}] (- where the result "
        f"has none); slope from previous: finite difference between neighbouring points"]


def _sweep_table(rows, name, objective, unit, max_rows) -> list:
    spec = LIMITS[name]
    price_unit = f"{unit} per {spec.unit}"
    key = f"limits.{name}"
    slopes = {s["upper_index"]: s for s in sweep_slopes(rows)}
    lines = []
    for r in sorted(rows, key=lambda r: r[key]):
        s = slopes.get(r["index"])
        check = "-"
        if s is not None and s["mean_price"]:
            check = f"{100.0 * (s['slope'] / s['mean_price'] - 1.0):+.1f} %"
        lines.append([str(r["index"]), _fmt(spec.to_user(r[key])), r["status"],
                      _fmt(r.get("objective"), ".7g"), _fmt(r.get(f"{name}.peak"), ".5g"),
                      _fmt(r.get(f"{name}.active")), _fmt(r.get(f"{name}.shadow_price"), ".5g"),
                      _fmt(None if s is None else s["slope"], ".5g"),
                      _fmt(None if s is None else s["mean_price"], ".5g"), check,
                      _fmt(r.get("verified"))])
    header = ["index", f"{name} [{spec.unit}]", "status", f"{objective} [{unit}]",
              f"peak [{spec.unit}]", "active", f"shadow price [{price_unit}]",
              "slope from previous", "mean price of pair", "slope vs price", "verified"]
    table = _elide(_table(header, lines), max_rows + 1, len(lines))
    return table + [f"slope from previous: finite difference of the objective between "
                    f"neighbouring bounds [{price_unit}], to compare with the mean of the "
                    f"two shadow prices"]


def _number_or_nan(value: Any) -> float:
    return float(value) if is_number(value) else np.nan


def _statistics(good: list, keys: list, objective: str, unit: str) -> list:
    y = np.array([r["objective"] for r in good])
    p5, p50, p95 = np.percentile(y, [5, 50, 95])
    out = [f"{objective} over {len(good)} optimal points [{unit}]: mean {y.mean():.6g}, "
           f"standard deviation {y.std(ddof=1):.4g}, min {y.min():.6g}, 5 % {p5:.6g}, "
           f"median {p50:.6g}, 95 % {p95:.6g}, max {y.max():.6g}"]
    for k in keys:
        x = np.array([_number_or_nan(r.get(k)) for r in good], dtype=float)
        ok = np.isfinite(x)
        if ok.sum() < 3 or np.std(x[ok]) == 0.0 or np.std(y[ok]) == 0.0:
            continue
        xs, ys = x[ok], y[ok]
        corr = float(np.corrcoef(xs, ys)[0, 1])
        slope = float(np.polyfit(xs, ys, 1)[0])
        out.append(f"  {k}: correlation {corr:+.3f}, {slope * 0.01 * abs(xs.mean()):+.4g} "
                   f"{unit} per +1 % (least squares)")
    return out


def _generic_table(rows, objective, unit, max_rows, units: dict, nominal=None) -> list:
    keys = list(dict.fromkeys(k for r in rows for k in change_keys_of(r)))

    def shown(r, k):
        return units[k].user_value(r.get(k)) if k in units else r.get(k)

    lines = [[str(r["index"]), *(_fmt(shown(r, k)) for k in keys), r["status"],
              _fmt(r.get("objective"), ".7g"), _fmt(r.get("verified")),
              _fmt(r.get("iterations")), _fmt(r.get("wall_time_s"), ".2f")] for r in rows]
    header = ["index", *(f"{k} [{units[k].label}]" if k in units else k for k in keys),
              "status", f"{objective} [{unit}]", "verified", "iterations", "time [s]"]
    out = _elide(_table(header, lines), max_rows + 1, len(lines))
    if nominal is not None:
        out.append(f"point {nominal} is the nominal (the problem file's values); the "
                   f"statistics below are of the dispersed cases")
    good = [r for r in rows if r.get("objective") is not None and r["status"] == "optimal"
            and r["index"] != nominal]
    if len(good) < 2:
        return out
    return out + _statistics(good, keys, objective, unit)


# --------------------------------------------------------------------------------------
# a dispersion's reserve


def quantile_interval(values, probability: float,
                      confidence: float = INTERVAL_CONFIDENCE) -> dict:
    """The ``probability`` quantile of a sample and its distribution-free confidence
    interval from order statistics.

    The estimate is the order statistic of rank ceil(p n): the smallest sample value at
    or above which no more than a fraction 1 - p of the sample lies. The interval is
    [x_(r), x_(s)] with, for any continuous distribution, P(x_(r) > xi_p) =
    B(r - 1; n, p) <= (1 - confidence)/2 and P(x_(s) < xi_p) = 1 - B(s - 1; n, p) <=
    (1 - confidence)/2, B the binomial distribution function (W. J. Conover, *Practical
    Nonparametric Statistics*, 3rd ed., Wiley 1999, section 3.2; G. J. Hahn and W. Q.
    Meeker, *Statistical Intervals*, Wiley 1991, chapter 5; from memory). Its coverage,
    B(s - 1) - B(r - 1), is at least ``confidence`` and is returned.

    Parameters
    ----------
    values : array_like
        The sample (+inf allowed: a case counted as beyond any value).
    probability : float
        The quantile's probability p, 0 < p < 1.
    confidence : float
        Of the interval, 0 < confidence < 1.

    Returns
    -------
    dict
        ``estimate``, ``lower``, ``upper`` (None where the sample is too small for that
        bound, or the value is infinite), ``rank``, ``lower_rank``, ``upper_rank``
        (1-based, None when missing), ``coverage`` (exact, of the ranks), ``samples``,
        ``samples_for_upper`` (the smallest sample that has an upper bound).
    """
    x = np.sort(np.asarray(values, dtype=float))
    n = x.size
    if n == 0 or not 0.0 < probability < 1.0 or not 0.0 < confidence < 1.0:
        raise ValueError(f"quantile_interval: need a sample, 0 < probability < 1 and 0 < "
                         f"confidence < 1, got {n} values, {probability!r}, {confidence!r}")
    tail = 0.5 * (1.0 - confidence)
    below = binom.cdf(np.arange(n), n, probability)  # below[j] = B(j; n, p)
    rank = min(n, max(1, math.ceil(probability * n - 1e-9)))
    low = np.nonzero(below <= tail)[0]
    high = np.nonzero(below >= 1.0 - tail)[0]
    r = int(low[-1]) + 1 if low.size else None
    s = int(high[0]) + 1 if high.size else None
    coverage = (below[s - 1] if s else 1.0) - (below[r - 1] if r else 0.0)

    def value(k):
        return None if k is None or not math.isfinite(x[k - 1]) else float(x[k - 1])

    return {"estimate": value(rank), "lower": value(r), "upper": value(s), "rank": rank,
            "lower_rank": r, "upper_rank": s, "coverage": float(coverage), "samples": n,
            "samples_for_upper": math.ceil(math.log(tail) / math.log(probability))}


def _reserve_words(objective: str, maximise: bool) -> str:
    return (f"{objective} reduction from nominal" if maximise
            else f"{objective} addition to nominal")


def dispersion_reserve(rows, nominal_index: int, confidence: float = DEFAULT_CONFIDENCE,
                       interval: float = INTERVAL_CONFIDENCE) -> dict:
    """The margin on the objective that covers a fraction ``confidence`` of the dispersed
    cases, and the limits' peaks at that fraction.

    Each dispersed case is an optimum of its own (the schedule re-optimised for the
    case's data, as a perfect guidance would fly it), so the reserve is a lower estimate
    of what a fixed schedule flown through the same dispersions would need. The shortfall
    of a case is nominal - objective for a maximised objective (for ``max_payload``: the
    payload reduction from nominal that the case needs) and objective - nominal for a
    minimised one (for ``min_propellant``: the propellant to add to the nominal). A case
    without an optimum (infeasible or failed) counts as not covered (an infinite
    shortfall). The reserve is the ``confidence`` quantile of the shortfalls, with its
    distribution-free interval (:func:`quantile_interval`).

    Parameters
    ----------
    rows : list of dict
        The study's rows; the row at ``nominal_index`` is the nominal.
    nominal_index : int
    confidence : float
        Fraction of cases to cover, 0 < confidence < 1 (default 0.95).
    interval : float
        Confidence of the interval of the quantile (default 0.90).

    Returns
    -------
    dict
        JSON-safe: ``nominal_index``, ``confidence``, ``interval_confidence``,
        ``objective_name``,
        ``objective_unit``, ``meaning``, ``nominal``, ``cases``,
        ``cases_without_optimum``, ``reserve`` (in the objective's unit), ``lower``,
        ``upper`` (the interval), ``ranks``, ``coverage``, ``covered_value`` (the
        nominal less, or plus, the reserve), ``reason`` (why a value is None), and
        ``peaks``: per limit ``name``, ``unit``, ``bound``, ``value`` at the fraction
        ``confidence`` of the cases (the low side for a minimum), ``lower``, ``upper``,
        ``extreme`` (over the cases).
    """
    if not 0.0 < confidence < 1.0:
        raise ValueError(f"confidence: expected a fraction between 0 and 1 (0.95 for 95 % "
                         f"of the cases), got {confidence!r}")
    by_index = {r["index"]: r for r in rows}
    nominal = by_index.get(nominal_index, {})
    cases = [r for i, r in sorted(by_index.items()) if i != nominal_index]
    name = next((r["objective_name"] for r in rows if r.get("objective_name")), "")
    spec = OBJECTIVE_SPECS.get(name)
    out: dict = {"nominal_index": nominal_index, "confidence": confidence,
                 "interval_confidence": interval,
                 "objective_name": name, "objective_unit": spec.unit if spec else "",
                 "meaning": _reserve_words(name, spec.maximise if spec else True),
                 "nominal": nominal.get("objective"), "cases": len(cases),
                 "cases_without_optimum": sum(1 for r in cases if not _good(r)),
                 "reserve": None, "lower": None, "upper": None, "ranks": None,
                 "coverage": None, "covered_value": None, "reason": None, "peaks": []}
    if not cases or spec is None:
        out["reason"] = "no dispersed cases"
        return out
    if not _good(nominal):
        out["reason"] = "the nominal case has no optimum"
    else:
        sign = 1.0 if spec.maximise else -1.0
        shortfall = [sign * (nominal["objective"] - r["objective"]) if _good(r) else math.inf
                     for r in cases]
        q = quantile_interval(shortfall, confidence, interval)
        out.update(reserve=q["estimate"], lower=q["lower"], upper=q["upper"],
                   ranks=[q["lower_rank"], q["rank"], q["upper_rank"]],
                   coverage=q["coverage"])
        if q["estimate"] is None:
            out["reason"] = (f"more than {100 * (1 - confidence):.3g} % of the cases have no "
                             f"optimum")
        else:
            out["covered_value"] = nominal["objective"] - sign * q["estimate"]
            if q["upper"] is None:
                out["reason"] = (f"an upper bound at {100 * interval:.3g} % needs at least "
                                 f"{q['samples_for_upper']} cases")
    out["peaks"] = _peak_quantiles(cases, confidence, interval)
    return out


def _good(row: dict) -> bool:
    return row.get("status") == "optimal" and row.get("objective") is not None


def _peak_quantiles(cases, confidence: float, interval: float) -> list:
    out = []
    for name, spec in LIMITS.items():
        peaks = [r.get(f"{name}.peak") for r in cases if _good(r)]
        peaks = [float(p) for p in peaks if p is not None]
        if not peaks:
            continue
        # the critical side: the high peaks of a maximum, the low ones of a minimum
        sign = -1.0 if spec.sense == "min" else 1.0
        q = quantile_interval([sign * p for p in peaks], confidence, interval)
        lo, hi = q["lower"], q["upper"]
        if sign < 0:  # back from the negated peaks: the interval turns round
            lo, hi = (None if hi is None else -hi), (None if lo is None else -lo)
        bound = next((r.get(f"{name}.bound") for r in cases
                      if r.get(f"{name}.bound") is not None), None)
        out.append({"name": name, "unit": spec.unit, "bound": bound,
                    "value": None if q["estimate"] is None else sign * q["estimate"],
                    "lower": lo, "upper": hi,
                    "extreme": max(peaks) if sign > 0 else min(peaks)})
    return out


def reserve_lines(reserve: dict) -> list:
    """The reserve of :func:`dispersion_reserve` in words, for the printed summary."""
    unit, pct = reserve["objective_unit"], 100.0 * reserve["confidence"]
    conf = 100.0 * reserve["interval_confidence"]
    lines = [f"reserve to cover {pct:.4g} % of the {reserve['cases']} dispersed cases "
             f"({reserve['cases_without_optimum']} without an optimum, counted as not "
             f"covered):"]
    if reserve["reserve"] is None:
        lines.append(f"  {reserve['meaning']}: n/a ({reserve['reason']})")
    else:
        interval = (f"{_fmt(reserve['lower'], '.5g')} to {_fmt(reserve['upper'], '.5g')} "
                    f"{unit}")
        lines.append(f"  {reserve['meaning']}: {reserve['reserve']:.5g} {unit} "
                     f"(nominal {reserve['nominal']:.7g} {unit}, covered "
                     f"{reserve['covered_value']:.7g} {unit}); {conf:.3g} % confidence "
                     f"interval {interval} (order statistics {reserve['ranks']}, exact "
                     f"coverage {100 * reserve['coverage']:.1f} %)")
        if reserve["reason"]:
            lines.append(f"  note: {reserve['reason']}")
    for p in reserve["peaks"]:
        lines.append(f"  {p['name']} peak at {pct:.4g} % of the cases: {_fmt(p['value'], '.5g')}"
                     f" {p['unit']} ({conf:.3g} % interval {_fmt(p['lower'], '.5g')} to "
                     f"{_fmt(p['upper'], '.5g')}), extreme {p['extreme']:.5g}, bound "
                     f"{_fmt(p['bound'], '.5g')} {p['unit']}")
    lines.append("  each case is re-optimised (perfect guidance): a schedule fixed before "
                 "flight needs at least this reserve")
    return lines
