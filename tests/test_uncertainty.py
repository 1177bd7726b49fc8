"""Assurance, the upper confidence limit of an SD, and sensitivity tables."""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

import powercore as pc
from powercore.engine import power_at
from powercore.uncertainty import assurance, sd_upper_limit, sensitivity_effect_power, sensitivity_sd_dropout


@pytest.mark.parametrize("direction", ["two-sided", "upper"])
def test_assurance_closed_form_equals_numerical_integration(direction):
    """For a z test the closed form equals direct numerical integration of power over the prior (scipy quad)."""
    sc = pc.Scenario("two-means-z", {"delta": 5.0, "sd1": 10.0, "sd2": 10.0}, n=64, direction=direction)
    a = assurance(sc, 5.0, 2.0)
    d = pc.get_design("two-means-z")
    p = dict(sc.params)
    from scipy.integrate import quad
    direct, _ = quad(lambda e: float(power_at(d, {**p, "delta": e}, 64, 0.05, direction))
                     * stats.norm.pdf(e, 5.0, 2.0), -30, 40, epsabs=1e-12)   # direct scipy computation
    assert a.method.startswith("closed form") and a.assurance == pytest.approx(direct, abs=1e-9)


def test_assurance_by_integration_matches_simulation():
    """Assurance of a t test (numerical) matches simulating effect draws and then data, within 4 SE."""
    sc = pc.Scenario("two-means-t", {"delta": 5.0, "sd": 10.0}, n=40)
    a = assurance(sc, 4.0, 3.0)
    reps, rng = 20000, np.random.default_rng(9)
    eff = rng.normal(4.0, 3.0, reps)
    x = rng.normal(0, 10, (reps, 40))
    y = rng.normal(eff[:, None], 10, (reps, 40))
    sim = np.mean(stats.ttest_ind(y, x, axis=1).pvalue <= 0.05)
    assert abs(sim - a.assurance) <= 4 * math.sqrt(a.assurance * (1 - a.assurance) / reps)


def test_assurance_is_below_power_at_the_prior_mean_and_spread_is_reported():
    """With an uncertain effect the assurance falls below the power at the prior mean; quantiles are ordered."""
    a = assurance(pc.Scenario("two-means-t", {"delta": 5.0, "sd": 10.0}, n=64), 5.0, 2.5)
    q = list(a.quantiles.values())
    assert a.assurance < a.power_at_prior_mean and q == sorted(q)


def test_zero_prior_sd_gives_the_power():
    """A prior with no spread gives the plain power at its mean."""
    sc = pc.Scenario("mean-t", {"delta": 3.0, "sd": 10.0}, n=40)
    assert assurance(sc, 3.0, 0.0).assurance == pytest.approx(pc.power(sc), rel=1e-9)


@pytest.mark.parametrize("s, df, conf", [(10.0, 20, 0.8), (4.0, 9, 0.95), (1.0, 1, 0.5)])
def test_sd_upper_limit_is_the_chi_square_formula(s, df, conf):
    """σ_U = s·√(df/χ²_{df, 1−γ}) (Browne 1995, from memory; the chi-square pivot, common practice)."""
    assert sd_upper_limit(s, df, conf) == pytest.approx(s * math.sqrt(df / stats.chi2.ppf(1 - conf, df)),
                                                        rel=1e-12)


def test_sensitivity_tables_match_direct_solves_and_csv():
    """Each cell equals a direct sample-size solve; n falls with the effect and rises with power and dropout."""
    sc = pc.Scenario("two-means-t", {"delta": 5.0, "sd": 10.0}, n=64)
    t = sensitivity_effect_power(sc, [3.0, 4.0, 5.0], [0.8, 0.9])
    direct = pc.evaluate(sc.replace(find="n", params={"delta": 4.0}, target_power=0.9)).n
    assert t.cells[1][1] == direct
    assert t.cells[0][0] > t.cells[2][0] and t.cells[0][1] > t.cells[0][0]
    u = sensitivity_sd_dropout(sc, "sd", [8.0, 10.0], [0.0, 0.2])
    assert u.cells[1][0] == 128 and u.cells[1][1] == 2 * math.ceil(64 / 0.8)
    assert t.to_csv().splitlines()[0] == "difference \\ target power,0.8,0.9"


@pytest.mark.parametrize("call, field", [
    (lambda: sd_upper_limit(-1.0, 5), "pilot_sd"), (lambda: sd_upper_limit(1.0, 0), "df"),
    (lambda: assurance(pc.Scenario("mean-t", n=20), 1.0, -1.0), "prior_sd"),
    (lambda: assurance(pc.Scenario("mean-t", n=20), float("nan"), 1.0), "prior_mean"),
])
def test_bad_uncertainty_input_names_the_field(call, field):
    """Bad inputs are refused naming the field."""
    with pytest.raises(pc.InvalidParameter) as info:
        call()
    assert info.value.field == field
