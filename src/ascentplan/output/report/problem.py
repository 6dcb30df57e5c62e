"""The report's "Problem" section: the inputs restated, so that the report stands alone.

Rendered from the ``inputs`` and ``provenance`` blocks of summary.json
(:mod:`ascentplan.output.inputs`); a summary written before they existed shows no
such section.
"""

from __future__ import annotations

from ascentplan.output.report.markup import (
    cell,
    esc,
    key_header,
    key_values,
    num,
    section,
    short,
    table,
    words,
)

#: the libraries whose versions decide the numbers, in the order shown
_VERSION_NAMES = (("ascentplan", "ascentplan"), ("casadi", "CasADi"), ("ipopt", "IPOPT"),
                  ("numpy", "NumPy"), ("scipy", "SciPy"), ("python", "Python"))


def _source_rows(inputs: dict, provenance: dict) -> list[tuple[str, str]]:
    source = provenance.get("source_file")
    rows = [("problem", str(inputs.get("name", ""))),
            ("problem file", source if source else "none (built in code)"),
            ("SHA-256 of the problem file",
             provenance.get("source_sha256") or "n/a (no file, or unreadable when written)"),
            ("results written (UTC)", str(provenance.get("written_utc", "n/a")))]
    if inputs.get("description"):
        rows.insert(1, ("description", str(inputs["description"]).strip()))
    objective = inputs.get("objective") or {}
    if objective:
        rows.append(("objective", f"{objective.get('name', '')} "
                                  f"({objective.get('description', '')})"))
    versions = provenance.get("versions") or {}
    rows += [(f"{label} version", str(versions.get(key) or "unknown"))
             for key, label in _VERSION_NAMES if key in versions]
    return rows


def _vehicle_table(vehicle: dict) -> str:
    stages = [s for s in vehicle.get("stages") or [] if isinstance(s, dict)]
    rows = []
    for s in stages:
        rows.append([s.get("name", ""), num(s.get("propellant_mass_kg"), 1),
                     num(s.get("dry_mass_kg"), 1), num(s.get("thrust_vacuum_N"), 2, 1000.0),
                     num(s.get("isp_vacuum_s"), 1), num(s.get("nozzle_exit_area_m2"), 3),
                     f"{num(s.get('throttle_min'), 2)} - {num(s.get('throttle_max'), 2)}",
                     words(s.get("shutdown", "n/a")), num(s.get("propellant_reserve_kg"), 1),
                     num(s.get("coast_after_s"), 1)])
    blank = [""] * 8
    rows.append(["payload", num(vehicle.get("payload_mass_kg"), 1), *blank])
    rows.append(["liftoff mass", num(vehicle.get("liftoff_mass_kg"), 1), *blank])
    header = ["stage", "propellant [kg]", "dry mass [kg]", "vacuum thrust [kN]",
              "vacuum Isp [s]", "nozzle exit area [m^2]", "throttle range", "shutdown",
              "reserve [kg]", "coast after [s]"]
    return table(header, rows, numeric={1, 2, 3, 4, 5, 8, 9},
                 total_rows={len(rows) - 1})


def _stack_text(vehicle: dict) -> str:
    """The booster groups (per booster), the fairing and the restarts, when there are."""
    parts = []
    groups = [g for g in vehicle.get("boosters") or [] if isinstance(g, dict)]
    if groups:
        rows = [[g.get("name", ""), g.get("stage", ""), num(g.get("count"), 0),
                 num(g.get("propellant_mass_kg"), 1), num(g.get("dry_mass_kg"), 1),
                 num(g.get("thrust_vacuum_N"), 2, 1000.0), num(g.get("isp_vacuum_s"), 1),
                 (f"{num(g['throttle_range'][0], 2)} - {num(g['throttle_range'][1], 2)}"
                  if g.get("throttle_range") else num(g.get("throttle"), 2)),
                 g.get("ignition", ""), num(g.get("burn_time_s"), 1)] for g in groups]
        parts.append(table(["booster group", "beside", "count", "propellant [kg]",
                            "dry mass [kg]", "vacuum thrust [kN]", "vacuum Isp [s]",
                            "setting", "ignition", "burn [s]"], rows,
                           numeric={2, 3, 4, 5, 6, 9}))
    fairing = vehicle.get("fairing")
    if isinstance(fairing, dict):
        when = (f"at {num(fairing.get('jettison_time_s'), 1)} s"
                if fairing.get("jettison_time_s") is not None else
                f"once the heat flux stays below "
                f"{num(fairing.get('jettison_heat_flux_W_m2'), 1)} W/m^2")
        parts.append(f"<p>Fairing: {esc(num(fairing.get('mass_kg'), 1))} kg, dropped during "
                     f"the burn of {esc(str(fairing.get('during', '')))} {esc(when)}.</p>")
    for s in vehicle.get("stages") or []:
        if isinstance(s, dict) and s.get("restarts"):
            lo, hi = s.get("coast_between_burns_s") or [None, None]
            parts.append(f"<p>Restarts: {esc(str(s.get('name', '')))} burns "
                         f"{int(s['restarts']) + 1} times, each coast {esc(num(lo, 0))} to "
                         f"{esc(num(hi, 0))} s.</p>")
    return "\n".join(parts)


def _site_rows(site: dict) -> list[tuple[str, str]]:
    return [("planet", str(site.get("planet", "n/a"))),
            ("pad altitude [m]", num(site.get("altitude_m"), 1)),
            ("pad latitude [deg]", num(site.get("latitude_deg"), 3)),
            ("planet radius [km]", num(site.get("planet_radius_km"), 3)),
            ("planet rotation rate [rad/s]", num(site.get("rotation_rate_rad_s"), 9)),
            ("pad rotation speed, eastward [m/s]", num(site.get("pad_rotation_speed_m_s"), 2)),
            ("vertical rise [s]", num(site.get("vertical_rise_s"), 2)),
            ("pitch-over kick of the first guess [deg]", num(site.get("pitch_over_deg"), 3))]


def _target_text(target: dict) -> str:
    given = [(k, v) for k, v in (target or {}).items() if v is not None]
    if not given:
        return "<p>No target: the burnout state is free.</p>"
    return key_values([(key_header(k), cell(v, 4)) for k, v in given])


def _limits_text(limits: list) -> str:
    if not limits:
        return "<p>No path limits.</p>"
    rows = [[f"{words(lim.get('name', ''))} ({lim.get('name', '')})", num(lim.get("bound"), 4),
             lim.get("unit", "")] for lim in limits if isinstance(lim, dict)]
    return table(["limit", "bound", "unit"], rows, numeric={1})


def _model_text(model) -> str:
    if not isinstance(model, dict):
        return "n/a"
    parameters = model.get("parameters") or {}
    text = str(model.get("name", "n/a"))
    if parameters:
        text += " (" + ", ".join(f"{key_header(k)} {short(v)}"
                                 for k, v in parameters.items()) + ")"
    return text


def _model_rows(models: dict, mesh: dict) -> list[tuple[str, str]]:
    rows = [("dynamics kind", str(models.get("dynamics", "n/a"))),
            ("atmosphere", _model_text(models.get("atmosphere"))),
            ("gravity", _model_text(models.get("gravity"))),
            ("gravitational acceleration at the pad [m/s^2]",
             num(models.get("gravity_at_pad_m_s2"), 5)),
            ("drag", _model_text(models.get("drag"))),
            ("reference area [m^2]", num(models.get("reference_area_m2"), 4))]
    if models.get("reference_length_m") is not None:
        rows.append(("reference length [m]", num(models.get("reference_length_m"), 4)))
    if mesh:
        rows += [("collocation", str(mesh.get("scheme_description") or mesh.get("scheme"))),
                 ("nodes per phase (first mesh)", str(mesh.get("nodes_per_phase", "n/a"))),
                 ("mesh refinements allowed", str(mesh.get("max_refinements", "n/a"))),
                 ("verification tolerance, burnout speed [m/s]",
                  num(mesh.get("speed_tolerance_m_s"), 3)),
                 ("verification tolerance, burnout speed [fraction]",
                  short(mesh.get("speed_tolerance_fraction"))),
                 ("verification tolerance, limits [fraction of bound]",
                  short(mesh.get("limit_tolerance_fraction")))]
    return rows


def problem_section(summary: dict) -> str:
    """The inputs of the run: file and hash, vehicle, site, target, limits, models, mesh
    and the versions that computed it; empty without an ``inputs`` block."""
    inputs = summary.get("inputs")
    if not isinstance(inputs, dict):
        return ""
    provenance = summary.get("provenance") if isinstance(summary.get("provenance"),
                                                         dict) else {}
    vehicle = inputs.get("vehicle") or {}
    parts = [key_values(_source_rows(inputs, provenance)),
             "<h3>Vehicle (as written)</h3>", _vehicle_table(vehicle), _stack_text(vehicle),
             "<h3>Launch site</h3>", key_values(_site_rows(inputs.get("site") or {})),
             "<h3>Target at burnout</h3>", _target_text(inputs.get("target")),
             "<h3>Limits</h3>", _limits_text(inputs.get("limits") or []),
             "<h3>Models and mesh</h3>",
             key_values(_model_rows(inputs.get("models") or {}, inputs.get("mesh") or {}))]
    split = inputs.get("mass_split")
    if isinstance(split, dict):
        parts.append(f"<p>Stage-mass split: {esc(words(split.get('hold', '')))} held"
                     + (f" at {esc(num(split['liftoff_mass_kg'], 1))} kg"
                        if split.get("liftoff_mass_kg") is not None else "") + ".</p>")
    return section("Problem", "\n".join(parts))
