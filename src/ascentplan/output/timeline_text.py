"""The printed timeline and mass accounting of a solve, from their summary.json blocks.

Compact tables for the terminal: one line per event, one line per propulsive element and
one per item jettisoned, and the balance of the liftoff mass in one line.
"""

from __future__ import annotations

from ascentplan.output.result_text import fixed
from ascentplan.output.text import printable

__all__ = ["mass_lines", "stack_lines", "timeline_lines"]

_PAD = " " * 16


def timeline_lines(entries: list[dict] | None) -> list[str]:
    """One line per event: replay time, label, altitude, speed and mass."""
    if not entries:
        return []
    lines = [f"  timeline    {'t [s]':>10}  {'event':<44}{'altitude [km]':>14}"
             f"{'speed [m/s]':>13}{'mass [kg]':>12}"]
    for e in entries:
        label = printable(e["label"])
        if len(label) > 42:
            label = label[:41] + "~"
        lines.append(f"{_PAD[:14]}{e['time_s']:>10.2f}  {label:<44}"
                     f"{e['altitude_m'] / 1000:>14.3f}{e['speed_m_s']:>13.2f}"
                     f"{e['mass_kg']:>12.1f}")
    return lines


def _element_name(e: dict) -> str:
    name = printable(e["name"])
    return f"{e['count']} x {name}" if e["kind"] == "booster_group" else name


def mass_lines(block: dict | None) -> list[str]:
    """The balance of the liftoff mass, each element's propellant and each item dropped."""
    if not block:
        return []
    lines = [f"  mass [kg]     liftoff {block['liftoff_mass_kg']:.1f} = final "
             f"{block['final_mass_kg']:.1f} + propellant burnt "
             f"{block['propellant_burnt_kg']:.1f} + jettisoned {block['jettisoned_kg']:.1f}"
             f" (closure {fixed(block['closure_kg'], 3)})",
             f"{_PAD}{'element':<22}{'loaded':>11}{'burnt':>11}{'residual':>11}"]
    for e in block["elements"]:
        lines.append(f"{_PAD}{_element_name(e)[:21]:<22}{e['loaded_kg']:>11.1f}"
                     f"{e['burnt_kg']:>11.1f}{fixed(e['residual_kg'], 1):>11}")
    if block["jettisoned"]:
        lines.append(f"{_PAD}{'jettisoned':<22}{'t [s]':>11}{'mass':>11}{'dry':>11}"
                     f"{'unburnt':>11}")
        for item in block["jettisoned"]:
            name = printable(item["item"]) + (" casings" if item["kind"] == "booster_casings"
                                               else "")
            lines.append(f"{_PAD}{name[:21]:<22}{item['time_s']:>11.2f}"
                         f"{item['mass_kg']:>11.1f}{item['dry_mass_kg']:>11.1f}"
                         f"{fixed(item['unburnt_propellant_kg'], 1):>11}")
    return lines


def stack_lines(summary: dict) -> list[str]:
    """The timeline and, for a flight that was found, its mass accounting."""
    lines = timeline_lines(summary.get("timeline"))
    if summary.get("status") in ("optimal", "not_verified"):
        # where the solver stopped short of a flight, its masses mean little
        lines += mass_lines(summary.get("mass_accounting"))
    return lines
