"""The reserve a dispersion needs at a stated confidence: the percentile of the cases'
shortfall from nominal and its distribution-free confidence interval from order
statistics, checked on samples of known distributions, and end to end on a small study.

Sources: W. J. Conover, *Practical Nonparametric Statistics*, 3rd ed., Wiley 1999,
section 3.2 (confidence interval for a quantile from the binomial distribution of the
order statistics); H. A. David and H. N. Nagaraja, *Order Statistics*, 3rd ed., Wiley
2003, section 10.2 (asymptotic normality of the sample quantile, standard deviation
sqrt(p (1 - p) / n) / f(xi_p)); section numbers from memory. The empirical quantile is
compared with NumPy's ``inverted_cdf`` method (R. J. Hyndman and Y. Fan, "Sample
quantiles in statistical packages", The American Statistician 50(4), 1996, definition 1).
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from cases import vertical_q_yaml
from scipy.stats import binom, norm

from ascentplan.study.command import sweep_command
from ascentplan.study.summary import dispersion_reserve, quantile_interval

# --- the percentile and its interval, on plain numbers ---------------------------------


@pytest.mark.parametrize("n, p", [(20, 0.5), (100, 0.9), (137, 0.95), (400, 0.99)])
def test_estimate_is_the_inverted_cdf_quantile(n, p):
    x = np.random.default_rng(n).normal(size=n)
    q = quantile_interval(x, p)
    # Hyndman and Fan definition 1: the smallest sample value whose empirical
    # distribution function reaches p
    assert q["estimate"] == np.quantile(x, p, method="inverted_cdf")
    assert q["rank"] == math.ceil(p * n)


@pytest.mark.parametrize("n, p", [(60, 0.9), (120, 0.95), (300, 0.95), (50, 0.5)])
def test_interval_covers_the_true_quantile_at_its_stated_rate(n, p):
    """Over many seeds the 90 % interval holds the true quantile of the standard normal
    distribution as often as the binomial law of its ranks says (Conover 1999, 3.2)."""
    trials = 3000
    truth = norm.ppf(p)
    rng = np.random.default_rng(20240611 + n)
    first = quantile_interval(rng.normal(size=n), p, 0.90)
    r, s = first["lower_rank"], first["upper_rank"]
    assert r is not None and s is not None and r <= first["rank"] <= s
    exact = binom.cdf(s - 1, n, p) - binom.cdf(r - 1, n, p)
    assert first["coverage"] == pytest.approx(exact, rel=1e-12)
    assert exact >= 0.90  # each tail at most 5 %
    hits = 0
    for _ in range(trials):
        q = quantile_interval(rng.normal(size=n), p, 0.90)
        hits += q["lower"] <= truth <= q["upper"]
    rate = hits / trials
    # the observed rate is a binomial proportion about the exact coverage: 4 standard
    # errors
    assert abs(rate - exact) < 4.0 * math.sqrt(exact * (1 - exact) / trials)


def test_interval_narrows_with_sample_size_as_the_quantile_law_says():
    """The interval's width falls as 1/sqrt(n): at n = 4000 its mean is within 10 % of
    2 z_0.95 sqrt(p (1 - p) / n) / phi(xi_p) (David and Nagaraja 2003, 10.2), and about a
    quarter of the width at n = 250."""
    p = 0.95
    rng = np.random.default_rng(7)
    widths = {}
    for n in (250, 4000):
        w = []
        for _ in range(200):
            q = quantile_interval(rng.normal(size=n), p)
            w.append(q["upper"] - q["lower"])
        widths[n] = float(np.mean(w))
    sigma = math.sqrt(p * (1 - p) / 4000) / norm.pdf(norm.ppf(p))
    assert widths[4000] == pytest.approx(2 * norm.ppf(0.95) * sigma, rel=0.10)
    assert widths[250] / widths[4000] == pytest.approx(4.0, rel=0.15)


def test_too_few_samples_have_no_upper_bound():
    # an upper bound at 90 % two-sided needs 1 - p^n >= 0.95: n >= ln 0.05 / ln 0.95 = 58.4
    q = quantile_interval(np.arange(58.0), 0.95)
    assert q["upper"] is None and q["samples_for_upper"] == 59
    assert quantile_interval(np.arange(59.0), 0.95)["upper"] == 58.0


# --- the reserve from study rows --------------------------------------------------------

def _rows(objectives, name="max_payload", nominal=500.0, peaks=None):
    rows = [{"index": 0, "status": "optimal", "objective": nominal, "objective_name": name}]
    for i, y in enumerate(objectives, start=1):
        row = {"index": i, "status": "optimal" if y is not None else "infeasible",
               "objective": y, "objective_name": name}
        if peaks is not None:
            row.update({"max_dynamic_pressure.peak": peaks[i - 1],
                        "max_dynamic_pressure.bound": 30.0})
        rows.append(row)
    return rows


def test_payload_reduction_covers_the_stated_fraction_of_cases():
    """For maximum payload the reserve is the payload reduction from nominal that 95 % of
    the cases can still deliver: the 95th percentile of nominal - payload."""
    rng = np.random.default_rng(3)
    payloads = 500.0 - np.abs(rng.normal(0.0, 10.0, 400))
    out = dispersion_reserve(_rows(list(payloads)), 0, 0.95)
    shortfall = 500.0 - payloads
    assert out["reserve"] == np.quantile(shortfall, 0.95, method="inverted_cdf")
    assert out["covered_value"] == pytest.approx(500.0 - out["reserve"], rel=1e-15)
    assert np.mean(payloads >= out["covered_value"]) >= 0.95
    assert out["lower"] <= out["reserve"] <= out["upper"]
    assert out["objective_unit"] == "kg" and "reduction from nominal" in out["meaning"]


def test_minimised_objective_and_cases_without_an_optimum():
    # for minimum propellant the reserve is propellant added to the nominal; a case
    # without an optimum counts as not covered
    out = dispersion_reserve(_rows([510.0, 520.0, None, 505.0], name="min_propellant"), 0,
                             0.5)
    assert out["cases_without_optimum"] == 1
    # shortfalls 10, 20, inf, 5 -> sorted 5, 10, 20, inf; rank ceil(0.5 * 4) = 2
    assert out["reserve"] == 10.0 and out["covered_value"] == 510.0
    assert "addition to nominal" in out["meaning"]
    # more failed cases than the uncovered fraction: no finite reserve, and why
    out = dispersion_reserve(_rows([None, None, 505.0], name="min_propellant"), 0, 0.5)
    assert out["reserve"] is None and "have no optimum" in out["reason"]


def test_peaks_at_the_stated_fraction_of_cases():
    peaks = list(np.linspace(25.0, 30.0, 101))
    out = dispersion_reserve(_rows([490.0] * 101, peaks=peaks), 0, 0.9)
    (q,) = out["peaks"]
    assert q["name"] == "max_dynamic_pressure" and q["unit"] == "kPa"
    assert q["value"] == pytest.approx(np.quantile(peaks, 0.9, method="inverted_cdf"))
    assert q["extreme"] == 30.0 and q["lower"] <= q["value"] <= q["upper"]


# --- end to end -------------------------------------------------------------------------

PROBLEM_YAML = vertical_q_yaml("reserve-study")


def test_dispersion_study_reports_its_reserve(tmp_path, capsys):
    """Invented vehicle; 8 cases of a 1 % dry-mass dispersion and the nominal. The reserve
    in study.json is the percentile of the shortfalls computed here from the rows."""
    from ascentplan.output.study_report import write_study_outputs

    problem = tmp_path / "reserve.yaml"
    problem.write_text(PROBLEM_YAML)
    out = tmp_path / "dispersion"
    status = sweep_command(str(problem), dispersion=["vehicle.stages[0].dry_mass=normal:1%"],
                           samples=8, seed=3, confidence=0.5, workers=1, out=str(out),
                           progress=False, report=write_study_outputs)
    printed = capsys.readouterr().out
    assert status == 0
    rows = sorted((json.loads(line) for line in (out / "study.jsonl").read_text().splitlines()),
                  key=lambda r: r["index"])
    assert rows[0]["vehicle.stages[0].dry_mass"] == 400.0  # the nominal
    shortfall = [rows[0]["objective"] - r["objective"] for r in rows[1:]]
    meta = json.loads((out / "study.json").read_text())
    reserve = meta["results"]["dispersion_reserve"]
    assert reserve["reserve"] == np.quantile(shortfall, 0.5, method="inverted_cdf")
    assert reserve["cases"] == 8 and reserve["confidence"] == 0.5
    assert reserve["lower"] is not None and reserve["upper"] is not None
    assert "reserve to cover 50 % of the 8 dispersed cases" in printed
    assert "max_burnout_speed reduction from nominal" in printed
    assert "max_dynamic_pressure peak at 50 %" in printed
    html = (out / "study_report.html").read_text()
    assert "Reserve at 50 % of the dispersed cases" in html
    assert (out / "dispersion.png").stat().st_size > 10_000
    # a confidence outside (0, 1) is refused by name before anything runs
    assert sweep_command(str(problem), dispersion=["vehicle.stages[0].dry_mass=normal:1%"],
                         samples=8, confidence=95, out=str(tmp_path / "never"),
                         progress=False) == 2
    assert "confidence: expected the fraction" in capsys.readouterr().err
    assert not (tmp_path / "never").exists()
