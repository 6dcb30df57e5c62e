"""What a study's rows say: the finite-difference slopes of a limit sweep against its
shadow prices, and readable tables of the rows."""

from __future__ import annotations

from typing import Any

import numpy as np

from ascentplan.problem.limits import LIMITS
from ascentplan.study.document import is_number
from ascentplan.study.files import STUDY_CSV, change_keys_of

__all__ = ["summarise_study", "sweep_slopes"]


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


def summarise_study(rows, *, max_rows: int = 40) -> str:
    """A readable table of a study's rows.

    For a one-limit sweep: the objective against the bound, the peak, the shadow price,
    and the finite-difference slope from the previous bound next to the mean of the two
    shadow prices (they should agree where the optimum is smooth in the bound). For other
    studies: the changes and the objective per point, then the statistics of the
    objective over the converged points and, per key varied by plain numbers, its
    correlation with the objective and the objective change per 1 % change of the key
    (least squares).

    Parameters
    ----------
    rows : list of dict
        Rows as returned by :func:`~ascentplan.study.runner.run_study` (or read from
        ``study.jsonl``).
    max_rows : int
        Tables longer than this show their first and last rows only.
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
    return "\n".join(head + _generic_table(rows, objective, unit, max_rows))


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


def _generic_table(rows, objective, unit, max_rows) -> list:
    keys = list(dict.fromkeys(k for r in rows for k in change_keys_of(r)))
    lines = [[str(r["index"]), *(_fmt(r.get(k)) for k in keys), r["status"],
              _fmt(r.get("objective"), ".7g"), _fmt(r.get("verified")),
              _fmt(r.get("iterations")), _fmt(r.get("wall_time_s"), ".2f")] for r in rows]
    header = ["index", *keys, "status", f"{objective} [{unit}]", "verified", "iterations",
              "time [s]"]
    out = _elide(_table(header, lines), max_rows + 1, len(lines))
    good = [r for r in rows if r.get("objective") is not None and r["status"] == "optimal"]
    if len(good) < 2:
        return out
    return out + _statistics(good, keys, objective, unit)
