"""The pieces every section of the report is made of: escaped text, numbers, tables."""

from __future__ import annotations

import html
import math
import re

#: a cell that reads as a number (or n/a) is right-aligned in a numeric column
_NUMERIC = re.compile(r"^(n/a|[-+]?[\d,]*\.?\d+(e[-+]?\d+)?)$")

#: characters an HTML document may not carry (its syntax forbids C0/C1 controls but
#: tab, line feed and carriage return): shown as escapes instead
_CONTROL = re.compile(r"[\x00-\x08\x0b\x0c\x0e-\x1f\x7f-\x9f]")

#: unit suffixes of summary keys and the unit they stand for, longest first so that
#: ``_m_s`` is read before ``_s``
_KEY_UNITS = (("_kPa_deg", "kPa deg"), ("_m3_s2", "m^3/s^2"), ("_rad_s", "rad/s"),
              ("_kg_s", "kg/s"), ("_m_s", "m/s"), ("_1_s", "1/s"), ("_m2", "m^2"),
              ("_kPa", "kPa"), ("_deg", "deg"), ("_rad", "rad"), ("_km", "km"),
              ("_kg", "kg"), ("_g0", "g0"), ("_kN", "kN"), ("_Pa", "Pa"), ("_N", "N"),
              ("_m", "m"), ("_s", "s"), ("_percent", "%"), ("_fraction", "fraction"))

STYLE = """
body { font-family: sans-serif; margin: 2em auto; max-width: 70em; padding: 0 1em;
       color: #1a1a1a; line-height: 1.4; }
h1 { margin-bottom: 0.1em; }  .sub { color: #555; margin-top: 0; }
h2 { border-bottom: 1px solid #bbb; padding-bottom: 0.2em; margin-top: 1.6em; }
h3 { margin-bottom: 0.2em; }
.caution { border: 2px solid #a05a00; background: #fff3dc; padding: 0.8em 1em;
           font-weight: bold; margin: 1em 0; }
.status { border: 2px solid #777; padding: 0.8em 1em; margin: 1em 0; }
.status.good { border-color: #2e7d32; background: #eef7ee; }
.status.bad { border-color: #b71c1c; background: #fbeaea; }
.status.neutral { border-color: #555; background: #f2f2f2; }
.status .verdict { font-size: 1.15em; font-weight: bold; margin: 0 0 0.4em 0; }
table { border-collapse: collapse; margin: 0.6em 0; }  th { background: #f0f0f0; }
th, td { border: 1px solid #ccc; padding: 0.25em 0.7em; text-align: left; }
td.num { text-align: right; font-variant-numeric: tabular-nums; }
tr.total td { font-weight: bold; }  tr.flag td { background: #fff3dc; font-weight: bold; }
code { background: #f4f4f4; padding: 0 0.2em; }
pre { background: #f6f6f6; padding: 0.6em; overflow-x: auto; }
figure { margin: 1.2em 0; }  figcaption { color: #555; font-size: 0.9em; }
figure img { max-width: 100%; height: auto; border: 1px solid #ddd; }
"""


def esc(value) -> str:
    """Text for the page: control characters as escapes, markup characters escaped."""
    text = _CONTROL.sub(lambda m: f"\\x{ord(m.group()):02x}", str(value))
    return html.escape(text, quote=True)


def is_number(value) -> bool:
    return isinstance(value, (int, float)) and not isinstance(value, bool)


def num(value, decimals: int = 3, scale: float = 1.0, fixed: bool = False) -> str:
    """A number for a table cell; "n/a" for a missing or non-finite value. A very large or
    small one is in exponent form unless ``fixed``: a mass balance's rounding residual of
    a few grams reads 0.0 kg, not -1.20e-05."""
    if not is_number(value) or not math.isfinite(value):
        return "n/a"
    x = value / scale
    if not fixed and x != 0.0 and (abs(x) >= 1e7 or abs(x) < 10.0 ** (-decimals)):
        return f"{x:.{max(decimals, 2)}e}"
    return f"{round(x, decimals) + 0.0:,.{decimals}f}"  # + 0.0: never "-0.0"


def percent(fraction, decimals: int = 2) -> str:
    """A fraction shown as a percentage ("n/a" when missing)."""
    return num(fraction * 100.0 if is_number(fraction) else None, decimals)


def yes_no(value) -> str:
    if value is None:
        return "n/a"
    return "yes" if value else "no"


def words(name) -> str:
    return str(name).replace("_", " ")


def split_unit(key: str) -> tuple[str, str]:
    """A summary key read as (quantity words, unit): ``miss_m_s`` -> ("miss", "m/s")."""
    key = str(key)
    for suffix, unit in _KEY_UNITS:
        if key.endswith(suffix) and len(key) > len(suffix):
            return words(key[: -len(suffix)]), unit
    return words(key), ""


def key_header(key: str) -> str:
    """A column header from a summary key, its unit in brackets: ``miss_m`` -> "miss [m]"."""
    text, unit = split_unit(key)
    return f"{text} [{unit}]" if unit else text


def table(header: list[str], rows: list[list], numeric=frozenset(), total_rows=frozenset(),
          flagged_rows=frozenset()) -> str:
    """An HTML table; cells are escaped here, so pass plain text. Flagged rows are
    highlighted: a figure the reader must not miss."""
    out = ["<table>", "<thead><tr>" + "".join(f"<th>{esc(h)}</th>" for h in header)
           + "</tr></thead>", "<tbody>"]
    for i, row in enumerate(rows):
        cls = (' class="total"' if i in total_rows else ' class="flag"' if i in flagged_rows
               else "")
        cells = "".join(f'<td class="num">{esc(c)}</td>' if j in numeric and _NUMERIC.match(
            str(c)) else f"<td>{esc(c)}</td>" for j, c in enumerate(row))
        out.append(f"<tr{cls}>{cells}</tr>")
    out.append("</tbody></table>")
    return "\n".join(out)


def key_values(rows: list[tuple[str, str]]) -> str:
    """A two-column table of quantities (with their units) and values."""
    return table(["quantity", "value"], [list(r) for r in rows], numeric={1})


def section(title: str, body: str) -> str:
    return f"<section>\n<h2>{esc(title)}</h2>\n{body}\n</section>"


def note(text: str) -> str:
    """A paragraph of explanation under a table (plain text, escaped here)."""
    return f"<p>{esc(text)}</p>"


def caution_box(text: str) -> str:
    return f'<div class="caution" role="note">{esc(text)}</div>'


def short(value) -> str:
    """A number in at most six significant digits (a model parameter, a tolerance)."""
    if isinstance(value, (list, tuple)):
        return ", ".join(short(v) for v in value)
    return f"{value:.6g}" if is_number(value) else cell(value)


def cell(value, decimals: int = 3) -> str:
    """Any summary value as a table cell: numbers rounded, booleans as yes/no, None as
    n/a, lists joined."""
    if value is None or isinstance(value, bool):
        return yes_no(value)
    if is_number(value):
        return num(value, decimals)
    if isinstance(value, (list, tuple)):
        return ", ".join(cell(v, decimals) for v in value)
    return str(value)
