"""Confirmation by simulation: every design's simulator against its analytic power."""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

import powercore as pc
from powercore.simulate import simulate, wilson_interval
from powercore.simulators import SIMULATORS

# Designs whose analytic power is exact for the data the simulator draws: agreement within 4 SE.
EXACT = {"mean-z", "mean-t", "paired-t", "two-means-z", "two-means-t", "proportion-exact", "correlation-exact",
         "two-means-noninferiority", "two-means-superiority", "two-means-equivalence", "cluster-means-clusters",
         "cluster-means-size", "anova-oneway"}
# Approximate designs, checked where their approximation is meant to hold; tolerance 4 SE plus the
# approximation error each design's notes state (in power units).
APPROX = {"two-means-welch": 0.01, "proportion-normal": 0.02, "two-proportions": 0.015,
          "two-proportions-arcsine": 0.015, "correlation-fisher": 0.015, "two-proportions-noninferiority": 0.02,
          "two-proportions-superiority": 0.03, "logrank-events": 0.03, "logrank-subjects": 0.03,
          "cluster-proportions-clusters": 0.03, "cluster-proportions-size": 0.03, "chisquare-gof": 0.02,
          "chisquare-independence": 0.03, "regression-r2": 0.02, "regression-r2-change": 0.035, "mcnemar": 0.02,
          "two-rates": 0.02, "wilcoxon-mann-whitney": 0.02, "wilcoxon-signed-rank": 0.02}

GRID = {  # (params, n) with the power away from 0 and 1; big enough n for the approximations
    "mean-z": [({"delta": 3.0, "sd": 10.0}, 60), ({"delta": -2.0, "sd": 5.0}, 30)],
    "mean-t": [({"delta": 3.0, "sd": 10.0}, 12), ({"delta": 1.0, "sd": 2.0}, 25)],
    "paired-t": [({"delta": 2.0, "sd_diff": 5.0}, 20)],
    "two-means-z": [({"delta": 4.0, "sd1": 8.0, "sd2": 12.0, "ratio": 1.5}, 40)],
    "two-means-t": [({"delta": 5.0, "sd": 10.0}, 30), ({"delta": 3.0, "sd": 6.0, "ratio": 2.0}, 15)],
    "two-means-welch": [({"delta": 5.0, "sd1": 5.0, "sd2": 15.0}, 20), ({"delta": 3.0, "sd1": 8.0, "sd2": 4.0, "ratio": 0.5}, 40)],
    "proportion-normal": [({"p0": 0.4, "delta": 0.12}, 150)],
    "proportion-exact": [({"p0": 0.2, "delta": 0.15}, 40)],
    "two-proportions": [({"p1": 0.4, "delta": 0.15}, 150), ({"p1": 0.4, "delta": 0.15, "continuity": True}, 150)],
    "two-proportions-arcsine": [({"p1": 0.4, "delta": 0.15}, 150)],
    "correlation-fisher": [({"rho0": 0.0, "delta": 0.3}, 60)],
    "correlation-exact": [({"rho0": 0.0, "delta": 0.4}, 25)],
    "two-means-noninferiority": [({"delta": 1.0, "sd": 8.0, "margin": 4.0}, 40)],
    "two-means-superiority": [({"delta": 8.0, "sd": 8.0, "margin": 3.0}, 40)],
    "two-proportions-noninferiority": [({"p1": 0.7, "delta": 0.0, "margin": 0.12}, 150)],
    "two-proportions-superiority": [({"p1": 0.5, "delta": 0.25, "margin": 0.05}, 150)],
    "two-means-equivalence": [({"delta": 1.0, "sd": 10.0, "margin": 6.0}, 60)],
    "logrank-events": [({"hr": 0.7}, 150)],
    "logrank-subjects": [({"hr": 0.7, "median_control": 12.0, "accrual": 12.0, "follow_up": 12.0}, 150)],
    "cluster-means-clusters": [({"delta": 4.0, "sd": 10.0, "icc": 0.05, "m": 10.0}, 8)],
    "cluster-means-size": [({"delta": 4.0, "sd": 10.0, "icc": 0.05, "k": 8.0}, 10)],
    "cluster-proportions-clusters": [({"p1": 0.3, "delta": 0.12, "icc": 0.02, "m": 30.0}, 15)],
    "cluster-proportions-size": [({"p1": 0.3, "delta": 0.12, "icc": 0.02, "k": 15.0}, 30)],
    "anova-oneway": [({"delta": 2.5, "sd": 10.0, "k": 3.0}, 40), ({"delta": 4.0, "sd": 10.0, "k": 5.0}, 15)],
    "chisquare-gof": [({"delta": 0.25, "df": 3.0}, 120)],
    "chisquare-independence": [({"delta": 0.25, "df": 2.0}, 150)],
    "regression-r2": [({"delta": 0.1, "u": 3.0}, 80)],
    "regression-r2-change": [({"delta": 0.05, "r2_base": 0.2, "u": 2.0, "v": 2.0}, 150)],
    "mcnemar": [({"delta": 0.1, "psi": 0.3}, 150)],
    "two-rates": [({"rate1": 1.0, "delta": 0.5, "exposure": 1.0}, 40)],
    "wilcoxon-mann-whitney": [({"delta": 5.0, "sd": 10.0}, 40)],
    "wilcoxon-signed-rank": [({"delta": 4.0, "sd_diff": 10.0}, 40)],
}
REPS = {"logrank-events": 1500, "logrank-subjects": 1500, "correlation-exact": 4000, "regression-r2": 3000,
        "regression-r2-change": 3000}


def test_every_design_has_a_simulator_and_a_grid():
    """Every registered design can be simulated and is in this file's grid, so none goes unchecked."""
    ids = {d.id for d in pc.designs()}
    assert ids == set(SIMULATORS) == set(GRID) == EXACT | set(APPROX)


@pytest.mark.parametrize("design, params, n", [(d, p, n) for d, rows in GRID.items() for p, n in rows])
def test_simulation_agrees_with_the_analytic_power(design, params, n):
    """Seeded simulation of the real test agrees with the analytic power within 4 SE (plus the stated approximation)."""
    d = pc.get_design(design)
    sc = pc.Scenario(design, params, n=n, direction=d.directions[0])
    res = simulate(sc, reps=REPS.get(design, 6000), seed=20261201)
    tol = 4 * math.sqrt(res.analytic * (1 - res.analytic) / res.reps) + APPROX.get(design, 0.0)
    assert abs(res.power - res.analytic) <= tol, res.statement


def test_seeded_runs_are_reproducible():
    """The same seed gives the same rejections; another seed gives another draw."""
    sc = pc.Scenario("two-means-t", {"delta": 5.0, "sd": 10.0}, n=30)
    a, b, c = simulate(sc, 3000, seed=7), simulate(sc, 3000, seed=7), simulate(sc, 3000, seed=8)
    assert a.rejections == b.rejections and a.rejections != c.rejections


def test_two_sample_t_agrees_with_scipy_stats_power():
    """Our simulated two-sample t power agrees with scipy.stats.power on the same scenario (scipy 1.17)."""
    reps = 20000
    rng = np.random.default_rng(3)
    ref = stats.power(stats.ttest_ind, rvs=(lambda size: rng.normal(0, 10, size=size),
                                            lambda size: rng.normal(5, 10, size=size)),
                      n_observations=(50, 50), n_resamples=reps, vectorized=True, significance=0.05).power
    ours = simulate(pc.Scenario("two-means-t", {"delta": 5.0, "sd": 10.0}, n=50), reps, seed=4).power
    assert abs(float(ref) - ours) <= 4 * math.sqrt(2 * 0.7 * 0.3 / reps)


def test_wilson_interval_known_value():
    """Wilson interval for 50/100 is 0.4038 to 0.5962 (Wilson 1927 formula, computed by hand; common practice)."""
    lo, hi = wilson_interval(50, 100)
    assert lo == pytest.approx(0.40383, abs=1e-5) and hi == pytest.approx(0.59617, abs=1e-5)


def test_progress_and_cancel():
    """Progress is reported per chunk; a cancel stops the run and marks it cancelled with what was done."""
    seen = []
    sc = pc.Scenario("mean-z", n=20)
    res = simulate(sc, 100_000, seed=1, progress=lambda done, total: seen.append(done),
                   cancel=lambda: len(seen) >= 2)
    assert res.cancelled and res.reps == seen[-1] == 10_000


def test_large_studies_are_drawn_in_small_blocks():
    """A 4,000-event log-rank study is drawn 250 replicates at a time (a million cells), so progress and
    cancel are seen within about a second; small studies keep blocks of powercore.simulate.CHUNK."""
    from powercore import simulate as sim_mod
    d = pc.get_design("logrank-events")
    steps = []
    simulate(pc.Scenario(design=d.id, params=d.defaults(), n=4000), 1000, seed=3,
             progress=lambda done, total: steps.append(done))
    assert steps == [250, 500, 750, 1000]
    assert 250 * 4000 <= sim_mod.CHUNK_CELLS
    small = []
    simulate(pc.Scenario("mean-z", n=20), 12_000, seed=3,
             progress=lambda done, total: small.append(done))
    assert small == [sim_mod.CHUNK, 2 * sim_mod.CHUNK, 12_000]


@pytest.mark.parametrize("kwargs, field", [({"reps": 10}, "reps"), ({"reps": 1.5}, "reps"),
                                           ({"reps": 1000, "seed": -1}, "seed")])
def test_bad_simulation_input_names_the_field(kwargs, field):
    """Too few replicates or a bad seed are refused naming the field."""
    with pytest.raises(pc.InvalidParameter) as info:
        simulate(pc.Scenario("mean-z", n=20), **kwargs)
    assert info.value.field == field


def test_disagreement_is_stated_with_the_reason():
    """Where the analytic method is rough (normal approximation, tiny n) the statement says they differ and why."""
    sc = pc.Scenario("proportion-normal", {"p0": 0.1, "delta": 0.15}, n=12)
    res = simulate(sc, 200_000, seed=5)
    assert not res.agrees and "normal approximation" in res.statement
