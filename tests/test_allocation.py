"""Allocation ratio, budget planning and the effect-size helpers."""
from __future__ import annotations

import math

import numpy as np
import pytest

import powercore as pc
from powercore import effects
from powercore.allocation import best_ratio, budget_plan


@pytest.mark.parametrize("sd1, sd2, costs", [(5.0, 15.0, (1.0, 1.0)), (10.0, 10.0, (1.0, 4.0)),
                                             (8.0, 4.0, (3.0, 1.0))])
def test_best_ratio_is_neyman_for_known_sds(sd1, sd2, costs):
    """For a z test the best ratio under a budget is (σ2/σ1)·√(c1/c2); Neyman allocation, common practice."""
    sc = pc.Scenario("two-means-z", {"delta": 2.0, "sd1": sd1, "sd2": sd2}, n=30)
    a = best_ratio(sc, budget=600.0, costs=costs)
    assert a.ratio == pytest.approx(sd2 / sd1 * math.sqrt(costs[0] / costs[1]), rel=1e-3)
    assert a.power >= a.power_equal - 1e-12


def test_equal_sds_and_costs_give_one_to_one():
    """With equal SDs and costs, 1 : 1 maximises the power of the pooled t test for a fixed total."""
    a = best_ratio(pc.Scenario("two-means-t", {"delta": 3.0, "sd": 10.0}, n=30), total=120)
    assert a.ratio == pytest.approx(1.0, rel=1e-3) and a.n1 == pytest.approx(60.0, rel=1e-3)


def test_budget_plan_fits_the_budget_and_one_more_does_not():
    """The plan's cost is within budget and one more subject in group 1 (with its group-2 share) is not."""
    sc = pc.Scenario("two-means-t", {"delta": 4.0, "sd": 9.0, "ratio": 2.0}, n=40)
    plan = budget_plan(sc, 5000.0, (20.0, 30.0))
    assert plan.cost <= 5000.0 < 20.0 * (plan.n1 + 1) + 30.0 * math.ceil(2.0 * (plan.n1 + 1))
    assert plan.power == pytest.approx(pc.power(sc.replace(n=plan.n1)), rel=1e-12)


@pytest.mark.parametrize("kwargs, field", [
    ({"budget": -5.0}, "budget"), ({"total": 0}, "total"), ({"budget": 100.0, "costs": (1.0, 0.0)}, "costs"),
    ({}, "total"),
])
def test_allocation_refuses_bad_input_by_field(kwargs, field):
    """Bad totals, budgets and costs are refused naming the field."""
    with pytest.raises(pc.InvalidParameter) as info:
        best_ratio(pc.Scenario("two-means-t", n=30), **kwargs)
    assert info.value.field == field


def test_one_group_designs_have_no_allocation():
    """Asking for an allocation of a one-group design names the design field."""
    with pytest.raises(pc.InvalidParameter) as info:
        best_ratio(pc.Scenario("mean-t", n=30), total=100)
    assert info.value.field == "design"


def test_budget_too_small_for_the_design():
    """A budget that buys less than the design's minimum is a NoSolution naming the budget."""
    with pytest.raises(pc.NoSolution) as info:
        budget_plan(pc.Scenario("two-means-t", n=30), 10.0, (5.0, 5.0))
    assert info.value.field == "budget"


@pytest.mark.parametrize("d, rho", [(0.5, 0.5), (0.3, 0.8), (1.0, 0.0)])
def test_paired_effect_helpers(d, rho):
    """d_z = d/√(2(1 − ρ)) and σ_d = σ√(2(1 − ρ)) (common practice, no source); the two agree."""
    dz = effects.dz_from_d(d, rho)
    assert float(effects.d_from_dz(dz, rho)) == pytest.approx(d)
    sd = 10.0
    assert float(effects.mean_difference(d, sd) / effects.sd_of_differences(sd, rho)) == pytest.approx(float(dz))


def test_proportion_helpers_invert_cohens_h():
    """Cohen's h from two proportions and back gives the second proportion (Cohen 1988, ch. 6, the definition)."""
    h = effects.cohens_h(0.3, 0.45)
    assert float(h) == pytest.approx(2 * math.asin(math.sqrt(0.45)) - 2 * math.asin(math.sqrt(0.3)))
    assert float(effects.proportion_from_h(0.3, h)) == pytest.approx(0.45)
    assert np.isnan(effects.proportion_from_h(0.9, 2.0))
