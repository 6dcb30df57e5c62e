"""Physical constants and named planets used by default."""

from __future__ import annotations

#: Standard gravity [m s^-2], used to convert specific impulse to exhaust speed and
#: accelerations to g0 (CGPM 1901; U.S. Standard Atmosphere 1976, NOAA-S/T 76-1562).
G0 = 9.80665

#: Named planets: equatorial radius [m], gravitational parameter [m^3 s^-2], sidereal
#: rotation rate [rad s^-1], flattening of the reference ellipsoid [-] and the second
#: zonal harmonic J2 [-]. Earth: WGS 84 (NIMA TR8350.2, 2000) radius, rotation rate and
#: flattening 1/298.257223563; EGM96/WGS 84 GM including the atmosphere; J2 =
#: -sqrt(5) C20 from the normalised WGS 84 / EGM96 coefficient C20 = -0.484166774985e-3
#: (TR8350.2 table 5.3, value from memory).
PLANETS = {
    "earth": {
        "radius": 6378137.0,
        "gravitational_parameter": 3.986004418e14,
        "rotation_rate": 7.292115e-5,
        "flattening": 1.0 / 298.257223563,
        "j2": 1.0826298213133048e-3,
    },
}
