"""Tests of the analytic optimal stage-mass split against Curtis's optimal-staging formulas
and scipy.optimize."""

import json
import math

import numpy as np
import pytest
from scipy.optimize import minimize

from ascentplan.constants import G0
from ascentplan.problem.model import Stage, Vehicle
from ascentplan.staging.rocket_equation import (
    StageSplit,
    StagingError,
    format_split,
    optimal_split,
    split_for_vehicle,
)

# Plausible invented three-stage vehicle: kerosene first stage, better upper stages.
EXHAUST = (2900.0, 3300.0, 4400.0)  # [m s^-1]
STRUCTURE = (0.08, 0.10, 0.14)
DELTA_V = 9500.0  # [m s^-1]
PAYLOAD = 1000.0  # [kg]


def _liftoff_from_mass_ratios(mass_ratios, structural_ratios, payload):
    """Stack the stages top down by the rocket equation; inf when a stage cannot close.

    Stage mass M carried over mass m: n = (m + M) / (m + eps M), so
    M = m (n - 1) / (1 - n eps) (common practice: definition of mass ratio).
    """
    above = payload
    for n, eps in zip(reversed(mass_ratios), reversed(structural_ratios)):
        if n < 1.0 or n * eps >= 1.0:
            return math.inf
        above += above * (n - 1.0) / (1.0 - n * eps)
    return above


def _delta_v_from_stage_masses(stage_masses, exhaust, structural_ratios, payload):
    """Ideal delta-v sum c ln(m_ignition / m_burnout) (Tsiolkovsky; common practice)."""
    total, above = 0.0, payload
    for M, c, eps in zip(reversed(stage_masses), reversed(exhaust),
                         reversed(structural_ratios)):
        total += c * math.log((above + M) / (above + eps * M))
        above += M
    return total


# ---------------------------------------------------------------- identical stages

@pytest.mark.parametrize("stages, fraction", [(2, 0.018717), (3, 0.026369), (4, 0.029303)])
def test_identical_stages_match_curtis_payload_fractions(stages, fraction):
    split = optimal_split([3000.0] * stages, [0.1] * stages, payload_mass=1000.0,
                          delta_v=9000.0)
    # Payload fractions computed from the formula of H. D. Curtis, Orbital Mechanics for
    # Engineering Students, section "Optimal staging" (not values printed there), rounded
    # to 6 decimals, so agreement to half a unit in the last digit.
    assert abs(split.payload_fraction - fraction) <= 5e-7
    # Curtis, "Optimal staging": identical stages split the delta-v equally.
    for dv in split.delta_v:
        assert dv == pytest.approx(9000.0 / stages, rel=1e-12)
    # Closed form [(exp(-dv/(N c)) - eps)/(1 - eps)]^N from the same section.
    closed = ((math.exp(-9000.0 / (stages * 3000.0)) - 0.1) / 0.9) ** stages
    assert split.payload_fraction == pytest.approx(closed, rel=1e-12)
    assert split.liftoff_mass == pytest.approx(1000.0 / closed, rel=1e-12)


def test_single_identical_stage_is_infeasible_and_says_why():
    # Curtis, "Optimal staging": N = 1 infeasible (exp(-3) = 0.0498 < eps = 0.1).
    with pytest.raises(StagingError) as info:
        optimal_split([3000.0], [0.1], payload_mass=1000.0, delta_v=9000.0)
    message = str(info.value)
    assert "stage 1" in message
    # Limit c ln(1/eps) = 3000 ln 10 = 6907.76 m/s; the stage would need
    # n eps = 0.1 exp(3) = 2.009 (rocket equation, common practice).
    assert "6907.76" in message
    assert "2.009" in message


# ---------------------------------------------------------------- unequal stages

def _three_stage_split():
    return optimal_split(EXHAUST, STRUCTURE, payload_mass=PAYLOAD, delta_v=DELTA_V)


def test_unequal_stages_meet_the_delta_v_and_the_textbook_mass_ratio_form():
    split = _three_stage_split()
    eta = split.multiplier
    assert split.total_delta_v == pytest.approx(DELTA_V, rel=1e-12)
    for n, c, eps in zip(split.mass_ratio, EXHAUST, STRUCTURE):
        # Curtis, "Optimal staging": n_i = (c_i eta - 1)/(c_i eps_i eta).
        assert n == pytest.approx((c * eta - 1.0) / (c * eps * eta), rel=1e-12)
    # Masses add up and the stage masses follow the structural ratios (definitions).
    assert split.liftoff_mass == pytest.approx(PAYLOAD + sum(split.stage_mass), rel=1e-14)
    for md, mp, eps in zip(split.dry_mass, split.propellant_mass, STRUCTURE):
        assert md / (md + mp) == pytest.approx(eps, rel=1e-12)
    # Independent restacking by the rocket equation gives the same liftoff mass.
    restacked = _liftoff_from_mass_ratios(split.mass_ratio, STRUCTURE, PAYLOAD)
    assert restacked == pytest.approx(split.liftoff_mass, rel=1e-12)


def test_unequal_stages_satisfy_lagrange_stationarity():
    split = _three_stage_split()
    x = np.log(split.mass_ratio)
    h = 1e-5

    def objective(x):  # ln(liftoff / payload) as a function of x_i = ln n_i
        return math.log(_liftoff_from_mass_ratios(np.exp(x), STRUCTURE, PAYLOAD) / PAYLOAD)

    for i, c in enumerate(EXHAUST):
        step = np.zeros(3)
        step[i] = h
        gradient = (objective(x + step) - objective(x - step)) / (2.0 * h)
        # Stationarity of J - eta (sum c_i x_i - dv): dJ/dx_i = eta c_i for every stage
        # (Lagrange multiplier rule, common practice); central difference error ~1e-10.
        assert gradient == pytest.approx(split.multiplier * c, rel=1e-7)


def test_unequal_stages_beat_random_splits_of_the_same_delta_v():
    split = _three_stage_split()
    x = np.log(split.mass_ratio)
    c = np.array(EXHAUST)
    rng = np.random.default_rng(20240611)
    tried = 0
    for _ in range(300):
        direction = rng.normal(size=3)
        direction -= direction @ c / (c @ c) * c  # keeps sum c_i ln n_i fixed
        direction /= np.linalg.norm(direction)
        trial = x + 10.0 ** rng.uniform(-4, -0.7) * direction
        assert c @ trial == pytest.approx(DELTA_V, rel=1e-12)
        liftoff = _liftoff_from_mass_ratios(np.exp(trial), STRUCTURE, PAYLOAD)
        if math.isinf(liftoff):
            continue
        tried += 1
        # Any other split of the same delta-v needs more liftoff mass (definition of
        # the optimum); the margin at the smallest steps is ~1e-8 relative.
        assert liftoff > split.liftoff_mass
    assert tried > 200


def test_unequal_stages_agree_with_scipy_slsqp():
    split = _three_stage_split()
    c = np.array(EXHAUST)
    eps = np.array(STRUCTURE)

    def objective(x):
        liftoff = _liftoff_from_mass_ratios(np.exp(x), eps, PAYLOAD)
        return math.log(liftoff / PAYLOAD) if math.isfinite(liftoff) else 1e3

    start = np.full(3, DELTA_V / 3.0) / c
    result = minimize(objective, start, method="SLSQP",
                      bounds=[(0.0, math.log(1.0 / e) - 1e-6) for e in eps],
                      constraints=[{"type": "eq", "fun": lambda x: (c @ x - DELTA_V) / DELTA_V,
                                    "jac": lambda x: c / DELTA_V}],
                      options={"ftol": 1e-15, "maxiter": 500})
    assert result.success, result.message
    fraction = math.exp(-result.fun)
    # scipy.optimize.minimize (SLSQP) on the plain rocket-equation problem.
    assert split.payload_fraction == pytest.approx(fraction, rel=1e-6)
    assert split.mass_ratio == pytest.approx(np.exp(result.x), rel=1e-4)


def test_poor_stage_is_left_empty_and_matches_scipy_and_the_single_stage_formula():
    # A heavy low-energy first stage under a good upper stage: for a small delta-v the
    # optimum does not use the first stage at all (n_1 = 1, no mass).
    c = np.array([2500.0, 4400.0])
    eps = np.array([0.3, 0.08])
    dv = 6000.0
    split = optimal_split(c, eps, payload_mass=PAYLOAD, delta_v=dv)
    assert split.stage_mass[0] == 0.0
    assert split.mass_ratio[0] == 1.0
    # Single stage: payload fraction (exp(-dv/c) - eps)/(1 - eps) (Curtis, "Optimal staging",
    # "Optimal staging" formula with N = 1).
    single = (math.exp(-dv / c[1]) - eps[1]) / (1.0 - eps[1])
    assert split.payload_fraction == pytest.approx(single, rel=1e-12)

    def objective(x):
        liftoff = _liftoff_from_mass_ratios(np.exp(x), eps, PAYLOAD)
        return math.log(liftoff / PAYLOAD) if math.isfinite(liftoff) else 1e3

    result = minimize(objective, np.array([0.5, 0.5 * dv / c[1] + 0.4]), method="SLSQP",
                      bounds=[(0.0, math.log(1.0 / e) - 1e-6) for e in eps],
                      constraints=[{"type": "eq", "fun": lambda x: (c @ x - dv) / dv}],
                      options={"ftol": 1e-15, "maxiter": 500})
    assert result.success, result.message
    # scipy.optimize.minimize (SLSQP) with the bound n_i >= 1 finds the same corner.
    assert split.payload_fraction == pytest.approx(math.exp(-result.fun), rel=1e-6)
    assert result.x[0] == pytest.approx(0.0, abs=1e-6)


def test_multiplier_is_the_sensitivity_of_log_liftoff_mass_to_delta_v():
    split = _three_stage_split()
    h = 0.5  # [m s^-1]
    up = optimal_split(EXHAUST, STRUCTURE, payload_mass=PAYLOAD, delta_v=DELTA_V + h)
    down = optimal_split(EXHAUST, STRUCTURE, payload_mass=PAYLOAD, delta_v=DELTA_V - h)
    slope = (math.log(up.liftoff_mass) - math.log(down.liftoff_mass)) / (2.0 * h)
    # Envelope theorem: the multiplier is dJ*/d(dv) (common practice).
    assert slope == pytest.approx(split.multiplier, rel=1e-6)


def test_delta_v_just_below_the_limit_is_solved_accurately():
    limit = sum(c * math.log(1.0 / e) for c, e in zip(EXHAUST, STRUCTURE))
    dv = limit * (1.0 - 1e-9)
    split = optimal_split(EXHAUST, STRUCTURE, payload_mass=PAYLOAD, delta_v=dv)
    # The constraint itself (the problem statement): sum c_i ln n_i = dv.
    assert split.total_delta_v == pytest.approx(dv, rel=1e-12)
    assert math.isfinite(split.liftoff_mass) and split.liftoff_mass > 1e12


def test_infeasible_delta_v_names_every_stage_and_the_limit():
    limit = sum(c * math.log(1.0 / e) for c, e in zip(EXHAUST, STRUCTURE))
    for dv in (limit, 25000.0):  # at the limit and beyond it
        with pytest.raises(StagingError) as info:
            optimal_split(EXHAUST, STRUCTURE, payload_mass=PAYLOAD, delta_v=dv,
                          stage_names=["first", "second", "upper"])
        message = str(info.value)
        # Ideal limit sum c ln(1/eps) as n_i -> 1/eps_i (Curtis, "Optimal staging").
        assert f"{limit:.6g}" in message
        for label in ("stage 1 (first)", "stage 2 (second)", "stage 3 (upper)"):
            assert label in message
        # With the others at their limits stage 3 needs n eps = exp((dv - limit)/c_3).
        assert f"{math.exp((dv - limit) / 4400.0):.4g} >= 1" in message


# ---------------------------------------------------------------- fixed liftoff mass

LIFTOFF = 100000.0  # [kg]
HEAVY_PAYLOAD = 2000.0  # [kg]


def _fixed_liftoff_split():
    return optimal_split(EXHAUST, STRUCTURE, payload_mass=HEAVY_PAYLOAD, liftoff_mass=LIFTOFF)


def test_fixed_liftoff_mass_keeps_the_masses_and_is_stationary():
    split = _fixed_liftoff_split()
    assert split.liftoff_mass == pytest.approx(LIFTOFF, rel=1e-12)
    assert split.payload_mass == HEAVY_PAYLOAD
    assert split.total_delta_v == pytest.approx(
        _delta_v_from_stage_masses(split.stage_mass, EXHAUST, STRUCTURE, HEAVY_PAYLOAD),
        rel=1e-12)
    x = np.log(split.mass_ratio)
    h = 1e-5

    def log_mass_ratio(x):
        return math.log(_liftoff_from_mass_ratios(np.exp(x), STRUCTURE, HEAVY_PAYLOAD)
                        / HEAVY_PAYLOAD)

    for i, c in enumerate(EXHAUST):
        step = np.zeros(3)
        step[i] = h
        gradient = (log_mass_ratio(x + step) - log_mass_ratio(x - step)) / (2.0 * h)
        # Stationarity of DV - mu (J - L): c_i = mu dJ/dx_i with mu = 1/eta
        # (Lagrange multiplier rule, common practice).
        assert c == pytest.approx(gradient / split.multiplier, rel=1e-7)


def test_fixed_liftoff_mass_beats_random_reallocations():
    split = _fixed_liftoff_split()
    masses = np.array(split.stage_mass)
    total = masses.sum()
    rng = np.random.default_rng(7)
    for _ in range(300):
        trial = masses * (1.0 + 10.0 ** rng.uniform(-4, -0.5) * rng.normal(size=3))
        if np.any(trial <= 0.0):
            continue
        trial *= total / trial.sum()  # same liftoff and payload
        dv = _delta_v_from_stage_masses(trial, EXHAUST, STRUCTURE, HEAVY_PAYLOAD)
        # Any other split of the same masses gives less ideal delta-v (definition of
        # the optimum); the margin at the smallest steps is ~1e-9 relative.
        assert dv < split.total_delta_v


def test_fixed_liftoff_mass_agrees_with_scipy_slsqp():
    split = _fixed_liftoff_split()
    total = LIFTOFF - HEAVY_PAYLOAD

    def negative_delta_v(share):  # stage masses as shares of the total stage mass
        return -_delta_v_from_stage_masses(share * total, EXHAUST, STRUCTURE,
                                           HEAVY_PAYLOAD) / 1e4

    result = minimize(negative_delta_v, np.full(3, 1.0 / 3.0), method="SLSQP",
                      bounds=[(1e-9, 1.0)] * 3,
                      constraints=[{"type": "eq", "fun": lambda s: s.sum() - 1.0}],
                      options={"ftol": 1e-15, "maxiter": 500})
    assert result.success, result.message
    # scipy.optimize.minimize (SLSQP) maximising sum c ln(m_0/m_f) at fixed masses.
    assert split.total_delta_v == pytest.approx(-1e4 * result.fun, rel=1e-9)
    assert np.array(split.stage_mass) / total == pytest.approx(result.x, rel=1e-3)


def test_fixed_liftoff_mass_is_consistent_with_fixed_delta_v():
    split = _fixed_liftoff_split()
    back = optimal_split(EXHAUST, STRUCTURE, payload_mass=HEAVY_PAYLOAD,
                         delta_v=split.total_delta_v)
    # Duality of the two problems (derivation in optimal_split's notes): the delta-v
    # optimum at a liftoff mass is the liftoff-mass optimum at that delta-v.
    assert back.liftoff_mass == pytest.approx(LIFTOFF, rel=1e-9)
    assert back.mass_ratio == pytest.approx(split.mass_ratio, rel=1e-9)
    assert back.multiplier == pytest.approx(split.multiplier, rel=1e-9)


def test_fixed_liftoff_mass_multiplier_is_the_delta_v_sensitivity():
    split = _fixed_liftoff_split()
    h = 1e-4
    up = optimal_split(EXHAUST, STRUCTURE, payload_mass=HEAVY_PAYLOAD,
                       liftoff_mass=LIFTOFF * math.exp(h))
    down = optimal_split(EXHAUST, STRUCTURE, payload_mass=HEAVY_PAYLOAD,
                         liftoff_mass=LIFTOFF * math.exp(-h))
    slope = (up.total_delta_v - down.total_delta_v) / (2.0 * h)
    # Envelope theorem: d DV*/d ln(liftoff/payload) = 1/eta (common practice).
    assert slope == pytest.approx(1.0 / split.multiplier, rel=1e-6)


def test_delta_v_and_liftoff_mass_give_the_scaled_payload():
    reference = _three_stage_split()
    split = optimal_split(EXHAUST, STRUCTURE, delta_v=DELTA_V, liftoff_mass=50000.0)
    # The problem is homogeneous in mass (rocket equation, common practice).
    assert split.liftoff_mass == pytest.approx(50000.0, rel=1e-12)
    assert split.payload_fraction == pytest.approx(reference.payload_fraction, rel=1e-12)
    assert split.mass_ratio == pytest.approx(reference.mass_ratio, rel=1e-12)


# ---------------------------------------------------------------- vehicle helper

def _vehicle(structural_ratio=None):
    # An invented two-stage vehicle with plausible numbers.
    return Vehicle(payload_mass=500.0, stages=(
        Stage("first", 24000.0, 2400.0, 520e3, 296.0 * G0, structural_ratio=structural_ratio),
        Stage("second", 6000.0, 700.0, 110e3, 336.0 * G0)))


def _ideal_delta_v(vehicle):
    """sum c ln(m_ignition / m_burnout) (Tsiolkovsky; common practice)."""
    total, above = 0.0, vehicle.payload_mass
    for s in reversed(vehicle.stages):
        total += s.exhaust_speed * math.log((above + s.mass) / (above + s.dry_mass))
        above += s.mass
    return total


def test_split_for_vehicle_holding_liftoff_mass():
    vehicle = _vehicle()
    split = split_for_vehicle(vehicle)
    assert split.stage_names == ("first", "second")
    assert split.liftoff_mass == pytest.approx(33600.0, rel=1e-12)
    # The optimum can only improve on the split as written (definition of the optimum).
    assert split.total_delta_v >= _ideal_delta_v(vehicle)
    assert split.structural_ratio == pytest.approx((2400.0 / 26400.0, 700.0 / 6700.0),
                                                   rel=1e-15)


def test_split_for_vehicle_holding_payload():
    vehicle = _vehicle()
    split = split_for_vehicle(vehicle, hold="payload")
    written = _ideal_delta_v(vehicle)
    assert split.total_delta_v == pytest.approx(written, rel=1e-12)
    assert split.payload_mass == 500.0
    assert split.liftoff_mass <= vehicle.liftoff_mass
    faster = split_for_vehicle(vehicle, hold="payload", delta_v=written + 200.0)
    assert faster.liftoff_mass > split.liftoff_mass


def test_split_for_vehicle_uses_a_given_structural_ratio():
    split = split_for_vehicle(_vehicle(structural_ratio=0.07))
    assert split.structural_ratio[0] == 0.07
    direct = optimal_split([296.0 * G0, 336.0 * G0], [0.07, 700.0 / 6700.0],
                           payload_mass=500.0, liftoff_mass=33600.0)
    assert split.total_delta_v == pytest.approx(direct.total_delta_v, rel=1e-14)


def test_split_for_vehicle_rejects_bad_arguments():
    with pytest.raises(ValueError, match="hold must be one of .*'mass'"):
        split_for_vehicle(_vehicle(), hold="mass")
    with pytest.raises(ValueError, match="delta_v=9000.0 with hold='liftoff_mass'"):
        split_for_vehicle(_vehicle(), delta_v=9000.0)
    empty = Vehicle(payload_mass=500.0, stages=(Stage("kick", 0.0, 0.0, 1e3, 3000.0),))
    with pytest.raises(ValueError, match=r"vehicle.stages\[0\] \(kick\)"):
        split_for_vehicle(empty)


# ---------------------------------------------------------------- output

def test_format_split_and_as_dict():
    split = optimal_split(EXHAUST, STRUCTURE, payload_mass=PAYLOAD, delta_v=DELTA_V,
                          stage_names=["first", "second", "upper"])
    text = format_split(split)
    lines = text.splitlines()
    for heading in ("stage", "mass ratio", "ideal velocity increment [m/s]",
                    "propellant [kg]", "dry [kg]", "stage mass [kg]"):
        assert heading in lines[0]
    # the multiplier is named and explained, its inverse given in m/s (1/eta: the
    # envelope theorem of the optimal-staging problem, see optimal_split's notes)
    assert "Lagrange multiplier" in text and "optimal-staging problem" in text
    assert f"{1.0 / split.multiplier:.1f} m/s" in text
    assert "delta-v" not in text
    assert lines[2].startswith("first") and lines[4].startswith("upper")
    assert f"{split.stage_mass[1]:.1f}" in lines[3]
    assert f"{split.payload_fraction:.6f}" in text
    assert f"{split.liftoff_mass:.1f} kg" in text
    data = json.loads(json.dumps(split.as_dict()))
    assert data["propellant_mass"] == list(split.propellant_mass)
    assert data["payload_fraction"] == split.payload_fraction
    assert StageSplit(**{k: tuple(v) if isinstance(v, list) else v
                         for k, v in data.items()}) == split
    with pytest.raises(ValueError, match="split must be a StageSplit"):
        format_split({"liftoff_mass": 1.0})


# ---------------------------------------------------------------- bad input

@pytest.mark.parametrize("args, kwargs, pattern", [
    (([3000.0, 3000.0], [0.1]), {"payload_mass": 1.0, "delta_v": 1.0},
     "one entry per stage, got 2 and 1"),
    (([3000.0, -3000.0], [0.1, 0.1]), {"payload_mass": 1.0, "delta_v": 1.0},
     r"exhaust_speeds\[1\] must be a finite number > 0 m/s, got -3000"),
    (([3000.0], [1.0]), {"payload_mass": 1.0, "delta_v": 1.0},
     r"structural_ratios\[0\] must be in \(0, 1\), got 1.0"),
    (([3000.0], [0.0]), {"payload_mass": 1.0, "delta_v": 1.0},
     r"structural_ratios\[0\] must be in \(0, 1\), got 0.0"),
    (([3000.0], [float("nan")]), {"payload_mass": 1.0, "delta_v": 1.0},
     r"structural_ratios\[0\] must be in \(0, 1\), got nan"),
    (([float("inf")], [0.1]), {"payload_mass": 1.0, "delta_v": 1.0},
     r"exhaust_speeds\[0\] must be a finite number > 0 m/s, got inf"),
    (("fast", [0.1]), {"payload_mass": 1.0, "delta_v": 1.0},
     "exhaust_speeds must be a sequence of numbers, got 'fast'"),
    (([], []), {"payload_mass": 1.0, "delta_v": 1.0}, "exhaust_speeds must be a non-empty"),
    (([3000.0], [0.1]), {}, "give exactly two of .*got none"),
    (([3000.0], [0.1]), {"delta_v": 1.0}, "give exactly two of .*got delta_v=1.0"),
    (([3000.0], [0.1]), {"payload_mass": 1.0, "delta_v": 1.0, "liftoff_mass": 5.0},
     "give exactly two of .*delta_v=1.0, liftoff_mass=5.0, payload_mass=1.0"),
    (([3000.0], [0.1]), {"payload_mass": -5.0, "delta_v": 1.0},
     "payload_mass must be a finite number > 0 kg, got -5.0"),
    (([3000.0], [0.1]), {"payload_mass": 1.0, "delta_v": 0.0},
     "delta_v must be a finite number > 0 m/s, got 0.0"),
    (([3000.0], [0.1]), {"payload_mass": 1.0, "delta_v": "far"},
     "delta_v must be a number .*got 'far'"),
    (([3000.0], [0.1]), {"payload_mass": 10.0, "liftoff_mass": 10.0},
     "payload_mass must be less than liftoff_mass, got payload_mass=10 kg, liftoff_mass=10 kg"),
    (([3000.0], [0.1]), {"payload_mass": 1.0, "delta_v": 1.0, "stage_names": ["a", "b"]},
     r"stage_names must give one name per stage \(1\)"),
])
def test_bad_input_raises_a_clear_value_error(args, kwargs, pattern):
    with pytest.raises(ValueError, match=pattern) as info:
        optimal_split(*args, **kwargs)
    assert not isinstance(info.value, StagingError)  # bad input, not an infeasible split
