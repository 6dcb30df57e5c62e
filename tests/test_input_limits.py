"""Bad input never crashes or hangs the loader: one regression test per class of
failure once seen, each a ProblemError whose message names the key and the rule.

Each case edits one value of the small launcher example, as a dict or as a file.
"""

from __future__ import annotations

import copy
import time
from pathlib import Path

import pytest
import yaml

from ascentplan.problem.loader import ProblemError, load_problem
from ascentplan.problem.screen import (
    MAX_DEPTH,
    MAX_ENTRIES,
    MAX_FILE_BYTES,
    MAX_MESSAGE,
    MAX_NAME_CHARS,
    MAX_NODES,
    MAX_TEXT,
)
from ascentplan.problem.units import SHOWN_LENGTH, to_si

ROOT = Path(__file__).resolve().parents[1]
SMALL = ROOT / "problems" / "small_launcher.yaml"
BASE = yaml.safe_load(SMALL.read_text(encoding="utf-8"))
#: the longest a refusal may take [s]; the example loads in about 10 ms
QUICK = 2.0
Q = ("limits", "max_dynamic_pressure")
S0 = ("vehicle", "stages", 0)


def _edited(*path_and_value) -> dict:
    *path, value = path_and_value
    data = copy.deepcopy(BASE)
    node = data
    for key in path[:-1]:
        node = node[key]
    node[path[-1]] = value
    return data


def _refusal(source) -> list[str]:
    """The messages of the ProblemError that loading ``source`` must raise, quickly."""
    start = time.perf_counter()
    with pytest.raises(ProblemError) as info:
        load_problem(source)
    assert time.perf_counter() - start < QUICK
    for message in info.value.messages:
        assert message.isprintable() and len(message) <= MAX_MESSAGE
    return info.value.messages


def _file(tmp_path: Path, text: str) -> Path:
    path = tmp_path / "problem.yaml"
    path.write_text(text, encoding="utf-8")
    return path


def test_the_example_still_loads():
    assert load_problem(copy.deepcopy(BASE)).limits.max_dynamic_pressure == 30e3


# -- unit texts that pint's parser turned into exceptions ---------------------------------
@pytest.mark.parametrize("text, reason", [
    ("30 kPa**", "'**' at the end needs an exponent"),             # was AssertionError
    ("30 kPa)", "')' at character 4 without its '('"),             # was TokenError
    ("30 (kPa", "'(' at character 1 without its ')'"),
    ("30 kPa/0", "the number '0' cannot stand in a unit"),         # was ZeroDivisionError
    ("30 kPa*10.0**400", "the number '10.0' cannot stand"),       # was OverflowError
    ("30 kPa**99999999", "the exponent '99999999' is not a whole number from -4 to 4"),
    ("30 kPa**1e-400", "the exponent '1e-400' is not a whole number"),  # was KeyError
    ("30 kPa**0.5", "the exponent '0.5' is not a whole number"),
    ("30 kPa^2^2", "a power of a power"),
    ("30 (kPa^2)^2", "a power of a power"),
    ("30 kPa*/s", "unexpected '/'"),
])
def test_unit_parser_exceptions_are_messages(text, reason):
    (message,) = _refusal(_edited(*Q, text))
    assert message.startswith(f"limits.max_dynamic_pressure: cannot read the unit of {text!r}")
    assert reason in message


def test_unit_power_tower_does_not_hang():
    # pint evaluated 9**9**9 as arithmetic, a number of 370 million digits
    (message,) = _refusal(_edited(*Q, "30 kPa*9**9**9"))
    assert "the number '9' cannot stand in a unit" in message


def test_unit_with_trailing_comma_is_not_silently_read():
    # pint read "30 kPa," as 30 kPa
    (message,) = _refusal(_edited(*Q, "30 kPa,"))
    assert "unexpected ',' at character 4 of the unit" in message


def test_long_unit_text_is_refused():
    text = "30 " + "*".join(["kPa"] * 30)
    (message,) = _refusal(_edited(*Q, text))
    assert "longer than" in message


@pytest.mark.parametrize("text, unit, expected", [
    ("3.986e14 m^3/s^2", "m^3/s^2", 3.986e14),
    ("3.986e14 m**3/s**2", "m^3/s^2", 3.986e14),
    ("150 kPa deg", "Pa*rad", 150e3 * 3.141592653589793 / 180),
    ("150 kPa*deg", "Pa*rad", 150e3 * 3.141592653589793 / 180),
    ("0.2 1/s", "1/s", 0.2),
    ("1.225 kg/(m^3)", "kg/m^3", 1.225),
    ("1.225 kg m^-3", "kg/m^3", 1.225),
    ("50 %", "", 0.5),
])
def test_unit_grammar_keeps_the_units_of_the_trade(text, unit, expected):
    assert to_si(text, unit, "k") == pytest.approx(expected, rel=1e-12)


# -- numbers that overflowed or divided by zero later ----------------------------------
def test_whole_number_past_the_float_range_is_out_of_range():
    # float(10**400) raises OverflowError; the largest double is 1.8e308 (IEEE 754)
    (message,) = _refusal(_edited(*Q, 10**400))
    assert message.startswith("limits.max_dynamic_pressure: a whole number of about 400 digits "
                              "is outside the plausible range of a pressure: 0 or a magnitude "
                              "from 1e-12 Pa to 1e+10 Pa")


def test_subnormal_thrust_is_out_of_range():
    # 5e-324 is the smallest subnormal double (IEEE 754); the mass flow F/c was 0
    (message,) = _refusal(_edited(*S0, "thrust_vacuum", 5.0e-324))
    assert message == ("vehicle.stages[0].thrust_vacuum: 5e-324 is outside the plausible "
                       "range of a force: 0 or a magnitude from 1e-06 N to 1e+10 N")


def test_huge_planet_radius_is_out_of_range():
    # R^2 of 1e308 m is past the largest double (IEEE 754), so mu/R^2 was 0
    data = _edited("planet", {"radius": 1e308, "gravitational_parameter": 3.986e14})
    (message,) = _refusal(data)
    assert message.startswith("planet.radius: 1e+308 is outside the plausible range of a "
                              "length")


def test_out_of_range_values_in_a_table_name_their_index():
    data = _edited("atmosphere", {"model": "table", "altitude": {"unit": "km",
                                                                 "values": [0, 10, 1e300]},
                                  "density": ["1.2 kg/m^3", "0.4 kg/m^3", "0.1 kg/m^3"]})
    messages = _refusal(data)
    assert any(m.startswith("atmosphere.altitude.values[2]: 1e+300 is outside the plausible "
                            "range of a length") for m in messages)


def test_number_of_too_many_digits_in_a_file(tmp_path):
    # Python reads at most 4300 digits into an int (Python docs, integer string
    # conversion length limitation) and raised a ValueError outside YAML's errors
    text = SMALL.read_text(encoding="utf-8").replace("payload_mass: 450 kg",
                                                     "payload_mass: " + "9" * 5000)
    (message,) = _refusal(_file(tmp_path, text))
    assert "a number written with 5000 characters; at most 4000" in message


# -- nesting, aliases, size ------------------------------------------------------------
def test_deep_nesting_in_a_file_is_refused_not_a_recursion_error(tmp_path):
    text = SMALL.read_text(encoding="utf-8").replace(
        "max_dynamic_pressure: 30 kPa", "max_dynamic_pressure: " + "[" * 300 + "]" * 300)
    (message,) = _refusal(_file(tmp_path, text))
    assert message.startswith("limits.max_dynamic_pressure[0]")
    assert f"nested more than {MAX_DEPTH} levels deep" in message


def test_deep_nesting_in_a_dict_is_refused():
    value: list = []
    for _ in range(300):
        value = [value]
    (message,) = _refusal(_edited(*Q, value))
    assert f"nested more than {MAX_DEPTH} levels deep" in message


def test_billion_laughs_is_refused_while_composing(tmp_path):
    # the alias bomb of common practice: nine aliases per level, nine levels
    lines = ["a: &a [lol, lol, lol, lol, lol, lol, lol, lol, lol]"]
    for i in range(1, 9):
        previous, this = chr(96 + i), chr(97 + i)
        lines.append(f"{this}: &{this} [" + ", ".join([f"*{previous}"] * 9) + "]")
    (message,) = _refusal(_file(tmp_path, "\n".join(lines) + "\n"))
    assert "more than 16 aliases" in message


def test_few_aliases_of_a_large_list_are_refused_by_expanded_size(tmp_path):
    text = ("a: &a [" + ", ".join(["1"] * 9000) + "]\n"
            "b: [*a, *a, *a, *a, *a, *a]\n")
    (message,) = _refusal(_file(tmp_path, text))
    assert message.startswith("b[4]: ")
    assert f"more than {MAX_NODES} values" in message


def test_alias_inside_its_own_anchor_is_refused(tmp_path):
    (message,) = _refusal(_file(tmp_path, "name: x\nvehicle: &v {stages: [*v]}\n"))
    assert message.startswith("vehicle.stages[0]: the alias *v refers to a node that holds it")


def test_large_file_is_refused_unread(tmp_path):
    # a 44 MB table took 258 s and 6.7 GB before; a sparse file costs nothing to make
    path = tmp_path / "table.yaml"
    with open(path, "wb") as stream:
        stream.truncate(44 * 2**20)
    (message,) = _refusal(path)
    assert message.startswith(f"the file is larger than {MAX_FILE_BYTES} bytes (1 MiB)")


def test_long_table_states_the_maximum():
    data = _edited("aerodynamics", "drag", "mach", list(range(MAX_ENTRIES + 1)))
    (message,) = _refusal(data)
    assert message == (f"aerodynamics.drag.mach: has {MAX_ENTRIES + 1} entries; a list or "
                       f"mapping (a table) may have at most {MAX_ENTRIES}")


def test_long_text_is_refused():
    (message,) = _refusal(_edited(*S0, "name", "x" * (MAX_TEXT + 1)))
    assert message == (f"vehicle.stages[0].name: is {MAX_TEXT + 1} characters long; at most "
                       f"{MAX_TEXT}")


def test_self_referring_dict_is_refused():
    data = copy.deepcopy(BASE)
    data["limits"]["loop"] = data["limits"]
    messages = _refusal(data)
    assert any(f"more than {MAX_NODES} values" in m or "nested more than" in m
               for m in messages)


# -- messages ------------------------------------------------------------------------------
def test_expanded_value_is_echoed_short():
    # a message echoed a 3.9 MB value in full
    value = [["x" * 1000] * 1000] * 3
    messages = _refusal(_edited(*Q, value))
    assert len(messages[0]) < 300
    assert "..." in messages[0]


def test_echoed_text_is_cut_at_80_characters_with_an_ellipsis():
    (message,) = _refusal(_edited(*S0, "thrust_vacuum", "y" * 500))
    shown = message.split("cannot read ", 1)[1].split(" as a number")[0]
    assert len(shown) == SHOWN_LENGTH and shown.endswith("...")


def test_control_characters_are_escaped_in_messages():
    # terminal escape codes were echoed raw
    (message,) = _refusal(_edited("limits", "\x1b[31mmax_q\x1b[0m", "1 kPa"))
    assert "\x1b" not in message and "\\x1b[31mmax_q" in message


def test_terminal_escape_in_a_stage_name_is_refused():
    (message,) = _refusal(_edited(*S0, "name", "\x1b[2Jfirst"))
    assert message.startswith("vehicle.stages[0].name: holds the control character '\\x1b'")


# -- the problem name names the results folder --------------------------------------------
@pytest.mark.parametrize("name, rule", [
    ("a\x00b", "it holds a NUL character"),                       # crashed making the folder
    ("a\udc80b", "it holds a lone surrogate"),                    # crashed writing a plot
    ("x" * 300, f"it is 300 characters long; at most {MAX_NAME_CHARS}"),
    ("\x1b[31mred", "it holds the non-printing character '\\x1b'"),
    ("a/b", "it holds '/', which separates folders in a path"),
    ("a\\b", "it holds '\\\\', which separates folders in a path"),
    ("a:b", "it holds ':', which Windows does not allow in file names"),   # common practice
    ("what?", "it holds '?', which Windows does not allow"),               # common practice
    ("..", "'.' and '..' name the current and the parent folder"),
    ("   ", "it has no visible character"),
    (" lead", "it starts or ends with a space"),
    ("trail.", "it ends with a dot, which Windows drops"),                 # common practice
    ("CON", "'CON' is a device name that Windows reserves"),               # common practice
    ("nul.txt", "'nul' is a device name that Windows reserves"),           # common practice
    ("lpt1", "'lpt1' is a device name that Windows reserves"),             # common practice
])
def test_name_rules(name, rule):
    messages = _refusal(_edited("name", name))
    assert messages[0].startswith("name: must be usable as a folder name on every common "
                                  "file system: ")
    assert rule in messages[0], messages[0]


def test_name_byte_length_is_capped():
    # 255 bytes per file name on ext4, APFS and NTFS (common practice); the name gets half
    (message,) = _refusal(_edited("name", "𝔸" * 40))
    assert "it takes 160 bytes in UTF-8; at most 128" in message


@pytest.mark.parametrize("name", ["small-launcher-demo", "Ariane 6 – démo", "test_1.2",
                                  "x" * MAX_NAME_CHARS, "ü" * MAX_NAME_CHARS])
def test_good_names_load(name):
    assert load_problem(_edited("name", name)).name == name


# -- sizes the solver cannot hold ---------------------------------------------------------
def test_mesh_nodes_cap_names_the_memory():
    # a billion nodes per phase failed with a memory error after 16 s
    (message,) = _refusal(_edited("mesh", {"nodes_per_phase": 1_000_000_000}))
    assert message == ("mesh.nodes_per_phase: must be <= 2000, got 1000000000 (that mesh "
                       "would need about 64 TB of solver memory per phase)")


def test_mesh_refinements_cap():
    (message,) = _refusal(_edited("mesh", {"max_refinements": 10**400}))
    assert message.startswith("mesh.max_refinements: must be <= 6, got a whole number of")


def test_refined_mesh_cap_names_the_memory():
    (message,) = _refusal(_edited("mesh", {"nodes_per_phase": 1000, "max_refinements": 5}))
    assert message.startswith("mesh.max_refinements: 5 refinements of 1000 nodes per phase "
                              "can reach 31969 nodes per phase, which would need about 2.05 GB")


def test_map_points_cap():
    # a map of 1,000,000 points per axis ran on
    data = yaml.safe_load((ROOT / "problems" / "small_launcher_split.yaml").read_text())
    data["mass_split"]["map_points"] = 1_000_000
    (message,) = _refusal(data)
    assert message.startswith("mass_split.map_points: must be <= 25 points per axis, got "
                              "1000000 (a map re-solves the problem at every point")
