"""Physical constants and named planets used by default."""

from __future__ import annotations

#: Standard gravity [m s^-2], used to convert specific impulse to exhaust speed and
#: accelerations to g0 (CGPM 1901; U.S. Standard Atmosphere 1976, NOAA-S/T 76-1562).
G0 = 9.80665

#: Named planets: equatorial radius [m], gravitational parameter [m^3 s^-2], sidereal
#: rotation rate [rad s^-1]. Earth: WGS 84 (NIMA TR8350.2, 2000) radius and rotation
#: rate, EGM96/WGS 84 GM including the atmosphere.
PLANETS = {
    "earth": {
        "radius": 6378137.0,
        "gravitational_parameter": 3.986004418e14,
        "rotation_rate": 7.292115e-5,
    },
}
