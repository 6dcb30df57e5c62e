"""Problem-file keys of what a stage carries: strap-on booster groups, the fairing, restarts.

A stage's ``boosters`` is a list of groups; the vehicle's ``fairing`` a mass and its
jettison rule; a stage's ``restarts`` and ``coast_between_burns`` its further burns.
"""

from __future__ import annotations

from typing import Any

from ascentplan.constants import G0
from ascentplan.problem.reader import _fmt, _join, _kind_of, _Reader
from ascentplan.problem.stack import BoosterGroup, Fairing, booster_burnout_times
from ascentplan.problem.units import show

__all__ = ["BOOSTER_KEYS", "FAIRING_KEYS", "check_stack", "read_boosters", "read_fairing",
           "read_restarts"]

BOOSTER_KEYS = ("name", "count", "propellant_mass", "dry_mass", "thrust_vacuum", "isp_vacuum",
                "exhaust_speed", "nozzle_exit_area", "throttle", "ignition", "burn_time",
                "propellant_min", "propellant_max")
FAIRING_KEYS = ("mass", "jettison_time", "jettison_heat_flux", "during")
_COAST_KEYS = ("min", "max")
#: most restarts of one stage: each adds two phases to the NLP (common practice: upper
#: stages restart a handful of times)
MAX_RESTARTS = 20
#: most boosters in one group: beyond any vehicle's, a count this large is a typing error
MAX_BOOSTERS = 100
#: a burn time given beside the thrust must agree with it to this fraction
_AGREEMENT = 0.005


def read_restarts(r: _Reader, raw: dict, path: str) -> dict:
    """``restarts`` (further burns) and the bounds of each coast between burns [s]."""
    restarts = r.integer(raw, "restarts", path, 0, 0)
    if restarts is not None and restarts > MAX_RESTARTS:
        r.error(_join(path, "restarts"), f"must be at most {MAX_RESTARTS} (each restart adds a "
                                         f"coast and a burn to the flight), got {restarts}")
        restarts = None
    coast = r.section(raw, "coast_between_burns", path, what="{min: ..., max: ...} (durations)")
    cpath = _join(path, "coast_between_burns")
    r.keys(coast, cpath, _COAST_KEYS)
    lo = r.quantity(coast, "min", cpath, "s", default=10.0, gt=0.0)
    hi = r.quantity(coast, "max", cpath, "s", default=3.0 * 3600.0, gt=0.0)
    if lo is not None and hi is not None and lo > hi:
        r.error(cpath, f"min must not exceed max, got min {show(coast['min'])} > max "
                       f"{show(coast.get('max'))}")
    return {"restarts": restarts or 0, "restart_coast_min": lo, "restart_coast_max": hi}


def read_boosters(r: _Reader, raw: dict, path: str) -> list[dict] | None:
    """The booster groups of one stage as field dicts (without ``stage``), or None."""
    value = raw.get("boosters")
    if value is None:
        return []
    bpath = _join(path, "boosters")
    if not isinstance(value, list) or not value:
        r.error(bpath, f"expected a list of booster groups, got {_kind_of(value)} {show(value)}")
        return None
    groups, names = [], []
    for i, g in enumerate(value):
        gpath = f"{bpath}[{i}]"
        if not isinstance(g, dict):
            r.error(gpath, f"expected a booster group mapping {{count: ..., ...}}, got "
                           f"{_kind_of(g)} {show(g)}")
            return None
        group = _read_group(r, g, gpath, i, names)
        names.append(group.get("name"))
        groups.append(group)
    return groups


def _read_group(r: _Reader, g: dict, path: str, i: int, earlier: list) -> dict:
    r.keys(g, path, BOOSTER_KEYS)
    out: dict[str, Any] = {"path": path}
    out["name"] = r.text(g, "name", path, default=f"boosters {i + 1}")
    if out["name"] in earlier:
        r.error(_join(path, "name"), f"names another group of this stage too, got "
                                     f"{show(out['name'])}")
    out["count"] = r.integer(g, "count", path, 1, 1)
    if out["count"] is not None and out["count"] > MAX_BOOSTERS:
        r.error(_join(path, "count"), f"must be at most {MAX_BOOSTERS} boosters in a group, "
                                      f"got {out['count']}")
        out["count"] = None
    out["propellant_mass"] = r.quantity(g, "propellant_mass", path, "kg", required=True, gt=0.0)
    out["dry_mass"] = r.quantity(g, "dry_mass", path, "kg", required=True, gt=0.0)
    has_isp, has_c = g.get("isp_vacuum") is not None, g.get("exhaust_speed") is not None
    if has_isp == has_c:
        r.error(path, "give isp_vacuum (e.g. '275 s') or exhaust_speed, one of them")
    isp = r.quantity(g, "isp_vacuum", path, "s", gt=0.0)
    speed = r.quantity(g, "exhaust_speed", path, "m/s", gt=0.0)
    out["exhaust_speed"] = G0 * isp if isp is not None else speed
    out["nozzle_exit_area"] = r.quantity(g, "nozzle_exit_area", path, "m^2", default=0.0,
                                         ge=0.0)
    out.update(_read_setting(r, g, path))
    ignition = g.get("ignition", "liftoff")
    if ignition in (None, "liftoff", "with_core"):
        out["ignition"] = None
    elif isinstance(ignition, str) and ignition.startswith("after "):
        parent = ignition[len("after "):].strip()
        if parent not in earlier:
            r.error(_join(path, "ignition"),
                    f"must name an earlier group of this stage ('after NAME'), got "
                    f"{show(ignition)}; earlier groups: {', '.join(map(str, earlier)) or 'none'}")
        out["ignition"] = parent
    else:
        r.error(_join(path, "ignition"), f"expected 'liftoff' (with the core) or 'after NAME' "
                                         f"(air-lit at that group's burnout), got {show(ignition)}")
        out["ignition"] = None
    out["thrust_vacuum"] = _read_group_thrust(r, g, path, out)
    out["propellant_min"] = r.quantity(g, "propellant_min", path, "kg", gt=0.0)
    out["propellant_max"] = r.quantity(g, "propellant_max", path, "kg", gt=0.0)
    lo, hi, mp = out["propellant_min"], out["propellant_max"], out["propellant_mass"]
    if mp is not None and ((lo is not None and mp < lo) or (hi is not None and mp > hi)):
        r.error(_join(path, "propellant_mass"), f"must lie within propellant_min.."
                                                f"propellant_max, got {show(g['propellant_mass'])}")
    return out


def _read_setting(r: _Reader, g: dict, path: str) -> dict:
    """The group's throttle setting: a number (fixed), or ``{min: x, max: y}``, a range in
    which the optimiser chooses one setting for the whole burn (a lone max is fixed)."""
    value = g.get("throttle")
    if isinstance(value, dict):
        tpath = _join(path, "throttle")
        r.keys(value, tpath, ("min", "max"))
        hi = r.quantity(value, "max", tpath, "", default=1.0, gt=0.0, le=1.0)
        lo = r.quantity(value, "min", tpath, "", default=hi, gt=0.0, le=1.0)
        if lo is not None and hi is not None and lo > hi:
            r.error(tpath, f"min must not exceed max, got {show(value)}")
        ranged = lo is not None and hi is not None and lo < hi
        return {"throttle": hi, "throttle_min": lo if ranged else None,
                "throttle_max": hi if ranged else None}
    fixed = r.quantity(g, "throttle", path, "", default=1.0, gt=0.0, le=1.0)
    return {"throttle": fixed, "throttle_min": None, "throttle_max": None}


def _read_group_thrust(r: _Reader, g: dict, path: str, out: dict):
    """Per-booster vacuum thrust [N]: given, or from ``burn_time`` (propellant over the burn
    time at the setting, times the exhaust speed); both given must agree."""
    thrust = r.quantity(g, "thrust_vacuum", path, "N", gt=0.0, show_unit="kN")
    burn = r.quantity(g, "burn_time", path, "s", gt=0.0)
    if g.get("thrust_vacuum") is None and g.get("burn_time") is None:
        r.error(_join(path, "thrust_vacuum"), "missing; give thrust_vacuum (per booster) or "
                                              "burn_time")
        return None
    c, mp, setting = out["exhaust_speed"], out["propellant_mass"], out["throttle"]
    if burn is None or None in (c, mp, setting):
        return thrust
    from_burn = mp * c / (burn * setting)
    if thrust is not None and abs(thrust - from_burn) > _AGREEMENT * from_burn:
        r.error(path, f"thrust_vacuum {_fmt(thrust / 1e3)} kN and burn_time {_fmt(burn)} s "
                      f"disagree: the burn time gives {_fmt(from_burn / 1e3)} kN; give one")
    return thrust if thrust is not None else from_burn


def build_groups(stages: list[dict]) -> tuple[BoosterGroup, ...]:
    """The booster groups of all stages, first stage first."""
    out = []
    for i, s in enumerate(stages):
        for g in s.get("boosters") or []:
            out.append(BoosterGroup(
                name=g["name"], stage=i, count=g["count"], propellant_mass=g["propellant_mass"],
                dry_mass=g["dry_mass"], thrust_vacuum=g["thrust_vacuum"],
                exhaust_speed=g["exhaust_speed"], nozzle_exit_area=g["nozzle_exit_area"],
                throttle=g["throttle"], ignition=g["ignition"],
                propellant_min=g["propellant_min"], propellant_max=g["propellant_max"],
                throttle_min=g["throttle_min"], throttle_max=g["throttle_max"]))
    return tuple(out)


def read_fairing(r: _Reader, data: dict, stage_names: list[str]) -> Fairing | None:
    """The fairing: ``mass``, and ``jettison_time`` or ``jettison_heat_flux``; ``during``
    names the stage in whose burn it is dropped (default the second stage)."""
    vehicle = data.get("vehicle") if isinstance(data, dict) else None
    f = r.section(vehicle, "fairing", "vehicle", what="{mass: ..., jettison_heat_flux: ...}")
    if f is None:
        return None
    path = "vehicle.fairing"
    r.keys(f, path, FAIRING_KEYS)
    mass = r.quantity(f, "mass", path, "kg", required=True, gt=0.0)
    time = r.quantity(f, "jettison_time", path, "s", gt=0.0)
    flux = r.quantity(f, "jettison_heat_flux", path, "W/m^2", gt=0.0)
    if (f.get("jettison_time") is None) == (f.get("jettison_heat_flux") is None):
        r.error(path, "give jettison_time (from liftoff) or jettison_heat_flux (the bound on "
                      "1/2 rho v^3 after the jettison, e.g. '1135 W/m^2'), one of them")
    during = f.get("during")
    if during is None:
        stage = min(1, len(stage_names) - 1)
    elif during in stage_names:
        stage = stage_names.index(during)
    else:
        r.error(_join(path, "during"), f"must name a stage ({', '.join(stage_names)}), got "
                                       f"{show(during)}")
        return None
    if mass is None or (time is None and flux is None):
        return None
    return Fairing(mass=mass, stage=stage, time=time, heat_flux_bound=flux)


def check_stack(r: _Reader, data: dict, p) -> None:
    """Booster burnouts after the vertical rise and before the core runs dry."""
    v = p.vehicle
    if v is None or not v.boosters:
        return
    for i, stage in enumerate(v.stages):
        ends = booster_burnout_times(v.boosters, i)
        if not ends:
            continue
        last = max(ends.values())
        core = stage.throttle_min * stage.max_mass_flow * last
        if core >= stage.propellant_mass:
            r.error(f"vehicle.stages[{i}].boosters",
                    f"the boosters burn for {last:.1f} s, in which {stage.name} burns "
                    f"{_fmt(core)} kg even at its lowest throttle: more than its "
                    f"{_fmt(stage.propellant_mass)} kg; expected shorter booster burns or more "
                    f"core propellant")
        first = min(ends.values())
        if i == 0 and p.launch is not None and first <= p.launch.vertical_rise:
            r.error("launch.vertical_rise", f"must end before the first booster burnout at "
                                            f"{first:.1f} s, got {_fmt(p.launch.vertical_rise)} s")
