"""The launch and target keys of flight out of a plane: site longitude, launch azimuth,
dog-leg allowance, the target orbit's size, shape and plane; and which dynamics kinds can
use a key (as the dynamics registry says).
"""

from __future__ import annotations

import math
from collections.abc import Callable

from ascentplan.models import gravity
from ascentplan.models.dynamics import DYNAMICS, DynamicsKind
from ascentplan.problem.reader import _fmt, _join, _Reader
from ascentplan.problem.units import show

_HALF_PI = 0.5 * math.pi
_LAUNCH_DIRECTIONS = ("northerly", "southerly")
#: target keys that name an orbit's size and shape, in the pairs they come in
_ORBIT_PAIRS = (("perigee_altitude", "apogee_altitude"), ("semi_major_axis", "eccentricity"))


# -- what a dynamics kind can use -------------------------------------------------------
def _steered(kind: DynamicsKind) -> bool:
    """Whether a kind steers its thrust, which a pitch, a flight-path angle or an orbit needs."""
    return kind.steered


def _spatial(kind: DynamicsKind) -> bool:
    """Whether a kind leaves the launch plane: an azimuth, an inclination, a node need it."""
    return kind.spatial


def _refused_for_kind(r: _Reader, section: dict | None, key: str, path: str,
                      kind: DynamicsKind | None,
                      applies: Callable[[DynamicsKind], bool]) -> bool:
    """Report ``key`` when it is given but the problem's dynamics kind cannot use it.

    Parameters
    ----------
    kind : DynamicsKind or None
        The problem's kind; None (a bad ``dynamics:``) refuses nothing.
    applies : callable
        ``applies(kind)``: whether the key means something for a kind.

    Returns
    -------
    bool
        True when the key was refused (and should not be read).
    """
    if kind is None or applies(kind) or section is None or section.get(key) is None:
        return False
    able = [other.name for other in DYNAMICS.values() if applies(other)]
    r.error(_join(path, key), f"applies to {' or '.join(able)} flight only (dynamics is "
                              f"{kind.name}), got {show(section[key])}; remove it or set "
                              f"dynamics: {able[0]}")
    return True


def _read_orbit_target(r: _Reader, section: dict | None, kind, values: dict,
                       orbit_floor: float, before: int) -> None:
    """The orbit keys of ``target`` into ``values``: size and shape (steered kinds), plane
    (spatial kinds), and their consistency."""
    steered_keys = {
        "perigee_altitude": dict(unit="m", show_unit="km", gt=orbit_floor),
        "apogee_altitude": dict(unit="m", show_unit="km", gt=orbit_floor),
        "semi_major_axis": dict(unit="m", show_unit="km", gt=0.0),
        "eccentricity": dict(unit="", ge=0.0, lt=1.0),
    }
    for key, read in steered_keys.items():
        if not _refused_for_kind(r, section, key, "target", kind, _steered):
            values[key] = r.quantity(section, key, "target", **read)
    spatial_keys = {
        "inclination": dict(unit="rad", show_unit="deg", ge=0.0, le=math.pi),
        "ascending_node": dict(unit="rad", show_unit="deg", ge=-2 * math.pi, le=2 * math.pi),
        "argument_of_perigee": dict(unit="rad", show_unit="deg", ge=-2 * math.pi,
                                    le=2 * math.pi),
    }
    for key, read in spatial_keys.items():
        if not _refused_for_kind(r, section, key, "target", kind, _spatial):
            values[key] = r.quantity(section, key, "target", **read)
    if not _refused_for_kind(r, section, "inject_at_perigee", "target", kind, _steered):
        values["inject_at_perigee"] = _read_flag(r, section, "inject_at_perigee", "target")
    if len(r.messages) == before:
        _check_orbit_keys(r, section, values)


def _read_launch_spatial(r: _Reader, section: dict | None, kind) -> dict | None:
    """Longitude, azimuth, azimuth branch and dog-leg allowance of a three-dimensional
    launch (refused for kinds that fly in a plane)."""
    before = len(r.messages)
    values = {}
    reads = {
        "longitude": dict(unit="rad", default=0.0, ge=-math.pi, le=math.pi, show_unit="deg"),
        "azimuth": dict(unit="rad", ge=-2 * math.pi, le=2 * math.pi, show_unit="deg"),
        "dog_leg": dict(unit="rad", default=0.0, ge=0.0, le=_HALF_PI, show_unit="deg"),
    }
    for key, read in reads.items():
        if not _refused_for_kind(r, section, key, "launch", kind, _spatial):
            values[key] = r.quantity(section, key, "launch", **read)
    if not _refused_for_kind(r, section, "direction", "launch", kind, _spatial):
        values["direction"] = r.choice(section, "direction", "launch", list(_LAUNCH_DIRECTIONS),
                                       "northerly", "launch direction")
    if len(r.messages) > before:
        return None
    return {k: v for k, v in values.items() if v is not None or k == "azimuth"}


def _refuse_gravity_without_position(r: _Reader, data: dict, kind) -> None:
    """A gravity model that needs the position in three dimensions (J2 depends on
    latitude) is refused for a kind that flies in a plane."""
    raw = data.get("gravity")
    name = raw.get("model") if isinstance(raw, dict) else raw
    model = gravity.GRAVITY_MODELS.get(name) if isinstance(name, str) else None
    if kind is None or kind.spatial or not getattr(model, "needs_position", False):
        return
    able = [k.name for k in DYNAMICS.values() if k.spatial]
    r.error("gravity", f"{name} gravity depends on latitude and applies to {' or '.join(able)} "
                       f"flight only (dynamics is {kind.name}); use inverse_square or set "
                       f"dynamics: {able[0]}")


def _read_flag(r: _Reader, section: dict | None, key: str, path: str) -> bool:
    """A yes/no key (default no)."""
    raw = None if section is None else section.get(key)
    if raw is None:
        return False
    if isinstance(raw, bool):
        return raw
    r.error(_join(path, key), f"expected true or false, got {show(raw)}")
    return False


def _check_orbit_keys(r: _Reader, section: dict | None, v: dict) -> None:
    """Orbit target keys that make one orbit: whole pairs, one way of giving the size,
    what a node or an argument of perigee is measured from."""
    if section is None:
        return
    given = [pair for pair in _ORBIT_PAIRS if any(v.get(k) is not None for k in pair)]
    for pair in given:
        missing = [k for k in pair if v.get(k) is None]
        if missing:
            present = next(k for k in pair if k not in missing)
            r.error(f"target.{missing[0]}", f"missing; target.{present} needs it (an orbit's "
                                            f"size and shape take both), got none")
    sizes = [k for k in ("circular_orbit_altitude", *(p[0] for p in given))
             if v.get(k) is not None]
    if len(sizes) > 1:
        r.error(f"target.{sizes[1]}", f"cannot be combined with target.{sizes[0]}: give the "
                                      f"orbit once, got {show(section[sizes[1]])}")
    rp, ra = v.get("perigee_altitude"), v.get("apogee_altitude")
    if rp is not None and ra is not None and ra < rp:
        r.error("target.apogee_altitude",
                f"must not be below the perigee altitude {_fmt(rp / 1e3)} km, got "
                f"{show(section['apogee_altitude'])}")
    elliptic = sizes and sizes[0] != "circular_orbit_altitude"
    if elliptic and v.get("speed") is not None:
        r.error("target.speed", f"cannot be combined with an orbit (its energy fixes the speed "
                                f"at each altitude), got {show(section['speed'])}")
    if v.get("ascending_node") is not None and v.get("inclination") is None:
        r.error("target.ascending_node", f"needs target.inclination (the node of which "
                                         f"plane), got {show(section['ascending_node'])}")
    if v.get("argument_of_perigee") is not None:
        if not elliptic or v.get("inclination") is None or v.get("ascending_node") is None \
                or v.get("inject_at_perigee"):
            r.error("target.argument_of_perigee",
                    f"needs an elliptical orbit (perigee and apogee, or semi-major axis and "
                    f"eccentricity), target.inclination and target.ascending_node, and not "
                    f"inject_at_perigee; got {show(section['argument_of_perigee'])}")
    if v.get("inject_at_perigee") and (not elliptic or any(
            v.get(k) is not None for k in ("altitude", "flight_path_angle"))):
        r.error("target.inject_at_perigee", "needs an elliptical orbit (perigee and apogee, or "
                                            "semi-major axis and eccentricity) and fixes the "
                                            "altitude and flight-path angle itself")
