"""Tests of the drag-coefficient models against the published sphere correlation and SciPy."""

import casadi as ca
import numpy as np
import pytest
from scipy.interpolate import PchipInterpolator

from ascentplan._registry import REQUIRED, Param
from ascentplan.models.aero import DRAG_MODELS, ConstantDrag, MachTableDrag, SphereDrag

# an invented C_D(Mach) table of plausible shape (no real vehicle)
MACH = [0.0, 0.8, 1.0, 1.2, 2.0, 4.0]
CD = [0.30, 0.32, 0.50, 0.48, 0.38, 0.30]


def casadi_drag(model, mach, reynolds=None):
    """C_D from the model evaluated on CasADi symbols, then at the given points."""
    m, r = ca.SX.sym("mach"), ca.SX.sym("reynolds")
    f = ca.Function("cd", [m, r], [model.drag_coefficient(m, r if reynolds is not None else None)])
    mach = np.atleast_1d(np.asarray(mach, dtype=float))
    reynolds = np.zeros_like(mach) if reynolds is None else np.broadcast_to(reynolds, mach.shape)
    out = f.map(mach.size)(mach.reshape(1, -1), np.asarray(reynolds, dtype=float).reshape(1, -1))
    return np.array(out).ravel()


def derivatives(model, variable, points, other=1.0):
    """Value, first and second derivative of C_D in ``variable`` ("mach" or "reynolds")."""
    x = ca.SX.sym("x")
    if variable == "mach":
        cd = model.drag_coefficient(x, None)
    else:
        cd = model.drag_coefficient(other, x)
    first = ca.jacobian(cd, x)
    f = ca.Function("d", [x], [cd, first, ca.jacobian(first, x)])
    points = np.asarray(points, dtype=float).ravel()
    return [np.array(o).ravel() for o in f.map(points.size)(points.reshape(1, -1))]


# --- sphere correlation ---------------------------------------------------------------

# Source: C_D = 24/Re + 6/(1 + sqrt(Re)) + 0.4, F. M. White, Viscous Fluid Flow,
# 2nd ed., McGraw-Hill 1991 (sphere drag correlation); the values are computed from that formula
# (rounded to 6 significant digits), not read from a published table
SPHERE = [(1.0, 27.4), (10.0, 4.24152), (100.0, 1.18545), (1e3, 0.607921), (1e4, 0.461806)]


@pytest.mark.parametrize("reynolds, expected", SPHERE)
def test_sphere_correlation_values_both_backends(reynolds, expected):
    model = SphereDrag.from_params()
    # tolerance: half a unit in the 6th significant digit of the computed values
    assert float(model.drag_coefficient(0.3, reynolds)) == pytest.approx(expected, rel=5e-6)
    assert casadi_drag(model, [0.3], reynolds)[0] == pytest.approx(expected, rel=5e-6)


def test_sphere_formula_unchanged_by_floor_for_re_above_one():
    reynolds = np.geomspace(1.0, 2e5, 500)
    formula = 24.0 / reynolds + 6.0 / (1.0 + np.sqrt(reynolds)) + 0.4  # White 1991
    model = SphereDrag()
    assert model.drag_coefficient(np.zeros_like(reynolds), reynolds) == pytest.approx(
        formula, rel=1e-9)
    assert casadi_drag(model, np.zeros_like(reynolds), reynolds) == pytest.approx(
        formula, rel=1e-9)


def test_sphere_finite_at_zero_reynolds():
    model = SphereDrag()
    assert np.isfinite(model.drag_coefficient(0.0, 0.0))
    value, first, second = derivatives(model, "reynolds", [0.0, 1e-12, 1e-3, 0.05, 1.0, 2e5])
    for array in (value, first, second):
        assert np.all(np.isfinite(array))
    assert first[0] == 0.0  # the smooth floor is flat at Re = 0


def test_sphere_drag_force_finite_and_smooth_at_zero_speed():
    # drag = 1/2 rho v^2 C_D A with Re = rho v L / mu: tends to the Stokes-like
    # 12 mu v A / L (from the 24/Re term) and is 0 at v = 0, with finite derivatives
    rho, mu, length, area = 1.225, 1.789e-5, 1.0, 1.0
    v = ca.SX.sym("v")
    reynolds = rho * v * length / mu
    drag = 0.5 * rho * v * v * SphereDrag().drag_coefficient(0.0 * v, reynolds) * area
    dv = ca.jacobian(drag, v)
    f = ca.Function("drag", [v], [drag, dv, ca.jacobian(dv, v)])
    speeds = np.concatenate([[0.0], np.geomspace(1e-12, 1e-5, 400)])  # Re from 0 to 0.7
    value, first, second = [np.array(o).ravel() for o in f.map(speeds.size)(speeds.reshape(1, -1))]
    assert value[0] == 0.0
    for array in (value, first, second):
        assert np.all(np.isfinite(array))
    assert np.all(np.diff(value) > 0)
    # below Re = 1 the slope stays of the order of the Stokes slope 12 mu A / L
    # (the floor and the 6/(1 + sqrt Re) term add at most 50 % here)
    stokes_slope = 12.0 * mu * area / length
    assert np.all(first >= 0) and np.all(first <= 1.5 * stokes_slope)


def test_sphere_needs_reynolds():
    assert SphereDrag.needs_reynolds is True
    with pytest.raises(ValueError, match="^reynolds:"):
        SphereDrag().drag_coefficient(0.5, None)


# --- Mach table -----------------------------------------------------------------------

def test_mach_table_passes_through_points_both_backends():
    model = MachTableDrag.from_params(mach=MACH, cd=CD)
    assert model.drag_coefficient(np.array(MACH)) == pytest.approx(CD, rel=1e-14)
    assert casadi_drag(model, MACH) == pytest.approx(CD, rel=1e-14)


def test_mach_table_no_overshoot_between_points():
    model = MachTableDrag(mach=MACH, cd=CD)
    for i in range(len(MACH) - 1):
        grid = np.linspace(MACH[i], MACH[i + 1], 2001)
        cd = model.drag_coefficient(grid)
        low, high = min(CD[i], CD[i + 1]), max(CD[i], CD[i + 1])
        assert cd.min() >= low - 1e-14 and cd.max() <= high + 1e-14, i
        # and monotone in each interval, like the data (Fritsch-Carlson 1980)
        step = np.diff(cd)
        assert np.all(step * np.sign(CD[i + 1] - CD[i]) >= -1e-15), i


def test_mach_table_clamped_outside():
    model = MachTableDrag(mach=MACH, cd=CD)
    outside = np.array([-1.0, -1e-6, 4.0 + 1e-6, 6.0, 25.0])
    expected = [CD[0], CD[0], CD[-1], CD[-1], CD[-1]]
    assert model.drag_coefficient(outside) == pytest.approx(expected, rel=1e-14)
    assert casadi_drag(model, outside) == pytest.approx(expected, rel=1e-14)


def test_mach_table_both_backends_agree():
    model = MachTableDrag(mach=MACH, cd=CD)
    grid = np.linspace(-1.0, 6.0, 3000)
    assert casadi_drag(model, grid) == pytest.approx(model.drag_coefficient(grid), rel=1e-13)
    shaped = model.drag_coefficient(grid.reshape(3, 1000))
    assert shaped.shape == (3, 1000)
    assert np.ndim(model.drag_coefficient(0.9)) == 0


def test_mach_table_interior_matches_scipy_pchip():
    # Source: SciPy's PchipInterpolator (Fritsch-Butland slopes): interior intervals
    # depend only on the interior slopes, which follow the same rule; the two end
    # intervals differ on purpose (zero end slopes for the clamped continuation)
    model = MachTableDrag(mach=MACH, cd=CD)
    reference = PchipInterpolator(MACH, CD)
    grid = np.linspace(MACH[1], MACH[-2], 2001)
    assert model.drag_coefficient(grid) == pytest.approx(reference(grid), rel=1e-13)


def test_mach_table_smooth_for_the_optimiser():
    model = MachTableDrag(mach=MACH, cd=CD)
    value, first, second = derivatives(model, "mach", np.linspace(-2.0, 30.0, 3201))
    for array in (value, first, second):
        assert np.all(np.isfinite(array))
    # continuous slope at every point of the table, ends included (C1)
    largest = np.abs(first).max()
    for knot in MACH:
        _, slope, _ = derivatives(model, "mach", [knot - 1e-7, knot + 1e-7])
        assert abs(slope[1] - slope[0]) < 1e-5 * largest, knot


@pytest.mark.parametrize("kwargs, pattern", [
    (dict(mach=[0.5], cd=[0.3]), r"^mach: needs at least 2 points"),
    (dict(mach=[0.0, 1.0, 0.8], cd=[0.3, 0.5, 0.4]),
     r"^mach: must be strictly increasing, got 0.8 after 1.0 at index 2"),
    (dict(mach=[-0.5, 1.0], cd=[0.3, 0.5]), r"^mach: must be >= 0, got -0.5"),
    (dict(mach=[0.0, 1.0], cd=[0.3, 0.5, 0.4]),
     r"^cd: needs one value per Mach number \(2\), got 3"),
    (dict(mach=[0.0, 1.0], cd=[0.3, 0.0]), r"^cd: must be > 0, got 0.0 at index 1"),
    (dict(mach=[0.0, float("inf")], cd=[0.3, 0.5]), r"^mach: must be finite, got inf"),
])
def test_mach_table_rejects_invalid(kwargs, pattern):
    with pytest.raises(ValueError, match=pattern):
        MachTableDrag.from_params(**kwargs)


# --- constant and registry ------------------------------------------------------------

def test_constant_drag():
    model = ConstantDrag.from_params(cd=0.42)
    assert model.drag_coefficient(np.array([0.0, 3.0])) == pytest.approx([0.42, 0.42])
    assert casadi_drag(model, [0.0, 3.0]) == pytest.approx([0.42, 0.42])
    with pytest.raises(ValueError, match=r"^cd: must be > 0, got -0.1"):
        ConstantDrag(cd=-0.1)


REQUIRED_EXAMPLES = {"cd": 0.3, "mach": [0.0, 1.0, 2.0]}


@pytest.mark.parametrize("name", sorted(DRAG_MODELS))
def test_registry_contract(name):
    cls = DRAG_MODELS[name]
    assert isinstance(cls.needs_reynolds, bool)
    kwargs = {}
    for key, param in cls.parameters.items():
        assert isinstance(param, Param) and param.kind in ("scalar", "list")
        if param.default is REQUIRED:
            kwargs[key] = REQUIRED_EXAMPLES[key]
    if name == "mach_table":
        kwargs["cd"] = [0.3, 0.5, 0.4]
    model = cls.from_params(**kwargs)
    cd = model.drag_coefficient(np.array([0.5, 1.5]), np.array([1e3, 1e4]))
    assert np.all(np.isfinite(cd)) and np.all(cd > 0)
    with pytest.raises(TypeError):
        cls.from_params(**kwargs, no_such_parameter=1.0)
