"""Time-to-event (log-rank) and cluster-randomised designs."""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate, stats

import powercore as pc
from powercore.cluster import design_effect
from powercore.survival import event_probability, hazard_ratio_from_medians, median_from_hazard_ratio

Z975, Z80 = stats.norm.isf(0.025), stats.norm.isf(0.2)


@pytest.mark.parametrize("hr", [0.5, 0.7, 0.8, 1.5])
def test_schoenfeld_events_formula(hr):
    """Required events with 1:1 allocation is ceil(4(z_α/2 + z_β)²/log²HR); Schoenfeld (1983), common practice."""
    r = pc.evaluate(pc.Scenario("logrank-events", {"hr": hr}, find="n"))
    expected = math.ceil(4 * (Z975 + Z80) ** 2 / math.log(hr) ** 2)
    assert r.n == expected


@pytest.mark.parametrize("hr", [0.5, 0.7, 0.8])
def test_freedman_events_formula(hr):
    """Freedman's events, 1:1, is ceil((z_α/2 + z_β)²(1 + HR)²/(1 − HR)²); Freedman (1982), from memory."""
    r = pc.evaluate(pc.Scenario("logrank-events", {"hr": hr, "freedman": True}, find="n"))
    assert r.n == math.ceil((Z975 + Z80) ** 2 * (1 + hr) ** 2 / (1 - hr) ** 2)


def test_schoenfeld_unequal_allocation():
    """With r = n2/n1, events = (z + z)²(1 + r)²/(r·log²HR); Schoenfeld (1983), common practice."""
    r = pc.evaluate(pc.Scenario("logrank-events", {"hr": 0.7, "ratio": 2.0}, find="n"))
    assert r.n == math.ceil((Z975 + Z80) ** 2 * 9 / (2 * math.log(0.7) ** 2))


@pytest.mark.parametrize("lam, a, f", [(0.05, 12.0, 6.0), (0.2, 24.0, 0.0), (0.01, 6.0, 30.0)])
def test_event_probability_against_numerical_integration(lam, a, f):
    """P(event) with uniform entry over A and follow-up F equals the average of 1 − exp(−λ(F + A − u)) over entry u."""
    direct, _ = integrate.quad(lambda u: 1 - math.exp(-lam * (f + a - u)), 0, a)   # direct scipy computation
    assert float(event_probability(lam, a, f)) == pytest.approx(direct / a, rel=1e-10)


def test_event_probability_without_accrual_period():
    """With no accrual period everyone is followed for F: P = 1 − exp(−λF) (exponential law, common practice)."""
    assert float(event_probability(0.1, 0.0, 5.0)) == pytest.approx(1 - math.exp(-0.5), rel=1e-12)


def test_subjects_design_uses_expected_events():
    """The subjects design's power equals the events design's at the expected number of events."""
    sc = pc.Scenario("logrank-subjects", {"hr": 0.7, "median_control": 10.0, "accrual": 12.0, "follow_up": 6.0},
                     n=150)
    r = pc.evaluate(sc)
    d = pc.get_design("logrank-subjects")
    events, _, _ = d.events(dict(sc.params), (150.0, 150.0))
    z = math.log(0.7) * math.sqrt(events) / 2
    expected = stats.norm.cdf(-Z975 - z) + stats.norm.sf(Z975 - z)    # direct scipy computation
    assert r.power == pytest.approx(expected, rel=1e-10)


def test_medians_and_hazard_ratio_helpers_are_inverse():
    """Under exponential survival HR = median_control/median_new, and the helpers invert each other."""
    hr = hazard_ratio_from_medians(12.0, 16.0)
    assert float(hr) == pytest.approx(0.75) and float(median_from_hazard_ratio(12.0, hr)) == pytest.approx(16.0)


@pytest.mark.parametrize("m, icc, cv, expected", [
    (20, 0.05, 0.0, 1.95),          # 1 + (m − 1)ρ, Donner and Klar (2000), common practice
    (10, 0.1, 0.5, 1 + (1.25 * 10 - 1) * 0.1),   # Eldridge, Ashby and Kerry (2006), from memory
    (1, 0.3, 0.0, 1.0),
])
def test_design_effect(m, icc, cv, expected):
    """The design effect formula for equal and unequal cluster sizes."""
    assert float(design_effect(m, icc, cv)) == pytest.approx(expected, rel=1e-12)


def test_cluster_means_power_is_noncentral_t_with_cluster_df():
    """Power is the noncentral t on 2(k − 1) df with SE σ√(2·DE/(k·m)); direct scipy computation."""
    r = pc.evaluate(pc.Scenario("cluster-means-clusters", {"delta": 3.0, "sd": 10.0, "icc": 0.05, "m": 20.0},
                                n=12))
    se = 10.0 * math.sqrt(2 * 1.95 / (12 * 20))
    df = 22
    c = stats.t.isf(0.025, df)
    assert r.power == pytest.approx(stats.nct.sf(c, df, 3 / se) + stats.nct.cdf(-c, df, 3 / se), rel=1e-9)


def test_cluster_means_matches_simulation_of_cluster_mean_t_test():
    """Raw clustered data analysed by a t test on cluster means agrees within 4 Monte Carlo SEs."""
    k, m, icc, sd, delta, reps = 8, 15, 0.08, 10.0, 6.0, 6000
    r = pc.evaluate(pc.Scenario("cluster-means-clusters", {"delta": delta, "sd": sd, "icc": icc, "m": float(m)},
                                n=k))
    rng = np.random.default_rng(2026)
    sb, sw = sd * math.sqrt(icc), sd * math.sqrt(1 - icc)
    def arm(mu):
        return mu + rng.normal(0, sb, (reps, k)) + rng.normal(0, sw, (reps, k, m)).mean(-1)
    t, _ = stats.ttest_ind(arm(delta), arm(0.0), axis=1)
    sim = np.mean(np.abs(t) >= stats.t.isf(0.025, 2 * k - 2))
    assert abs(sim - r.power) <= 4 * math.sqrt(r.power * (1 - r.power) / reps)


def test_cluster_size_design_reports_an_unreachable_target():
    """With too few clusters no cluster size reaches the target; the error names n and says why."""
    with pytest.raises(pc.NoSolution) as info:
        pc.evaluate(pc.Scenario("cluster-means-size", {"k": 4.0, "icc": 0.1, "delta": 5.0, "sd": 10.0}, find="n"))
    assert info.value.field == "n" and "add clusters" in str(info.value)


def test_cluster_size_ceiling_matches_the_limit_formula():
    """As m → ∞ the SE tends to σ√(2ρ(cv² + 1)/k); the ceiling equals that power (direct scipy computation)."""
    p = {"delta": 5.0, "sd": 10.0, "icc": 0.1, "k": 4.0, "cv": 0.0}
    d = pc.get_design("cluster-means-size")
    ceiling, _ = d.power_ceiling(p, 0.05, "two-sided")
    se = 10.0 * math.sqrt(2 * 0.1 / 4)
    c = stats.t.isf(0.025, 6)
    assert ceiling == pytest.approx(stats.nct.sf(c, 6, 5 / se) + stats.nct.cdf(-c, 6, 5 / se), rel=1e-6)


def test_cluster_size_design_finds_subjects_per_cluster():
    """When reachable, the required cluster size reaches the target and one fewer does not."""
    r = pc.evaluate(pc.Scenario("cluster-means-size", {"k": 10.0, "icc": 0.02, "delta": 4.0, "sd": 10.0}, find="n"))
    ss = r.sample_size
    assert ss.power >= 0.8 > ss.power_below and r.group_sizes == (10 * r.n, 10 * r.n)
