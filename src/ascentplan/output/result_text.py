"""The printed summary of a solve, block by block, from its summary.json content.

Each function takes a block of :meth:`ascentplan.pipeline.Result.summary` and returns
the lines of the printed summary (``ascentplan solve``), so that what is printed is
exactly what is written.
"""

from __future__ import annotations

from ascentplan.replay.budget import BUDGET_TERMS, LOSS_NAMES


def fixed(value: float, digits: int, sign: bool = False) -> str:
    """``value`` with ``digits`` decimals, never a negative zero ("-0.000")."""
    text = f"{value:+.{digits}f}" if sign else f"{value:.{digits}f}"
    if float(text) == 0.0:
        text = f"{0.0:.{digits}f}"
    return text


def verification_lines(v: dict) -> list[str]:
    """The verdict and the replay against the optimiser's burnout, with the tolerances."""
    line = (f"  verification  {'passed' if v['passed'] else 'FAILED'}: the replay against the "
            f"optimiser at burnout: speed {fixed(v['burnout_speed_difference_m_s'], 3, True)}"
            f" m/s (tolerance {v['burnout_speed_tolerance_m_s']:.2f}), altitude "
            f"{fixed(v['burnout_altitude_difference_m'], 2, True)} m (tolerance "
            f"{v['burnout_altitude_tolerance_m']:.1f})")
    return [line] + [f"                {reason}" for reason in v["reasons"]]


#: how a target condition is printed: label, unit shown, divisor of the written and
#: replayed values, decimals, and of the miss and tolerance: unit, decimals
_TARGET_ROWS = {"altitude": ("altitude", "km", 1000.0, 3, "m", 1),
                "speed": ("speed", "m/s", 1.0, 2, "m/s", 2),
                "flight_path_angle": ("flight-path angle", "deg", 1.0, 4, "deg", 4)}
_TARGET_KEYS = {"altitude": "m", "speed": "m_s", "flight_path_angle": "deg"}


def target_lines(block: dict | None) -> list[str]:
    """Each target condition as written and as replayed, its miss against the tolerance."""
    if not block or not block["conditions"]:
        return ["  target        none (burnout state free)"]
    lines = []
    for name, c in block["conditions"].items():
        label, unit, div, digits, miss_unit, miss_digits = _TARGET_ROWS[name]
        k = _TARGET_KEYS[name]
        head = "  target        " if not lines else " " * 16
        lines.append(f"{head}{label:<18}{fixed(c[f'written_{k}'] / div, digits):>10} {unit:<4}"
                     f" as written, {fixed(c[f'replayed_{k}'] / div, digits):>10} replayed: "
                     f"miss {fixed(c[f'miss_{k}'], miss_digits, True)} {miss_unit} (tolerance "
                     f"{c[f'tolerance_{k}']:.{miss_digits}f}) {'met' if c['passed'] else 'MISSED'}")
    orbit = block.get("circular_orbit")
    if orbit:
        apogee = orbit["apogee_altitude_m"]
        apogee = "none (not closed)" if apogee is None else f"{apogee / 1000:.3f} km"
        lines.append(f"                orbit of the replay: perigee "
                     f"{orbit['perigee_altitude_m'] / 1000:.3f} km, apogee {apogee}")
    return lines


def limit_lines(limits: list[dict]) -> list[str]:
    """Each limit's bound, replayed peak, excess against the tolerance, shadow price."""
    if not limits:
        return []
    lines = ["  limits        name                      bound        peak    excess  "
             "allowed  verdict            active  shadow price"]
    for lim in limits:
        if lim["shadow_price"] is None:
            price = "n/a (not converged)"
        elif lim["active"]:
            price = f"{lim['shadow_price']:.4g} {lim['shadow_price_unit']}"
        else:
            price = "0 (inactive)"
        if not lim["passed"]:
            verdict = "EXCEEDED"
        elif lim["within_bound"]:
            verdict = "within bound"
        else:
            verdict = "above, tolerated"
        lines.append(f"                {lim['name']:<24}{lim['bound']:>8.4g} {lim['unit']:<7}"
                     f"{lim['peak']:>9.4g}{fixed(100 * lim['excess_fraction'], 2, True):>8} %"
                     f"{fixed(100 * lim['tolerance_fraction'], 2):>7} %  {verdict:<19}"
                     f"{'yes' if lim['active'] else 'no':<7} {price}")
    margin = limits[0].get("margin_fraction", 0.0)
    if margin > 0.0:
        lines.append(f"                (the optimiser held each limit {100 * margin:.2g} % inside "
                     "its bound, so that its peak between nodes stays within it)")
    return lines


def budget_lines(losses: dict | None) -> list[str]:
    """The velocity budget at burnout as its two equations, every term named [m/s]."""
    if not losses:
        return []
    losses_sum = " + ".join(f"{BUDGET_TERMS[k]} {losses[k]:.1f}" for k in LOSS_NAMES
                            if k != "ideal")
    lines = ["  velocity budget at burnout [m/s]",
             f"                {BUDGET_TERMS['ideal']} {losses['ideal']:.1f}"
             f" = {BUDGET_TERMS['achieved']} {losses['achieved']:.1f}",
             f"                  + {losses_sum}"]
    pad = losses.get("pad_rotation_speed")
    if pad is not None:
        lines.append(f"                burnout speed {pad + losses['achieved']:.1f} = "
                     f"{BUDGET_TERMS['pad_rotation_speed']} {pad:.1f} + "
                     f"{BUDGET_TERMS['achieved']} {losses['achieved']:.1f}")
    return lines


def split_lines(split: dict | None) -> list[str]:
    """The rocket-equation split, that split flown optimally, and the coupled split."""
    if not split:
        return []
    lines = [f"  stage split   {split['hold'].replace('_', ' ')} held; propellant [kg]:",
             "                name            rocket equation   rocket-equation split flown"
             "   coupled"]
    for st in split["stages"]:
        lines.append(f"                {st['name']:<16}"
                     f"{st['rocket_equation_propellant_mass_kg']:>15.1f}"
                     f"{st['rocket_equation_split_flown_propellant_mass_kg']:>30.1f}"
                     f"{st['coupled_propellant_mass_kg']:>10.1f}")
    u = split["objective_unit"]
    lines.append(f"                objective: rocket-equation split flown optimally "
                 f"{split['rocket_equation_split_flown_objective']:.6g} {u} "
                 f"({split['rocket_equation_split_flown_status']}), "
                 f"coupled {split['coupled_objective']:.6g} {u}")
    return lines
