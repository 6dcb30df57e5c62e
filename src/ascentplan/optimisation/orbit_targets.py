"""Terminal conditions of an orbit target and a given launch azimuth, added to the NLP."""

from __future__ import annotations

from ascentplan.models import orbit


def add_orbit_targets(nlp, xb) -> None:
    """An orbit's size, shape and plane at burnout (:func:`orbit.orbit_conditions`), and a
    given launch azimuth as the heading at the first node of the first burn.

    Parameters
    ----------
    nlp : ascentplan.optimisation.nlp.AscentNLP
        Being built: its conditions, rows, phases and phase variables are used.
    xb : CasADi expression
        Physical state at burnout.
    """
    t = nlp.problem.target
    if t.names_orbit or t.inclination is not None:
        r, v = nlp.kind.position_velocity(xb)
        for name, expr in orbit.orbit_conditions(r, v, t, nlp.problem.planet):
            nlp.conditions.target(name, expr)
    azimuth = nlp.problem.launch.azimuth
    if azimuth is not None and nlp.kind.has_control("heading"):
        j = next(j for j, ph in enumerate(nlp.phases) if ph.kind == "burn")
        k = nlp.kind.control_index("heading")
        nlp.rows.add("launch_azimuth", nlp.phase_vars[j].controls[k, 0] - azimuth, 0.0, 0.0)
