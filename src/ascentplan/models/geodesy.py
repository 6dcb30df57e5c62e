"""Geodesy of an oblate, rotating planet: geodetic latitude and altitude, site positions.

The planet is an ellipsoid of revolution with equatorial radius ``a`` and flattening
``f`` (a sphere when ``f = 0``); the polar radius is ``b = a (1 - f)`` and the first
eccentricity squared ``e^2 = f (2 - f)``.

Geodetic coordinates from a planet-centred position use Bowring's method (B. R. Bowring,
"Transformation from spatial to geographical coordinates", Survey Review 23(181), 1976),
iterated twice from the parametric latitude, and the altitude

    h = p cos(phi) + z sin(phi) - a sqrt(1 - e^2 sin^2 phi),

which, unlike ``p / cos(phi) - N``, has no singularity at the poles. Every function here
is plain arithmetic over :mod:`ascentplan._math`, so it runs on floats, numpy arrays and
CasADi symbols alike (the NLP's minimum-altitude constraint and the atmosphere use it).
On a sphere it reduces exactly to the geocentric latitude and ``|r| - a``.
"""

from __future__ import annotations

import numpy as np

from ascentplan import _math as m_

#: softening of the distance from the spin axis [m]: keeps the latitude's gradient
#: finite on the axis itself (it changes positions off the axis by under 1e-12 m)
_AXIS_EPS = 1e-3


def eccentricity_squared(flattening: float) -> float:
    """First eccentricity squared e^2 = f (2 - f) [-] of an ellipsoid of flattening ``f``."""
    return flattening * (2.0 - flattening)


def geodetic_latitude_altitude(x, y, z, radius: float, flattening: float):
    """Geodetic latitude [rad] and altitude above the ellipsoid [m] of a position.

    Parameters
    ----------
    x, y, z : float, array or CasADi symbol
        Planet-centred position [m], ``z`` along the spin axis (any frame that shares
        the spin axis: inertial or rotating).
    radius : float
        Equatorial radius a [m].
    flattening : float
        f = (a - b)/a [-]; 0 for a sphere.

    Returns
    -------
    latitude, altitude
    """
    a = radius
    b = a * (1.0 - flattening)
    e2 = eccentricity_squared(flattening)
    ep2 = e2 / (1.0 - e2)
    p = m_.smooth_norm(x, y, eps=_AXIS_EPS)
    # parametric latitude first, then two Bowring steps: sub-millimetre from the ground
    # to beyond geostationary altitude (tests/test_geodesy.py checks it against pymap3d)
    beta = m_.atan2(a * z, b * p)
    phi = beta
    for _ in range(2):
        sb, cb = m_.sin(beta), m_.cos(beta)
        phi = m_.atan2(z + ep2 * b * sb * sb * sb, p - e2 * a * cb * cb * cb)
        beta = m_.atan2((1.0 - flattening) * m_.sin(phi), m_.cos(phi))
    s, c = m_.sin(phi), m_.cos(phi)
    altitude = p * c + z * s - a * m_.sqrt(1.0 - e2 * s * s)
    return phi, altitude


def geodetic_altitude(x, y, z, radius: float, flattening: float):
    """Altitude above the ellipsoid [m] of a planet-centred position [m]."""
    return geodetic_latitude_altitude(x, y, z, radius, flattening)[1]


def site_position(latitude: float, altitude: float, radius: float, flattening: float,
                  longitude: float = 0.0) -> np.ndarray:
    """Planet-centred position [m] of a point at geodetic latitude, longitude [rad] and
    altitude [m] (the standard ellipsoid formulas, e.g. NIMA TR8350.2 (2000), eq. 4-14).

    Longitude is measured in the frame of the returned position: 0 puts the point in
    the x-z plane, as in the launch frame of the three-dimensional kind.
    """
    e2 = eccentricity_squared(flattening)
    s, c = np.sin(latitude), np.cos(latitude)
    n = radius / np.sqrt(1.0 - e2 * s * s)
    return np.array([(n + altitude) * c * np.cos(longitude),
                     (n + altitude) * c * np.sin(longitude),
                     (n * (1.0 - e2) + altitude) * s])


def geocentric_latitude(latitude: float, altitude: float, radius: float,
                        flattening: float) -> float:
    """Geocentric latitude [rad] of a site at geodetic ``latitude`` [rad] and ``altitude`` [m]."""
    r = site_position(latitude, altitude, radius, flattening)
    return float(np.arctan2(r[2], np.hypot(r[0], r[1])))
