"""Two-body orbits: elements from position and velocity, and launch azimuths.

Positions and velocities are inertial and planet-centred; the reference frame of the
three-dimensional kind is fixed at liftoff: z along the spin axis (north), x in the
equatorial plane towards the launch site's meridian at liftoff, y completing a right-hand
set. The right ascension of the ascending node is therefore measured from the site's
meridian at liftoff, eastwards.

The vector quantities (angular momentum h = r x v, eccentricity vector
e = v x h / mu - r/|r|) are plain arithmetic on sequences of three components, so they
run on floats, numpy arrays and CasADi symbols (the NLP's terminal conditions); the
elements themselves (:func:`elements`) are for numbers (reports, verification).
Formulas: H. D. Curtis, *Orbital Mechanics for Engineering Students*, algorithm 4.2
(elements from the state vector); D. A. Vallado, *Fundamentals of Astrodynamics and
Applications*, algorithm 9 (RV2COE).
"""

from __future__ import annotations

import math

import numpy as np

#: the element names of :func:`elements`, with their units
ELEMENT_UNITS = {
    "semi_major_axis": "m", "eccentricity": "-", "inclination": "rad",
    "ascending_node": "rad", "argument_of_perigee": "rad", "true_anomaly": "rad",
    "perigee_radius": "m", "apogee_radius": "m",
}


def cross(a, b) -> list:
    """Cross product of two three-component sequences."""
    return [a[1] * b[2] - a[2] * b[1], a[2] * b[0] - a[0] * b[2], a[0] * b[1] - a[1] * b[0]]


def dot(a, b):
    """Dot product of two three-component sequences."""
    return a[0] * b[0] + a[1] * b[1] + a[2] * b[2]


def angular_momentum(r, v) -> list:
    """Specific angular momentum h = r x v [m^2 s^-1]."""
    return cross(r, v)


def eccentricity_vector(r, v, mu, radius=None) -> list:
    """Eccentricity vector e = v x h / mu - r/|r| [-] (points at perigee).

    ``radius`` is |r| when the caller has it (a smooth norm in the NLP).
    """
    h = cross(r, v)
    vxh = cross(v, h)
    rn = radius if radius is not None else (dot(r, r)) ** 0.5
    return [vxh[i] / mu - r[i] / rn for i in range(3)]


def specific_energy(r, v, mu, radius=None):
    """Two-body specific orbital energy v^2/2 - mu/|r| [J kg^-1]."""
    rn = radius if radius is not None else (dot(r, r)) ** 0.5
    return 0.5 * dot(v, v) - mu / rn


def elements(r, v, mu: float) -> dict:
    """Classical orbital elements of a planet-centred state (numbers; vectorised).

    Parameters
    ----------
    r, v : array (3,) or (3, N)
        Position [m] and velocity [m s^-1] in the inertial frame.
    mu : float
        Gravitational parameter [m^3 s^-2].

    Returns
    -------
    dict
        :data:`ELEMENT_UNITS`: ``semi_major_axis`` (negative for a hyperbola),
        ``eccentricity``, ``inclination`` [0, pi], ``ascending_node`` [0, 2 pi) (0 for
        an equatorial orbit), ``argument_of_perigee`` [0, 2 pi) (from the node; from x
        for an equatorial orbit; 0 for a circular one), ``true_anomaly`` [0, 2 pi)
        (from perigee; from the node, or x, for a circular orbit), ``perigee_radius``,
        ``apogee_radius`` (inf when unbound).
    """
    r = np.asarray(r, dtype=float)
    v = np.asarray(v, dtype=float)
    rn = np.sqrt(np.sum(r * r, axis=0))
    h = np.asarray(cross(r, v))
    hn = np.sqrt(np.sum(h * h, axis=0))
    e_vec = np.asarray(eccentricity_vector(r, v, mu, rn))
    e = np.sqrt(np.sum(e_vec * e_vec, axis=0))
    energy = specific_energy(r, v, mu, rn)
    with np.errstate(divide="ignore", invalid="ignore"):
        a = np.where(np.abs(energy) > 0, -mu / (2.0 * energy), np.inf)
    inc = np.arccos(np.clip(h[2] / hn, -1.0, 1.0))
    node = np.array([-h[1], h[0], np.zeros_like(h[0])])
    nn = np.sqrt(node[0] ** 2 + node[1] ** 2)
    tiny = 1e-11 * hn
    # where the orbit is equatorial the node is undefined: measure from x instead
    equatorial = nn <= tiny
    n_hat = np.where(equatorial, np.array([np.ones_like(nn), 0 * nn, 0 * nn]),
                     node / np.where(equatorial, 1.0, nn))
    raan = np.where(equatorial, 0.0, np.mod(np.arctan2(node[1], node[0]), 2 * np.pi))
    # in-plane axis 90 deg ahead of the node, in the direction of motion
    m_hat = np.asarray(cross(h / hn, n_hat))
    circular = e <= 1e-11
    p_hat = np.where(circular, n_hat, e_vec / np.where(circular, 1.0, e))
    q_hat = np.asarray(cross(h / hn, p_hat))
    argp = np.where(circular, 0.0,
                    np.mod(np.arctan2(dot(e_vec, m_hat), dot(e_vec, n_hat)), 2 * np.pi))
    nu = np.mod(np.arctan2(dot(r, q_hat), dot(r, p_hat)), 2 * np.pi)
    p = hn * hn / mu
    rp = p / (1.0 + e)
    with np.errstate(divide="ignore"):
        ra = np.where(e < 1.0, p / np.where(e < 1.0, 1.0 - e, 1.0), np.inf)
    out = {"semi_major_axis": a, "eccentricity": e, "inclination": inc,
           "ascending_node": raan, "argument_of_perigee": argp, "true_anomaly": nu,
           "perigee_radius": rp, "apogee_radius": ra}
    if r.ndim == 1:
        return {k: float(val) for k, val in out.items()}
    return out


def inertial_azimuth(inclination: float, latitude: float) -> float:
    """Launch azimuth [rad] from north on a non-rotating planet, the northerly branch.

    sin(Az) = cos(i) / cos(latitude) (Curtis, *Orbital Mechanics for Engineering
    Students*, section "Ground tracks"/launch azimuth; Vallado, *Fundamentals of
    Astrodynamics*, section 6.4). The southerly branch is pi - Az.

    Raises
    ------
    ValueError
        When |cos i| > cos(latitude): the orbit plane cannot contain the site.
    """
    s = math.cos(inclination) / math.cos(latitude)
    if abs(s) > 1.0 + 1e-12:
        raise ValueError(f"inclination {math.degrees(inclination):.4g} deg cannot be flown "
                         f"directly from latitude {math.degrees(latitude):.4g} deg")
    return math.asin(max(-1.0, min(1.0, s)))


def rotating_azimuth(inclination: float, latitude: float, orbit_speed: float,
                     surface_speed: float, southerly: bool = False) -> float:
    """Launch azimuth [rad] corrected for the speed the pad has with the planet's rotation.

    tan(Az_rot) = (v sin(Az_i) - v_eq cos(lat)) / (v cos(Az_i)), with v the orbital speed
    to reach and v_eq cos(lat) the eastward speed of the pad (Vallado, *Fundamentals of
    Astrodynamics*, section 6.4, "launch azimuth" for a rotating Earth; Curtis, example of
    the launch azimuth correction).

    Parameters
    ----------
    inclination, latitude : float
        [rad]; the latitude geocentric.
    orbit_speed : float
        Inertial speed at injection [m s^-1].
    surface_speed : float
        Eastward speed of the pad, omega R cos(latitude) [m s^-1].
    southerly : bool
        The southerly branch (pi - Az_i before the correction).
    """
    az = inertial_azimuth(inclination, latitude)
    if southerly:
        az = math.pi - az
    return math.atan2(orbit_speed * math.sin(az) - surface_speed, orbit_speed * math.cos(az))


def target_radii(target, planet) -> tuple[float, float] | None:
    """Perigee and apogee radii [m] a target asks for, or None when it names no orbit.

    From ``circular_orbit_altitude``, ``perigee_altitude`` and ``apogee_altitude``
    (altitudes above the equatorial radius, the convention of orbit catalogues), or
    ``semi_major_axis`` and ``eccentricity``.
    """
    R = planet.radius
    if getattr(target, "circular_orbit_altitude", None) is not None:
        r = R + target.circular_orbit_altitude
        return r, r
    if getattr(target, "perigee_altitude", None) is not None:
        return R + target.perigee_altitude, R + target.apogee_altitude
    if getattr(target, "semi_major_axis", None) is not None:
        a, e = target.semi_major_axis, target.eccentricity
        return a * (1.0 - e), a * (1.0 + e)
    return None


def orbit_conditions(r, v, target, planet) -> list[tuple[str, object]]:
    """Terminal conditions that put a state (r, v) on the target orbit, each of order one.

    Smooth in the state, with no arccos and no quadrant tests, and independent (so the
    NLP's constraint Jacobian keeps full rank):

    * size and shape: at perigee (``inject_at_perigee``) |r| = r_p, r.v = 0 and
      |v| = v_p; else the energy v^2/2 - mu/|r| = -mu/(2a) and, unless an argument of
      perigee is given, |h|^2 = mu p (p the semi-latus rectum); a circular orbit given as
      perigee = apogee or e = 0 as |r| = r, r.v = 0, |v| = sqrt(mu/r), since |h| and the
      energy have a stationary point there;
    * plane: with the node, h normal to the node line and to the in-plane axis 90 deg
      ahead of it (two conditions: h along the target normal); without it,
      h_z = |h| cos(i), or h_x = h_y = 0 for an equatorial orbit, where that has a
      stationary point;
    * argument of perigee: the eccentricity vector's two in-plane components,
      e cos(omega) along the node line and e sin(omega) across it, with |h|^2 = mu p.

    Scales: |r| by the planet radius R, speeds by sqrt(mu/R), |h| by sqrt(mu R), the
    energy by mu/R.

    Parameters
    ----------
    r, v : sequences of three components (CasADi symbols or numbers)
    target : ascentplan.problem.model.Target
    planet : ascentplan.problem.model.Planet

    Returns
    -------
    list of (name, expression)
        Each expression is zero on the target orbit.
    """
    mu, R = planet.gravitational_parameter, planet.radius
    v_ref = (mu / R) ** 0.5
    rows = []
    radii = target_radii(target, planet)
    rn = dot(r, r) ** 0.5
    h = cross(r, v)
    circular_given = getattr(target, "circular_orbit_altitude", None) is not None
    if radii is not None and not circular_given:
        rp, ra = radii
        a, p = 0.5 * (rp + ra), 2.0 * rp * ra / (rp + ra)
        ecc = (ra - rp) / (ra + rp)
        if ecc < 1e-9:
            rows += [("target_altitude", (rn - rp) / R),
                     ("target_flight_path_angle", dot(r, v) / rn / v_ref),
                     ("target_speed", (dot(v, v) ** 0.5 - (mu / rp) ** 0.5) / v_ref)]
        elif target.inject_at_perigee:
            rows += [("target_perigee_radius", (rn - rp) / R),
                     ("target_flight_path_angle", dot(r, v) / rn / v_ref),
                     ("target_perigee_speed",
                      (dot(v, v) ** 0.5 - (mu * (2.0 / rp - 1.0 / a)) ** 0.5) / v_ref)]
        else:
            if target.argument_of_perigee is None:
                rows.append(("target_energy",
                             (specific_energy(r, v, mu, rn) + mu / (2.0 * a)) / (mu / R)))
            rows.append(("target_angular_momentum", (dot(h, h) - mu * p) / (mu * R)))
    rows += _plane_conditions(h, target, planet, r, v, rn)
    return rows


def _plane_conditions(h, target, planet, r, v, rn) -> list:
    """Rows fixing the orbit plane and the argument of perigee (see orbit_conditions)."""
    mu = planet.gravitational_parameter
    h_ref = (mu * planet.radius) ** 0.5
    inc = target.inclination
    if inc is None:
        return []
    rows = []
    node = target.ascending_node
    if node is not None:
        n_hat = [math.cos(node), math.sin(node), 0.0]
        normal = [math.sin(inc) * math.sin(node), -math.sin(inc) * math.cos(node),
                  math.cos(inc)]
        m_hat = cross(normal, n_hat)
        rows += [("target_plane_node", dot(h, n_hat) / h_ref),
                 ("target_plane_across", dot(h, m_hat) / h_ref)]
        omega = target.argument_of_perigee
        if omega is not None:
            rp, ra = target_radii(target, planet)
            ecc = (ra - rp) / (ra + rp)
            e_vec = eccentricity_vector(r, v, mu, rn)
            rows += [("target_perigee_along_node", dot(e_vec, n_hat) - ecc * math.cos(omega)),
                     ("target_perigee_across_node", dot(e_vec, m_hat) - ecc * math.sin(omega))]
    elif abs(math.sin(inc)) > 1e-3:
        hn = (dot(h, h) + 1e-6 * h_ref * h_ref) ** 0.5
        rows.append(("target_inclination", (h[2] - math.cos(inc) * hn) / h_ref))
    else:
        rows += [("target_plane_x", h[0] / h_ref), ("target_plane_y", h[1] / h_ref)]
    return rows

