"""Tests of the atmosphere models against USSA 1976 tables and reference libraries."""

import ambiance
import casadi as ca
import numpy as np
import pytest
from fluids.atmosphere import ATMOSPHERE_1976
from scipy.interpolate import PchipInterpolator

from ascentplan._registry import REQUIRED, Param
from ascentplan.models.atmosphere import (
    ATMOSPHERES,
    R_AIR,
    AtmosphereState,
    ExponentialAtmosphere,
    StandardAtmosphere1976,
    TableAtmosphere,
    Vacuum,
)

US1976 = StandardAtmosphere1976()

# USSA 1976 (NOAA-S/T 76-1562) layer bases above sea level, geopotential [m']
LAYER_BASES = np.array([11000.0, 20000.0, 32000.0, 47000.0, 51000.0, 71000.0, 84852.0])
R0 = 6356766.0  # USSA 1976 geopotential radius [m]
FIELDS = ("temperature", "pressure", "density", "speed_of_sound", "viscosity")


def geopotential(z):
    return R0 * z / (R0 + z)  # USSA 1976, eq. 18


def away_from_blends(z, margin=1000.0):
    """True where geometric altitude z is more than ``margin`` [m'] from every layer base."""
    distance = np.abs(geopotential(np.asarray(z))[..., None] - LAYER_BASES)
    return distance.min(axis=-1) > margin


def casadi_state(model, altitudes):
    """Evaluate ``model.state`` on a CasADi SX symbol, then numerically at ``altitudes``."""
    h = ca.SX.sym("h")
    s = model.state(h)
    f = ca.Function("f", [h], [getattr(s, name) for name in FIELDS])
    z = np.asarray(altitudes, dtype=float).ravel()
    out = f.map(z.size)(z.reshape(1, -1))
    return AtmosphereState(*[np.array(o).ravel() for o in out])


def derivative_functions(model, name):
    """CasADi Function h -> (value, d/dh, d2/dh2) of one atmosphere field, mapped over points."""
    h = ca.SX.sym("h")
    value = getattr(model.state(h), name)
    first = ca.jacobian(value, h)
    second = ca.jacobian(first, h)
    return ca.Function("d", [h], [value, first, second])


def evaluate_mapped(function, z):
    z = np.asarray(z, dtype=float).ravel()
    return [np.array(o).ravel() for o in function.map(z.size)(z.reshape(1, -1))]


def both_backends(model, z):
    return {"numpy": model.state(np.asarray(z, dtype=float)), "casadi": casadi_state(model, z)}


# --- U.S. Standard Atmosphere 1976: published table ---------------------------------

# Source: U.S. Standard Atmosphere, 1976, NOAA-S/T 76-1562 (NOAA, NASA, USAF, Washington
# DC, 1976), Part 4, Table I (geometric altitude, SI units): Z [km], T [K], P [Pa],
# rho [kg/m^3], a [m/s]
PUBLISHED_1976 = [
    (0, 288.150, 101325, 1.2250, 340.294),
    (1, 281.651, 89876.3, 1.11166, 336.435),
    (5, 255.676, 54048.3, 0.736428, 320.545),
    (10, 223.252, 26499.9, 0.413510, 299.532),
    (11, 216.774, 22700.0, 0.364802, 295.154),
    (20, 216.650, 5529.31, 0.0889099, 295.070),
    (30, 226.509, 1197.03, 0.0184102, 301.709),
    (50, 270.650, 79.7791, 1.02688e-3, 329.799),
    (70, 219.585, 5.22090, 8.28287e-5, 297.061),
    (80, 198.639, 1.05247, 1.84580e-5, 282.538),
]


@pytest.mark.parametrize("backend", ["numpy", "casadi"])
@pytest.mark.parametrize("row", PUBLISHED_1976, ids=[f"{r[0]}km" for r in PUBLISHED_1976])
def test_us1976_published_table(row, backend):
    z_km, temperature, pressure, density, sound = row
    state = both_backends(US1976, [z_km * 1000.0])[backend]
    if away_from_blends(z_km * 1000.0):
        # tolerances: the rounding of the 6 significant digits printed in the table
        t_tol, p_tol, rho_tol, a_tol = 1e-3, 1e-5, 5e-5, 1e-5
    else:
        # 11 km (19 m' below the 11 km' base) and 20 km (63 m' below the 20 km' base)
        # lie in a blend; documented bounds: T 0.1 K, density 0.1 %
        t_tol, p_tol, rho_tol, a_tol = 0.1, 1e-5, 1e-3, 5e-4
    assert abs(float(state.temperature[0]) - temperature) <= t_tol
    assert float(state.pressure[0]) == pytest.approx(pressure, rel=p_tol)
    assert float(state.density[0]) == pytest.approx(density, rel=rho_tol)
    assert float(state.speed_of_sound[0]) == pytest.approx(sound, rel=a_tol)


def test_us1976_returns_floats_and_shapes():
    s = US1976.state(5000.0)
    assert np.ndim(s.density) == 0 and float(s.density) == pytest.approx(0.736428, rel=5e-5)
    grid = np.linspace(0.0, 80e3, 12).reshape(3, 4)
    s = US1976.state(grid)
    for name in FIELDS:
        assert np.shape(getattr(s, name)) == (3, 4)
    assert US1976.temperature(grid) == pytest.approx(s.temperature, abs=1e-12)


# --- U.S. Standard Atmosphere 1976: dense comparisons with reference libraries ------

DENSE = np.arange(0.0, 80000.0 + 1.0, 250.0)


@pytest.fixture(scope="module")
def fluids_dense():
    # Source: the `fluids` library's ATMOSPHERE_1976 (same USSA 1976 constants)
    ref = [ATMOSPHERE_1976(float(z)) for z in DENSE]
    return AtmosphereState(*[np.array([getattr(r, k) for r in ref])
                             for k in ("T", "P", "rho", "v_sonic", "mu")])


@pytest.mark.parametrize("backend", ["numpy", "casadi"])
def test_us1976_matches_fluids_dense(fluids_dense, backend):
    ours = both_backends(US1976, DENSE)[backend]
    ref = fluids_dense
    away = away_from_blends(DENSE)
    assert away.sum() > 250  # most of the grid is away from the seven layer bases
    relative = {name: np.abs(getattr(ours, name) / getattr(ref, name) - 1.0)
                for name in FIELDS}
    # everywhere 0-80 km: density within 0.1 % (required accuracy), temperature
    # within 0.1 K, pressure (blended in log, second order) within 1e-5
    assert relative["density"].max() < 1e-3
    assert np.abs(ours.temperature - ref.temperature).max() < 0.1
    assert relative["pressure"].max() < 1e-5
    assert relative["speed_of_sound"].max() < 5e-4
    assert relative["viscosity"].max() < 5e-4
    # more than 1 km' from a layer base: the exact 1976 layer formulas to round-off
    for name in FIELDS:
        assert relative[name][away].max() < 1e-9, name


def test_us1976_matches_fluids_up_to_86km_and_below_sea_level():
    # Source: fluids ATMOSPHERE_1976 to 86 km; below 0 m fluids continues the first
    # layer, which is also what the 1976 standard does down to -5 km
    z = np.concatenate([np.arange(80e3, 86e3 + 1, 100.0), np.arange(-20e3, 0.0, 500.0)])
    ours = US1976.state(z)
    ref = [ATMOSPHERE_1976(float(x)) for x in z]
    rho = np.array([r.rho for r in ref])
    temperature = np.array([r.T for r in ref])
    away = away_from_blends(z, margin=1000.0)
    assert np.abs(ours.density / rho - 1.0).max() < 1e-3
    assert np.abs(ours.density / rho - 1.0)[away].max() < 1e-9
    assert np.abs(ours.temperature - temperature)[away].max() < 1e-6


@pytest.mark.parametrize("backend", ["numpy", "casadi"])
def test_us1976_matches_ambiance_dense(backend):
    # Source: the `ambiance` library (ICAO 1993 standard atmosphere, identical to
    # USSA 1976 up to 80 km; its gas constant differs in the 6th digit, hence 5e-5)
    ref = ambiance.Atmosphere(DENSE)
    ours = both_backends(US1976, DENSE)[backend]
    away = away_from_blends(DENSE)
    pairs = {"density": ref.density, "pressure": ref.pressure,
             "speed_of_sound": ref.speed_of_sound, "viscosity": ref.dynamic_viscosity}
    for name, values in pairs.items():
        relative = np.abs(getattr(ours, name) / values - 1.0)
        assert relative.max() < 1e-3, name
        assert relative[away].max() < 5e-5, name
    assert np.abs(ours.temperature - ref.temperature)[away].max() < 1e-3
    assert np.abs(ours.temperature - ref.temperature).max() < 0.1


WIDE = np.concatenate([np.linspace(-20e3, 120e3, 2801), np.geomspace(120e3, 2000e3, 400)])


def test_us1976_numpy_and_casadi_agree():
    ours = US1976.state(WIDE)
    sym = casadi_state(US1976, WIDE)
    for name in FIELDS:
        a, b = getattr(ours, name), getattr(sym, name)
        scale = np.maximum(np.abs(a), 1e-300)
        assert np.all(np.abs(a - b) <= 1e-12 * scale), name  # same formula: round-off only


# --- smoothness for the NLP ----------------------------------------------------------

def _geometric(geopotential_height):
    return R0 * geopotential_height / (R0 - geopotential_height)  # inverse of eq. 18


SMOOTH_POINTS = np.unique(np.concatenate([
    WIDE, _geometric(LAYER_BASES), _geometric(LAYER_BASES) + 0.5, [-20e3, 0.0, 2000e3]]))


@pytest.mark.parametrize("name", FIELDS)
def test_us1976_derivatives_finite_everywhere(name):
    value, first, second = evaluate_mapped(derivative_functions(US1976, name), SMOOTH_POINTS)
    for array in (value, first, second):
        assert np.all(np.isfinite(array))
    assert np.all(value > 0)  # density is still 1e-119 kg/m^3 at 2000 km


@pytest.mark.parametrize("name", ["temperature", "density"])
def test_us1976_derivatives_continuous_across_layer_bases(name):
    # The exact standard has a kink at every base: the temperature slope jumps by the
    # lapse-rate change (up to 6.5 K/km at 11 km'). A C1 (here C-infinity) model has a
    # slope jump over +-1 cm that is a tiny fraction of that, and a second derivative
    # that changes little over +-1 mm.
    functions = derivative_functions(US1976, name)
    lapse = np.array([-6.5, 0.0, 1.0, 2.8, 0.0, -2.8, -2.0, 0.0]) * 1e-3  # USSA 1976 [K/m']
    for k, base in enumerate(_geometric(LAYER_BASES)):
        value, first, second = evaluate_mapped(functions, [base - 0.01, base + 0.01])
        state = US1976.state(base)
        if name == "temperature":
            kink = abs(lapse[k + 1] - lapse[k])
        else:  # d(rho)/dh = rho (-g0 M0/(R* T) - T'/T): its jump at the kink
            kink = float(state.density) * abs(lapse[k + 1] - lapse[k]) / float(state.temperature)
        assert abs(first[1] - first[0]) < 1e-3 * kink
        _, _, second_near = evaluate_mapped(functions, [base - 1e-3, base + 1e-3])
        assert abs(second_near[1] - second_near[0]) < 1e-2 * np.abs(second).max()


@pytest.mark.parametrize("name", ["temperature", "pressure", "density", "speed_of_sound"])
def test_us1976_casadi_derivatives_match_finite_differences(name):
    z = np.array([-15e3, 5e3, 10.99e3, 11.02e3, 20.05e3, 47.1e3, 51e3, 86e3, 150e3, 800e3])
    _, first, second = evaluate_mapped(derivative_functions(US1976, name), z)
    step = 0.5
    up, down = getattr(US1976.state(z + step), name), getattr(US1976.state(z - step), name)
    mid = getattr(US1976.state(z), name)
    central = (up - down) / (2 * step)
    curvature = (up - 2 * mid + down) / step**2
    # central differences: truncation ~ step^2 f''' (blends: f''' ~ f' / width^2)
    assert central == pytest.approx(first, rel=1e-4, abs=1e-12 * np.abs(mid).max())
    assert curvature == pytest.approx(second, rel=1e-2, abs=1e-6 * np.abs(second).max())


def test_us1976_expression_is_modest():
    h = ca.SX.sym("h")
    f = ca.Function("f", [h], [US1976.state(h).density])
    # a regression guard on the cost per collocation point (about 225 nodes today)
    assert f.n_nodes() < 400


# --- U.S. Standard Atmosphere 1976: behaviour outside 0-86 km ------------------------

def test_us1976_isothermal_above_86km():
    z = np.array([90e3, 100e3, 150e3, 300e3, 2000e3])
    s = US1976.state(z)
    # USSA 1976: T = 186.87 K kinetic (186.946 K molecular-scale) from 86 to 91 km;
    # above, the documented isothermal continuation
    assert s.temperature == pytest.approx(186.946, abs=1e-9)
    # hydrostatic isothermal decay with scale height R* T/(g0 M0) in geopotential
    scale_height = 8314.32 * 186.946 / (9.80665 * 28.9644)  # USSA 1976 constants
    assert scale_height == pytest.approx(5472.0, abs=1.0)  # "about 5.5 km"
    ratio = s.density[1:] / s.density[0]
    expected = np.exp(-(geopotential(z[1:]) - geopotential(z[0])) / scale_height)
    assert ratio == pytest.approx(expected, rel=1e-10)
    assert np.all(np.isfinite(s.density)) and np.all(s.density > 0)
    # at 90 km the standard's tabulated density is 3.416e-6 kg/m^3 (USSA 1976,
    # from memory): the continuation is within 2 % there
    assert s.density[0] == pytest.approx(3.416e-6, rel=0.02)
    # and continuous with fluids' 1976 value at 86 km
    assert float(US1976.state(86e3).density) == pytest.approx(
        ATMOSPHERE_1976(86e3).rho, rel=1e-6)


def test_us1976_below_sea_level_continues_first_layer():
    z = np.array([-5e3, -20e3])
    h = geopotential(z)
    s = US1976.state(z)
    # USSA 1976 first-layer formulas, eqs. 23 and 33a
    temperature = 288.15 - 0.0065 * h
    pressure = 101325.0 * (288.15 / temperature) ** (9.80665 * 28.9644 / (8314.32 * -0.0065))
    assert s.temperature == pytest.approx(temperature, rel=1e-12)
    assert s.pressure == pytest.approx(pressure, rel=1e-12)
    deep = US1976.state(np.array([-300e3, -1e7]))
    assert np.all(np.isfinite(deep.density)) and deep.density[0] == deep.density[1]


def test_us1976_registry_and_no_parameters():
    assert ATMOSPHERES["us1976"] is StandardAtmosphere1976
    assert StandardAtmosphere1976.parameters == {}
    assert isinstance(StandardAtmosphere1976.from_params(), StandardAtmosphere1976)


# --- exponential atmosphere and vacuum -------------------------------------------------

def test_exponential_half_density_altitude():
    model = ExponentialAtmosphere.from_params(half_density_altitude=5500.0)
    rho0 = 1.225
    z = np.array([0.0, 5500.0, 11000.0])
    # computed from the formula rho = rho0 exp(-h/H): density halves every h_half and
    # quarters at 2 h_half exactly when H = h_half / ln 2
    assert model.state(z).density == pytest.approx(rho0 * np.array([1.0, 0.5, 0.25]), rel=1e-12)
    assert model.scale_height == pytest.approx(5500.0 / np.log(2.0), rel=1e-15)
    # isothermal: pressure follows the density, so it halves at the same altitude
    assert model.state(z).pressure == pytest.approx(101325.0 * np.array([1.0, 0.5, 0.25]),
                                                    rel=1e-12)


def test_half_density_altitude_of_the_standard_is_density_not_pressure():
    # The standard atmosphere is not exponential: its pressure halves near 5.48 km and its
    # density near 6.67 km (U.S. Standard Atmosphere 1976, NOAA-S/T 76-1562; both
    # altitudes computed from the `fluids` implementation of it and checked here). The
    # half-density altitude that fits an exponential model to it near the ground is
    # therefore about 6.7 km; the 5.5 km often quoted is where pressure halves.
    z = np.array([0.0, 5482.0, 6670.0])
    standard = US1976.state(z)
    oracle = [ATMOSPHERE_1976(h) for h in z]  # fluids' implementation of USSA 1976
    assert standard.pressure[1] / standard.pressure[0] == pytest.approx(0.5, rel=1e-3)
    assert standard.density[2] / standard.density[0] == pytest.approx(0.5, rel=1e-3)
    assert oracle[1].P / oracle[0].P == pytest.approx(0.5, rel=1e-3)
    assert oracle[2].rho / oracle[0].rho == pytest.approx(0.5, rel=1e-3)
    fitted = ExponentialAtmosphere.from_params(half_density_altitude=6670.0)
    assert float(fitted.state(6670.0).density) == pytest.approx(
        float(standard.density[2]), rel=2e-3)


def test_exponential_rejects_both_heights():
    with pytest.raises(ValueError, match=r"scale_height \(7000.0 m\).*half_density_altitude"):
        ExponentialAtmosphere.from_params(scale_height=7000.0, half_density_altitude=5000.0)
    with pytest.raises(ValueError, match="scale_height: must be > 0, got -1.0"):
        ExponentialAtmosphere(scale_height=-1.0)


def test_exponential_isothermal_properties():
    model = ExponentialAtmosphere(temperature=250.0)
    s = model.state(np.array([0.0, 3e4]))
    # speed of sound sqrt(gamma R T) and Sutherland's law, USSA 1976 constants
    assert s.speed_of_sound == pytest.approx(np.sqrt(1.4 * 8314.32 / 28.9644 * 250.0), rel=1e-12)
    assert s.viscosity == pytest.approx(1.458e-6 * 250.0**1.5 / (250.0 + 110.4), rel=1e-12)
    assert s.pressure[1] / s.pressure[0] == pytest.approx(s.density[1] / s.density[0])


def test_vacuum():
    s = Vacuum.from_params().state(np.array([0.0, 1e5]))
    assert np.all(s.density == 0.0) and np.all(s.pressure == 0.0)
    assert np.all(s.speed_of_sound > 0) and np.all(s.viscosity > 0)


# --- user table ------------------------------------------------------------------------

def exponential_table(scale_height=7000.0):
    altitude = np.array([0.0, 2e3, 7e3, 15e3, 30e3, 60e3])  # uneven on purpose
    return altitude, 1.2 * np.exp(-altitude / scale_height)


def test_table_reproduces_exponential_exactly():
    # ln(rho) linear in the data: the monotone cubic with secant end slopes is that
    # line, inside and outside the table (the exponential formula is the reference)
    altitude, density = exponential_table()
    model = TableAtmosphere.from_params(altitude=list(altitude), density=list(density))
    z = np.linspace(-20e3, 200e3, 1111)
    expected = 1.2 * np.exp(-z / 7000.0)
    for backend, state in both_backends(model, z).items():
        assert state.density == pytest.approx(expected, rel=1e-12), backend


def us1976_sample():
    altitude = np.array([0, 3e3, 8e3, 11e3, 16e3, 20e3, 32e3, 47e3, 60e3, 80e3])
    s = US1976.state(altitude)
    return altitude, s.density, s.temperature


def test_table_passes_through_points_both_backends():
    altitude, density, temperature = us1976_sample()
    model = TableAtmosphere(altitude=altitude, density=density, temperature=temperature)
    for backend, state in both_backends(model, altitude).items():
        assert state.density == pytest.approx(density, rel=1e-12), backend
        assert state.temperature == pytest.approx(temperature, rel=1e-12), backend
        # ideal-gas law with the USSA 1976 gas constant
        assert state.pressure == pytest.approx(density * R_AIR * temperature, rel=1e-12)


def test_table_interior_matches_scipy_pchip():
    # Source: SciPy's PchipInterpolator (Fritsch-Butland slopes). Interior intervals
    # depend only on interior slopes, which follow the same rule; the two end
    # intervals differ on purpose (secant end slopes).
    altitude, density, temperature = us1976_sample()
    model = TableAtmosphere(altitude=altitude, density=density)
    reference = PchipInterpolator(altitude, np.log(density))
    z = np.linspace(altitude[1], altitude[-2], 2001)
    assert np.log(model.state(z).density) == pytest.approx(reference(z), rel=1e-12, abs=1e-12)


def test_table_monotone_between_points():
    altitude, density, _ = us1976_sample()
    model = TableAtmosphere(altitude=altitude, density=density)
    z = np.linspace(altitude[0], altitude[-1], 8001)
    rho = model.state(z).density
    assert np.all(np.diff(rho) < 0)
    # each value lies between the data at the ends of its interval
    index = np.clip(np.searchsorted(altitude, z, side="right") - 1, 0, len(altitude) - 2)
    assert np.all(rho <= density[index] * (1 + 1e-13))
    assert np.all(rho >= density[index + 1] * (1 - 1e-13))
    # it follows the standard it was sampled from: within 8 % for this sparse sample
    # (its 60-80 km interval spans a 20 km stretch of curved log density) and within
    # 0.3 % for a 1 km sample (the standard is checked against fluids above)
    assert rho == pytest.approx(US1976.state(z).density, rel=0.08)
    fine = np.arange(0.0, 86e3 + 1.0, 1e3)
    fine_model = TableAtmosphere(altitude=fine, density=US1976.state(fine).density)
    z = np.linspace(0.0, 86e3, 20001)
    assert fine_model.state(z).density == pytest.approx(US1976.state(z).density, rel=3e-3)


def test_table_extrapolation_as_documented():
    altitude = np.array([0.0, 10e3, 20e3, 40e3])
    density = np.array([1.2, 0.4, 0.09, 0.004])
    temperature = np.array([288.0, 223.0, 217.0, 250.0])
    model = TableAtmosphere(altitude=altitude, density=density, temperature=temperature)
    top_slope = np.log(density[-1] / density[-2]) / (altitude[-1] - altitude[-2])
    bottom_slope = np.log(density[1] / density[0]) / (altitude[1] - altitude[0])
    above = np.array([45e3, 100e3, 2000e3])
    s = model.state(above)
    assert s.density == pytest.approx(density[-1] * np.exp(top_slope * (above - 40e3)), rel=1e-12)
    assert s.temperature == pytest.approx(250.0, abs=1e-12)  # held at the end value
    below = np.array([-1e3, -5e3])
    s = model.state(below)
    assert s.density == pytest.approx(1.2 * np.exp(bottom_slope * below), rel=1e-12)
    assert s.temperature == pytest.approx(288.0, abs=1e-12)
    # at most 20 e-folds below the table, then constant (finite at any depth)
    limit = -20.0 / abs(bottom_slope)
    deep = model.state(np.array([limit, limit - 1e3, -1e9])).density
    assert deep == pytest.approx(1.2 * np.exp(20.0), rel=1e-12)


def test_table_default_temperature_is_us1976():
    altitude, density, _ = us1976_sample()
    model = TableAtmosphere(altitude=altitude, density=density)
    z = np.linspace(-5e3, 120e3, 301)
    assert model.state(z).temperature == pytest.approx(US1976.state(z).temperature, rel=1e-14)


def test_table_smooth_in_casadi():
    altitude, density, temperature = us1976_sample()
    model = TableAtmosphere(altitude=altitude, density=density, temperature=temperature)
    z = np.unique(np.concatenate([np.linspace(-20e3, 2000e3, 4001), altitude, [-1e6]]))
    for name in ("density", "temperature", "pressure", "speed_of_sound"):
        functions = derivative_functions(model, name)
        for array in evaluate_mapped(functions, z):
            assert np.all(np.isfinite(array)), name
        # C1 at the knots, including the ends where the continuation starts
        for knot in altitude:
            _, first, _ = evaluate_mapped(functions, [knot - 1e-3, knot + 1e-3])
            _, wide, _ = evaluate_mapped(functions, [knot - 500.0, knot + 500.0])
            assert abs(first[1] - first[0]) <= 1e-4 * np.abs(wide).max() + 1e-300, (name, knot)


@pytest.mark.parametrize("kwargs, pattern", [
    (dict(altitude=[0.0], density=[1.2]), r"^altitude: needs at least 2 points"),
    (dict(altitude=[0.0, 1e3, 1e3], density=[1.2, 1.0, 0.9]),
     r"^altitude: must be strictly increasing, got 1000.0 m after 1000.0 m"),
    (dict(altitude=[0.0, 2e3, 1e3], density=[1.2, 1.0, 0.9]),
     r"^altitude: must be strictly increasing, got 1000.0 m after 2000.0 m"),
    (dict(altitude=[0.0, 1e3], density=[1.2, 1.0, 0.9]),
     r"^density: needs one value per altitude \(2\), got 3"),
    (dict(altitude=[0.0, 1e3], density=[1.2, -1.0]), r"^density: must be > 0 kg/m\^3, got -1.0"),
    (dict(altitude=[0.0, 1e3], density=[1.2, 0.0]), r"^density: must be > 0 kg/m\^3, got 0.0"),
    (dict(altitude=[0.0, 1e3], density=[1.0, 1.2]),
     r"^density: must decrease with altitude, got 1.2"),
    (dict(altitude=[0.0, 1e3], density=[1.2, 1.0], temperature=[288.0]),
     r"^temperature: needs one value per altitude \(2\), got 1"),
    (dict(altitude=[0.0, 1e3], density=[1.2, 1.0], temperature=[288.0, -5.0]),
     r"^temperature: must be > 0 K, got -5.0 at index 1"),
    (dict(altitude=[0.0, float("nan")], density=[1.2, 1.0]), r"^altitude: must be finite, got nan"),
    (dict(altitude=["low", "high"], density=[1.2, 1.0]), r"^altitude: must be a list of numbers"),
])
def test_table_rejects_invalid(kwargs, pattern):
    with pytest.raises(ValueError, match=pattern):
        TableAtmosphere.from_params(**kwargs)


# --- registry contract ----------------------------------------------------------------

REQUIRED_EXAMPLES = {"altitude": [0.0, 1e4], "density": [1.2, 0.4]}


@pytest.mark.parametrize("name", sorted(ATMOSPHERES))
def test_registry_contract(name):
    cls = ATMOSPHERES[name]
    assert isinstance(cls.parameters, dict)
    kwargs = {}
    for key, param in cls.parameters.items():
        assert isinstance(param, Param) and param.kind in ("scalar", "list")
        if param.default is REQUIRED:
            kwargs[key] = REQUIRED_EXAMPLES[key]
        elif param.default is not None:
            kwargs[key] = param.default
    model = cls.from_params(**kwargs)
    s = model.state(np.array([0.0, 5e3]))
    assert np.all(np.isfinite(s.density)) and np.all(s.temperature > 0)
    with pytest.raises(TypeError):
        cls.from_params(**kwargs, no_such_parameter=1.0)
