"""Atmosphere models: temperature, pressure, density, speed of sound and viscosity vs altitude.

Every model returns an :class:`AtmosphereState` from ``state(altitude)``, altitude being
geometric height above the planet's reference radius [m], and works on floats, numpy
arrays of any shape and CasADi symbols alike (see :mod:`ascentplan._math`). The models
are evaluated inside a gradient-based NLP solver, so each is smooth (continuous first
derivative at least) and finite, with finite derivatives, at any altitude.

References
----------
.. [1] NOAA, NASA, USAF, *U.S. Standard Atmosphere, 1976*, NOAA-S/T 76-1562,
   Washington D.C., 1976.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ascentplan import _math as m_
from ascentplan._registry import REQUIRED, Param, float_tuple

#: ratio of specific heats of air (U.S. Standard Atmosphere 1976)
GAMMA_AIR = 1.4
#: universal gas constant R* of the U.S. Standard Atmosphere 1976 [J kmol^-1 K^-1]
GAS_CONSTANT_1976 = 8314.32
#: sea-level molecular weight of air M0 (U.S. Standard Atmosphere 1976) [kg kmol^-1]
MOLECULAR_WEIGHT_AIR = 28.9644
#: specific gas constant of air, R*/M0 [J kg^-1 K^-1] (USSA 1976)
R_AIR = GAS_CONSTANT_1976 / MOLECULAR_WEIGHT_AIR
#: Sutherland constants (USSA 1976): beta [kg m^-1 s^-1 K^-1/2], S [K]
SUTHERLAND_BETA = 1.458e-6
SUTHERLAND_S = 110.4
#: standard gravity of the geopotential scale [m s^-2] (USSA 1976)
G0_1976 = 9.80665
#: effective Earth radius of the geopotential-height formula r0 [m] (USSA 1976)
R0_1976 = 6356766.0


def sutherland_viscosity(temperature):
    """Dynamic viscosity of air by Sutherland's law with the USSA 1976 constants.

    mu = beta T^(3/2) / (T + S), beta = 1.458e-6 kg m^-1 s^-1 K^-1/2, S = 110.4 K [1]_.

    Parameters
    ----------
    temperature : float, array or CasADi symbol
        Kinetic temperature [K], > 0.

    Returns
    -------
    Same type as ``temperature``
        Dynamic viscosity [Pa s].
    """
    return SUTHERLAND_BETA * temperature * m_.sqrt(temperature) / (temperature + SUTHERLAND_S)


def speed_of_sound(temperature):
    """Speed of sound in air a = sqrt(gamma R T), gamma = 1.4, R = R*/M0 [m s^-1] [1]_."""
    return m_.sqrt(GAMMA_AIR * R_AIR * temperature)


@dataclass(frozen=True)
class AtmosphereState:
    """Air properties at one altitude (or arrays of them), SI units."""

    temperature: Any  # [K]
    pressure: Any  # [Pa]
    density: Any  # [kg m^-3]
    speed_of_sound: Any  # [m s^-1]
    viscosity: Any  # [Pa s]


def _state_from_density(temperature, density):
    """Air properties from temperature [K] and density [kg m^-3] by the ideal-gas law."""
    return AtmosphereState(temperature, density * R_AIR * temperature, density,
                           speed_of_sound(temperature), sutherland_viscosity(temperature))


@dataclass(frozen=True)
class Vacuum:
    """No atmosphere: zero density and pressure (sound speed and viscosity kept finite).

    The finite sound speed (300 m/s) and viscosity keep Mach and Reynolds numbers
    defined; with zero density they have no effect on drag.
    """

    parameters = {}

    @classmethod
    def from_params(cls):
        """The vacuum model; it takes no parameters."""
        return cls()

    def state(self, altitude):
        """Air properties at geometric ``altitude`` [m]: zero density and pressure."""
        zero = 0.0 * altitude
        return AtmosphereState(zero + 1.0, zero, zero, zero + 300.0, zero + 1.8e-5)


@dataclass(frozen=True)
class ExponentialAtmosphere:
    """Isothermal exponential atmosphere rho = rho0 exp(-h/H).

    Pressure follows the density (isothermal): p = p0 rho/rho0. Sound speed and
    viscosity are those of air at ``temperature``.

    Attributes
    ----------
    surface_density : float
        Density at h = 0 [kg m^-3].
    scale_height : float
        e-folding height H [m]; density halves every H ln 2. Given as
        ``half_density_altitude`` h_half in a problem file, H = h_half / ln 2, exact for
        this model since exp(-h_half / H) = 1/2. To fit the U.S. Standard Atmosphere
        1976 near the ground take h_half of about 6.7 km (where its density halves); the
        5.5 km often quoted is where its pressure halves.
    surface_pressure : float
        Pressure at h = 0 [Pa].
    temperature : float
        Temperature of the whole column [K].
    """

    surface_density: float = 1.225
    scale_height: float = 7200.0
    surface_pressure: float = 101325.0
    temperature: float = 288.15
    parameters = {
        "surface_density": Param("kg/m^3", 1.225, positive=True, doc="density at h = 0"),
        "scale_height": Param("m", None, positive=True,
                              doc="e-folding height H (default 7200 m); "
                                  "or give half_density_altitude"),
        "half_density_altitude": Param("m", None, positive=True,
                                       doc="altitude over which density halves, H ln 2 "
                                           "(about 6.7 km fits USSA 1976)"),
        "surface_pressure": Param("Pa", 101325.0, positive=True, doc="pressure at h = 0"),
        "temperature": Param("K", 288.15, positive=True, doc="temperature (isothermal)"),
    }

    def __post_init__(self):
        for name in ("surface_density", "scale_height", "surface_pressure", "temperature"):
            value = getattr(self, name)
            if not np.isfinite(value) or value <= 0.0:
                raise ValueError(f"{name}: must be > 0, got {value!r}")

    @classmethod
    def from_params(cls, scale_height=None, half_density_altitude=None, **kw):
        """Build from problem-file parameters (SI floats); see ``parameters``."""
        if scale_height is not None and half_density_altitude is not None:
            raise ValueError(f"scale_height ({scale_height!r} m) and half_density_altitude "
                             f"({half_density_altitude!r} m) both given; give one of them")
        if scale_height is None:
            scale_height = (7200.0 if half_density_altitude is None
                            else half_density_altitude / np.log(2.0))
        return cls(scale_height=scale_height, **kw)

    def state(self, altitude):
        """Air properties at geometric ``altitude`` [m]."""
        ratio = m_.exp(-altitude / self.scale_height)
        zero = 0.0 * altitude
        a = float(speed_of_sound(self.temperature))
        mu = float(sutherland_viscosity(self.temperature))
        return AtmosphereState(zero + self.temperature, self.surface_pressure * ratio,
                               self.surface_density * ratio, zero + a, zero + mu)


# --- U.S. Standard Atmosphere 1976 ---------------------------------------------------

#: layer bases of USSA 1976 [1]_, Table 4: geopotential height [m'], lapse rate
#: [K/m'], base temperature [K]. The last row continues the 84.852 km' value
#: isothermally (see :class:`StandardAtmosphere1976`).
_LAYER_BASE_HEIGHT = (0.0, 11000.0, 20000.0, 32000.0, 47000.0, 51000.0, 71000.0, 84852.0)
_LAYER_LAPSE_RATE = (-0.0065, 0.0, 0.001, 0.0028, 0.0, -0.0028, -0.002, 0.0)
_LAYER_BASE_TEMPERATURE = (288.15, 216.65, 216.65, 228.65, 270.65, 270.65, 214.65, 186.946)
_SEA_LEVEL_PRESSURE = 101325.0

#: g0 M0 / R* [K m'^-1]: the hydrostatic constant of the layer formulas
_HYDROSTATIC = G0_1976 * MOLECULAR_WEIGHT_AIR / GAS_CONSTANT_1976

#: width of the logistic blends between layers, in geopotential height [m']. Over a
#: blend the temperature departs from the exact kinked profile by at most
#: 0.28 |lapse change| width (0.09 K at 11 km'), density by < 0.05 %; 1 km' away
#: from a layer base the departure is below 1e-7 K.
_BLEND_WIDTH = 50.0

#: the layer formulas take the logarithm of their own temperature line, which
#: crosses zero far outside its layer. It is floored at _FLOOR_TEMPERATURE with a
#: plain max (one operation, where a smooth floor cost a fifth of the model's
#: expression): the floor acts only where the layer's blend weight is below 1e-300, so
#: the blended result and its derivatives are untouched in floating point.
_FLOOR_TEMPERATURE = 20.0

#: geometric altitudes below this [m] are held at its value: keeps the geopotential
#: formula away from its pole at -r0; no trajectory goes there.
_LOWEST_ALTITUDE = -200.0e3


def _base_log_pressures():
    """log of the pressure at each layer base [ln Pa], chained from sea level."""
    log_p = [np.log(_SEA_LEVEL_PRESSURE)]
    for k in range(len(_LAYER_BASE_HEIGHT) - 1):
        top = _LAYER_BASE_HEIGHT[k + 1]
        log_p.append(float(_layer_log_pressure(k, top, log_p[k])))
    return tuple(log_p)


def _layer_temperature(k, geopotential):
    """Temperature line of layer ``k`` [K], extended beyond the layer."""
    return (_LAYER_BASE_TEMPERATURE[k]
            + _LAYER_LAPSE_RATE[k] * (geopotential - _LAYER_BASE_HEIGHT[k]))


def _layer_log_pressure(k, geopotential, base_log_pressure, temperature=None):
    """Hydrostatic log pressure of layer ``k`` [ln Pa], finite at any height.

    Gradient layer: p = pb (Tb/T)^(g0 M0/(R* L)); isothermal layer:
    p = pb exp(-g0 M0 (H - Hb)/(R* Tb)) (USSA 1976 [1]_, eqs. 33a, 33b).
    ``temperature`` is the layer's temperature line at ``geopotential`` when the
    caller has it already.
    """
    lapse = _LAYER_LAPSE_RATE[k]
    base_temperature = _LAYER_BASE_TEMPERATURE[k]
    if lapse == 0.0:
        return (base_log_pressure
                - _HYDROSTATIC * (geopotential - _LAYER_BASE_HEIGHT[k]) / base_temperature)
    if temperature is None:
        temperature = _layer_temperature(k, geopotential)
    floored = m_.fmax(temperature, _FLOOR_TEMPERATURE)
    return base_log_pressure - _HYDROSTATIC / lapse * m_.log(floored / base_temperature)


_BASE_LOG_PRESSURE = _base_log_pressures()


def geopotential_height(altitude):
    """Geopotential height H = r0 Z / (r0 + Z) [m'] of geometric altitude Z [m].

    r0 = 6356.766 km (USSA 1976 [1]_, eq. 18). Altitudes below -200 km are held there.
    """
    z = m_.fmax(altitude, _LOWEST_ALTITUDE)
    return R0_1976 * z / (R0_1976 + z)


def _layer_weights(geopotential):
    """Blend weight of each layer at ``geopotential`` [m']: logistic steps, summing to 1."""
    steps = [1.0]
    for base in _LAYER_BASE_HEIGHT[1:]:
        steps.append(m_.sigmoid((geopotential - base) / _BLEND_WIDTH))
    steps.append(0.0)
    return [steps[k] - steps[k + 1] for k in range(len(_LAYER_BASE_HEIGHT))]


def _us1976_temperature_and_log_pressure(altitude):
    """Blended USSA 1976 temperature [K] and log pressure [ln Pa] at geometric altitude [m]."""
    geopotential = geopotential_height(altitude)
    weights = _layer_weights(geopotential)
    temperature = 0.0
    log_pressure = 0.0
    for k, weight in enumerate(weights):
        line = _layer_temperature(k, geopotential)
        temperature = temperature + weight * line
        log_pressure = log_pressure + weight * _layer_log_pressure(
            k, geopotential, _BASE_LOG_PRESSURE[k], line)
    return temperature, log_pressure


@dataclass(frozen=True)
class StandardAtmosphere1976:
    """U.S. Standard Atmosphere 1976 [1]_, made smooth for gradient-based optimisation.

    Each layer's exact formula (linear temperature in geopotential height H; pressure
    p = pb (Tb/T)^(g0 M0/(R* L)) in gradient layers, p = pb exp(-g0 M0 (H - Hb)/(R* Tb))
    in isothermal ones) is blended into the next over a logistic step of width 50 m'
    centred on the layer base; temperature and log pressure are blended, density
    follows from the ideal-gas law rho = p M0/(R* T). The result is infinitely
    differentiable. Away from the layer bases it equals the standard to round-off;
    within about 300 m' of a base, where the standard has a kink, temperature differs
    by at most 0.09 K (at 11 km') and density by at most 0.05 %.

    Temperature is the molecular-scale temperature, equal to the kinetic temperature
    up to 80 km; from 80 to 86 km the standard's kinetic temperature is lower by up to
    0.04 % (0.08 K, the molecular-weight ratio), which is ignored, as pressure and
    density do not depend on it. Sound speed a = sqrt(1.4 R T) and Sutherland viscosity
    follow from this temperature.

    Outside 0-86 km (the standard is defined from -5 km):

    - Below sea level the first layer (-6.5 K/km') continues, as the standard does to
      -5 km; below -200 km the properties are held constant.
    - Above 84.852 km' (86 km geometric) the atmosphere continues isothermal at
      186.946 K, which is what the standard gives up to 91 km. Beyond 91 km this is an
      extrapolation: density decays exponentially with a scale height of about 5.5 km
      (R* T/(g0 M0) = 5.47 km' in geopotential height), lower than the real
      thermosphere (e.g. 8.9e-11 instead of 2.1e-9 kg/m^3 at 150 km); the drag it
      misses there is negligible for an ascent.

    Cost: one evaluation at a CasADi SX symbol is a few hundred scalar operations.
    """

    parameters = {}

    @classmethod
    def from_params(cls):
        """The standard atmosphere; it takes no parameters."""
        return cls()

    def temperature(self, altitude):
        """Temperature [K] at geometric ``altitude`` [m] (cheaper than :meth:`state`)."""
        geopotential = geopotential_height(altitude)
        temperature = 0.0
        for k, weight in enumerate(_layer_weights(geopotential)):
            temperature = temperature + weight * _layer_temperature(k, geopotential)
        return temperature

    def state(self, altitude):
        """Air properties at geometric ``altitude`` [m].

        Parameters
        ----------
        altitude : float, numpy.ndarray or casadi.SX/MX
            Geometric altitude above sea level [m].

        Returns
        -------
        AtmosphereState
            Temperature [K], pressure [Pa], density [kg m^-3], speed of sound
            [m s^-1], dynamic viscosity [Pa s], each shaped like ``altitude``.
        """
        if not m_.is_symbolic(altitude):
            altitude = np.asarray(altitude, dtype=float)
        temperature, log_pressure = _us1976_temperature_and_log_pressure(altitude)
        pressure = m_.exp(log_pressure)
        density = pressure / (R_AIR * temperature)
        return AtmosphereState(temperature, pressure, density, speed_of_sound(temperature),
                               sutherland_viscosity(temperature))


# --- user table ----------------------------------------------------------------------

#: below the first table point, log density continues linearly for at most this many
#: e-folds and is then held constant, so that density stays finite at any depth
_MAX_EFOLDS_BELOW_TABLE = 20.0


def _check_positive(name, values, unit):
    for i, v in enumerate(values):
        if v <= 0.0:
            raise ValueError(f"{name}: must be > 0 {unit}, got {v!r} at index {i}")


@dataclass(frozen=True)
class TableAtmosphere:
    """Density (and optionally temperature) tabulated against altitude by the user.

    Log density is interpolated by a monotone piecewise cubic Hermite curve
    (Fritsch-Butland interior slopes, the rule of SciPy's ``PchipInterpolator``; end
    slopes equal the end secants), so density never overshoots the table between
    points and has a continuous derivative. Outside the table log density continues
    linearly with the end secant slope: above the last point density decays
    exponentially with the scale height of the last interval; below the first point it
    grows with that of the first interval, for at most 20 e-folds, then stays constant.

    Temperature, when given, is interpolated the same way but with zero end slopes and
    held at its end values outside the table. When not given, the U.S. Standard
    Atmosphere 1976 temperature at the same altitude is used (so Mach numbers are
    realistic; a constant temperature would overstate sound speed by 15 % at 11 km).
    Pressure follows from the ideal-gas law p = rho R T, sound speed and viscosity from
    the temperature, all with the USSA 1976 constants.

    Attributes
    ----------
    altitude : tuple of float
        Geometric altitudes [m], strictly increasing, at least 2.
    density : tuple of float
        Densities [kg m^-3], > 0 and strictly decreasing with altitude (an atmosphere
        in hydrostatic balance is denser below; this also makes the continuation above
        the table decay).
    temperature : tuple of float or None
        Temperatures [K], > 0, same length; None for the USSA 1976 temperature.
    """

    altitude: tuple
    density: tuple
    temperature: tuple | None = None
    _log_density: tuple = field(init=False, repr=False, compare=False)
    _log_density_slopes: tuple = field(init=False, repr=False, compare=False)
    _temperature_slopes: tuple | None = field(init=False, repr=False, compare=False)

    parameters = {
        "altitude": Param("m", REQUIRED, kind="list",
                          doc="geometric altitudes, strictly increasing"),
        "density": Param("kg/m^3", REQUIRED, kind="list", positive=True,
                         doc="density at each altitude, decreasing"),
        "temperature": Param("K", None, kind="list", positive=True,
                             doc="temperature at each altitude; default USSA 1976"),
    }

    def __post_init__(self):
        altitude = float_tuple("altitude", self.altitude, "m")
        density = float_tuple("density", self.density, "kg/m^3")
        if len(altitude) < 2:
            raise ValueError(f"altitude: needs at least 2 points, got {list(altitude)}")
        if len(density) != len(altitude):
            raise ValueError(f"density: needs one value per altitude ({len(altitude)}), "
                             f"got {len(density)}: {list(density)}")
        for i in range(1, len(altitude)):
            if altitude[i] <= altitude[i - 1]:
                raise ValueError(f"altitude: must be strictly increasing, got "
                                 f"{altitude[i]!r} m after {altitude[i - 1]!r} m "
                                 f"at index {i}")
        _check_positive("density", density, "kg/m^3")
        for i in range(1, len(density)):
            if density[i] >= density[i - 1]:
                raise ValueError(f"density: must decrease with altitude, got "
                                 f"{density[i]!r} kg/m^3 at {altitude[i]!r} m after "
                                 f"{density[i - 1]!r} kg/m^3 at {altitude[i - 1]!r} m")
        temperature = None
        if self.temperature is not None:
            temperature = float_tuple("temperature", self.temperature, "K")
            if len(temperature) != len(altitude):
                raise ValueError(f"temperature: needs one value per altitude "
                                 f"({len(altitude)}), got {len(temperature)}: "
                                 f"{list(temperature)}")
            _check_positive("temperature", temperature, "K")
        log_density = tuple(float(v) for v in np.log(density))
        object.__setattr__(self, "altitude", altitude)
        object.__setattr__(self, "density", density)
        object.__setattr__(self, "temperature", temperature)
        object.__setattr__(self, "_log_density", log_density)
        object.__setattr__(self, "_log_density_slopes", tuple(
            float(v) for v in m_.monotone_cubic_slopes(altitude, log_density, "secant")))
        object.__setattr__(self, "_temperature_slopes", None if temperature is None else tuple(
            float(v) for v in m_.monotone_cubic_slopes(altitude, temperature, "zero")))

    @classmethod
    def from_params(cls, altitude, density, temperature=None):
        """Build from problem-file parameters (SI floats); see ``parameters``."""
        return cls(altitude=altitude, density=density, temperature=temperature)

    def state(self, altitude):
        """Air properties at geometric ``altitude`` [m].

        Parameters
        ----------
        altitude : float, numpy.ndarray or casadi.SX/MX
            Geometric altitude [m].

        Returns
        -------
        AtmosphereState
            Each field shaped like ``altitude``.
        """
        if not m_.is_symbolic(altitude):
            altitude = np.asarray(altitude, dtype=float)
        first = self.altitude[0]
        first_slope = self._log_density_slopes[0]
        inside = m_.cubic_hermite(altitude, self.altitude, self._log_density,
                                  self._log_density_slopes, extrapolation="constant")
        # the linear continuations, written outside cubic_hermite to cap the one below
        above = self._log_density_slopes[-1] * m_.fmax(altitude - self.altitude[-1], 0.0)
        depth_limit = (-_MAX_EFOLDS_BELOW_TABLE / abs(first_slope) if first_slope != 0.0
                       else 0.0)
        below = first_slope * m_.clip(altitude - first, depth_limit, 0.0)
        density = m_.exp(inside + above + below)
        if self.temperature is None:
            temperature = _US1976.temperature(altitude)
        else:
            temperature = m_.cubic_hermite(altitude, self.altitude, self.temperature,
                                           self._temperature_slopes,
                                           extrapolation="constant")
        return _state_from_density(temperature, density)


_US1976 = StandardAtmosphere1976()

#: atmosphere models by the name used in problem files
ATMOSPHERES = {
    "exponential": ExponentialAtmosphere,
    "us1976": StandardAtmosphere1976,
    "table": TableAtmosphere,
    "vacuum": Vacuum,
}
