"""Edge cases, as tables that read like a specification.

Part 1, numerical extremes, for every registered design: noncentrality far above 40,
α down to 1e-10, the smallest allowed n, allocation ratios of 0.01 and 100, and effects
so small that n runs into the millions (checked against normal-theory formulas).
Part 2, refusals: every bad input raises a named error (``powercore.InvalidParameter``
or ``powercore.NoSolution``, both ``ValueError`` subclasses) carrying ``.field``, and the
message names that field.
"""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats
from scipy.optimize import brentq

import powercore as pc
from powercore import InvalidParameter, NoSolution, RecordError

DESIGNS = pc.designs()
by_design = pytest.mark.parametrize("design", DESIGNS, ids=[d.id for d in DESIGNS])


def first_side_effect(design, p, fraction):
    """An effect ``fraction`` of the way from the null to the edge of the soft range along the first tested side."""
    direction = design.directions[0]
    q = {**p, design.effect: design.null_effect(p)}
    name, e0, sign, bound = design.effect_sides(q, direction)[0]
    spec = design.param(design.effect)
    lo_b, hi_b = design.effect_bounds(q)
    edge = min(spec.soft[1], bound, hi_b) if sign > 0 else max(spec.soft[0], bound, lo_b)
    return {**q, design.effect: e0 + fraction * (edge - e0)}, direction


def power(design, p, n, alpha, direction):
    return float(pc.power_at(design, p, n, alpha, direction))


# ---- part 1: numerical extremes -------------------------------------------------------
@by_design
def test_huge_noncentrality_gives_power_one_not_nan(design):
    """With n = 10^6 and the effect halfway along a tested side, power is finite, in [0, 1], and 1 where λ > 40."""
    p, direction = first_side_effect(design, design.defaults(), 0.5)
    n = max(10 ** 6, design.min_n(p))
    value = power(design, p, n, 0.05, direction)
    assert math.isfinite(value) and 0.0 <= value <= 1.0
    st = design.statistic(p, design.group_sizes(p, n))
    if abs(float(np.asarray(st.noncentrality))) > 40 and design.power_ceiling(p, 0.05, direction) is None:
        assert value >= 1 - 1e-9


@pytest.mark.parametrize("design_id, params, n", [
    ("mean-t", {"delta": 50.0, "sd": 1.0}, 3),            # λ = 86.6 with 2 df: scipy's nct.cdf is NaN here
    ("mean-t", {"delta": 12.0, "sd": 1.0}, 4),            # statsmodels 0.15 returns NaN here
    ("two-means-welch", {"delta": 30.0, "sd1": 1.0, "sd2": 2.0, "ratio": 1.0}, 3),
    ("correlation-fisher", {"rho0": 0.0, "delta": 0.999}, 300),
    ("proportion-exact", {"p0": 0.5, "delta": 0.49}, 5000),
])
def test_named_large_noncentrality_points(design_id, params, n):
    """At these points (λ well above 40, tiny df) power is a finite number within 1e-9 of one, in both two-sided and upper."""
    d = pc.get_design(design_id)
    for direction in ("two-sided", "upper"):
        value = power(d, params, n, 0.05, direction)
        assert math.isfinite(value) and 1 - 1e-9 <= value <= 1.0
    assert 0.0 <= power(d, params, n, 0.05, "lower") <= 0.05


@by_design
@pytest.mark.parametrize("alpha", [1e-6, 1e-8, 1e-10])
def test_tiny_alpha(design, alpha):
    """At α down to 1e-10 power is finite and in [0, 1], and at the null effect it is α (at most α if conservative)."""
    p = design.defaults()
    n = max(50, design.min_n(p))
    for direction in design.directions:
        value = power(design, p, n, alpha, direction)
        assert math.isfinite(value) and 0.0 <= value <= 1.0
        for _, e0, _, _ in design.effect_sides(p, direction):
            q = {**p, design.effect: e0}
            size = power(design, q, n, alpha, direction)
            if design.conservative_at(q):
                assert 0.0 <= size <= alpha * (1 + 1e-9)
            else:
                assert size == pytest.approx(alpha, rel=1e-6)
    r = pc.evaluate(pc.Scenario(design.id, p, n=n, alpha=alpha))
    assert all(v is None or math.isfinite(v) for v in r.critical["statistic"])


@by_design
def test_smallest_allowed_n(design):
    """At the design's smallest n (2 for most) power is finite and in [0, 1] in every direction and at several α."""
    p, _ = first_side_effect(design, design.defaults(), 0.5)
    n = design.min_n(p)
    for direction in design.directions:
        for alpha in (0.001, 0.05, 0.2):
            value = power(design, p, n, alpha, direction)
            assert math.isfinite(value) and 0.0 <= value <= 1.0, (direction, alpha, value)
    assert pc.evaluate(pc.Scenario(design.id, p, n=n)).n == n


RATIO_DESIGNS = [d for d in DESIGNS if "ratio" in {s.name for s in d.params}]


@pytest.mark.parametrize("design", RATIO_DESIGNS, ids=[d.id for d in RATIO_DESIGNS])
@pytest.mark.parametrize("ratio", [0.01, 100.0])
def test_ratio_extremes(design, ratio):
    """Allocation ratios 0.01 and 100 give finite power, group 2 = ceil(ratio·n1), and a solvable sample size."""
    p, direction = first_side_effect(design, {**design.defaults(), "ratio": ratio}, 0.5)
    n = design.min_n(p)
    value = power(design, p, n, 0.05, direction)
    assert math.isfinite(value) and 0.0 <= value <= 1.0
    r = pc.evaluate(pc.Scenario(design.id, p, n=n, direction=direction))
    if len(r.group_sizes) == 2:
        assert r.group_sizes == (n, math.ceil(ratio * n - 1e-9))
    try:
        ss = pc.evaluate(pc.Scenario(design.id, p, direction=direction, find="n")).sample_size
    except NoSolution as e:  # only when a power ceiling says so
        assert design.power_ceiling(p, 0.05, direction) is not None, str(e)
        return
    assert ss.n >= design.min_n(p) and ss.power >= 0.8
    if not design.discrete:  # documented: the real-valued n where power equals the target (None: below min n)
        if ss.n_continuous is None:
            assert ss.n == design.min_n(p)
        else:
            at_root = float(pc.power_at(design, p, ss.n_continuous, 0.05, direction, integer=False))
            assert at_root == pytest.approx(0.8, abs=1e-5), f"power {at_root:.6g} at n_continuous = {ss.n_continuous:g}"


def test_smallest_n_rises_with_a_small_ratio_for_welch():
    """Welch needs two subjects in group 2, so ratio 0.01 raises the smallest n1 to 101 (ceil(0.01·101) = 2)."""
    d = pc.get_design("two-means-welch")
    assert d.min_n({**d.defaults(), "ratio": 0.01}) == 101   # ceil(0.01·100) = 1 < 2: definition of the design
    with pytest.raises(InvalidParameter) as e:
        pc.Scenario("two-means-welch", {"ratio": 0.01}, n=100)
    assert e.value.field == "n" and "101" in str(e.value)


def z_two_sided(nc, sd_alt=1.0, alpha=0.05):
    """Two-sided z power with both tails (direct scipy computation)."""
    c = stats.norm.isf(alpha / 2)
    return stats.norm.sf(c, loc=nc, scale=sd_alt) + stats.norm.cdf(-c, loc=nc, scale=sd_alt)


def normal_theory_n(power_of_n, target=0.8):
    """The real n where a normal-theory power function reaches the target, by brentq (direct scipy computation).

    Both tails count: at n in the millions the far tail (about 1e-6 here) moves n by ~20.
    """
    return brentq(lambda n: power_of_n(n) - target, 4.0, 1e9, xtol=1e-6, rtol=1e-14)


P03, P0301 = math.sqrt(0.3 * 0.7), math.sqrt(0.301 * 0.699)
H = 2 * math.asin(math.sqrt(0.501)) - 2 * math.asin(math.sqrt(0.5))


@pytest.mark.parametrize("design_id, params, power_of_n, slack", [
    ("mean-z", {"delta": 0.001, "sd": 1.0}, lambda n: z_two_sided(0.001 * math.sqrt(n)), 0),
    ("mean-t", {"delta": 0.001, "sd": 1.0}, lambda n: z_two_sided(0.001 * math.sqrt(n)), 3),  # t adds ~z²/4 + 1
    ("paired-t", {"delta": 0.0015, "sd_diff": 1.0}, lambda n: z_two_sided(0.0015 * math.sqrt(n)), 3),
    ("two-means-t", {"delta": 0.002, "sd": 1.0, "ratio": 1.0}, lambda n: z_two_sided(0.002 / math.sqrt(2 / n)), 3),
    ("correlation-fisher", {"rho0": 0.0, "delta": 0.002},
     lambda n: z_two_sided(math.atanh(0.002) * math.sqrt(n - 3)), 0),
    ("proportion-normal", {"p0": 0.3, "delta": 0.001},
     lambda n: z_two_sided(0.001 * math.sqrt(n) / P03, sd_alt=P0301 / P03), 0),
    ("two-proportions-arcsine", {"p1": 0.5, "delta": 0.001, "ratio": 1.0},
     lambda n: z_two_sided(H / math.sqrt(2 / n)), 0),
])
def test_sample_sizes_in_the_millions_match_normal_theory(design_id, params, power_of_n, slack):
    """Effects so small that n runs into the millions are solved, and agree with the normal-theory n."""
    n_real = normal_theory_n(power_of_n)
    assert n_real > 1e6 and abs(n_real - round(n_real)) > 1e-3
    r = pc.evaluate(pc.Scenario(design_id, params, find="n"))
    expected = math.ceil(n_real)
    assert expected <= r.n <= expected + slack
    assert r.sample_size.power >= 0.8 > r.sample_size.power_below


def test_exact_binomial_sample_size_in_the_millions_is_near_normal_theory():
    """The exact binomial n at δ = 0.001 is within 0.1% of the score-test formula and its power reaches the target."""
    za, zb = stats.norm.isf(0.025), stats.norm.isf(0.2)
    formula = ((za * math.sqrt(0.3 * 0.7) + zb * math.sqrt(0.301 * 0.699)) / 0.001) ** 2  # common practice, no source
    ss = pc.evaluate(pc.Scenario("proportion-exact", {"p0": 0.3, "delta": 0.001}, find="n")).sample_size
    assert ss.n == pytest.approx(formula, rel=1e-3)
    assert ss.power >= 0.8 and ss.stays_from >= ss.n


def test_sample_size_beyond_the_limit_is_a_named_error():
    """An effect needing more than 10^9 units raises NoSolution for n rather than returning a bracket end."""
    with pytest.raises(NoSolution) as e:
        pc.evaluate(pc.Scenario("mean-z", {"delta": 1e-6, "sd": 1.0}, find="n"))
    assert e.value.field == "n" and "n" in str(e.value)


def test_numpy_scalars_are_accepted_like_python_numbers():
    """n, α and parameters given as numpy scalars (as they come out of arrays) are accepted and give the same power."""
    plain = pc.power(pc.Scenario("mean-t", {"delta": 5.0, "sd": 10.0}, n=30, alpha=0.05))
    s = pc.Scenario("mean-t", {"delta": np.float64(5.0), "sd": np.int64(10)}, n=np.int64(30), alpha=np.float32(0.05))
    assert pc.power(s) == pytest.approx(plain, rel=1e-6)
    assert isinstance(s.to_dict()["n"], int)


# ---- part 2: refusals ----------------------------------------------------------------
def make(design="mean-t", params=None, **kw):
    return lambda: pc.Scenario(design, params or {}, **kw)


def solve(design="mean-t", params=None, **kw):
    return lambda: pc.evaluate(pc.Scenario(design, params or {}, **kw))


REFUSALS = [
    # (what is wrong, action, error class, field)
    ("zero effect, find n", solve(params={"delta": 0.0}, find="n"), NoSolution, "n"),
    ("zero effect, two proportions, find n", solve("two-proportions", {"delta": 0.0}, find="n"), NoSolution, "n"),
    ("negative effect, upper alternative", solve(params={"delta": -1.0}, find="n", direction="upper"), NoSolution, "n"),
    ("positive effect, lower alternative", solve("two-proportions", {"delta": 0.1}, find="n", direction="lower"),
     NoSolution, "n"),
    ("effect below the non-inferiority null", solve("two-means-noninferiority", {"delta": -5.0, "margin": 3.0},
                                                    find="n"), NoSolution, "n"),
    ("exact test cannot reject at n = 2", solve("proportion-exact", {"p0": 0.5, "delta": None}, n=2, find="effect",
                                                direction="upper"), NoSolution, "effect"),
    ("normal proportion cannot reach 0.9 at n = 2", solve("proportion-normal", {"p0": 0.5, "delta": None}, n=2,
                                                          find="effect", direction="upper", target_power=0.9),
     NoSolution, "effect"),
    ("cluster size cannot reach the target", solve("cluster-proportions-size", {}, find="n"), NoSolution, "n"),
    ("n below the minimum", make(n=1), InvalidParameter, "n"),
    ("n below the correlation minimum", make("correlation-fisher", n=3), InvalidParameter, "n"),
    ("n below the minimum under ratio 0.01", make("two-means-welch", {"ratio": 0.01}, n=50), InvalidParameter, "n"),
    ("n not whole", make(n=2.5), InvalidParameter, "n"),
    ("n missing when finding power", make(), InvalidParameter, "n"),
    ("alpha 0", make(n=10, alpha=0), InvalidParameter, "alpha"),
    ("alpha 1", make(n=10, alpha=1), InvalidParameter, "alpha"),
    ("alpha 1.5", make(n=10, alpha=1.5), InvalidParameter, "alpha"),
    ("alpha NaN", make(n=10, alpha=float("nan")), InvalidParameter, "alpha"),
    ("alpha infinite", make(n=10, alpha=float("inf")), InvalidParameter, "alpha"),
    ("alpha missing when finding power", make(n=10, alpha=None), InvalidParameter, "alpha"),
    ("negative SD", make(params={"sd": -1.0}, n=10), InvalidParameter, "sd"),
    ("zero SD", make(params={"sd": 0.0}, n=10), InvalidParameter, "sd"),
    ("zero SD of differences", make("paired-t", {"sd_diff": 0.0}, n=10), InvalidParameter, "sd_diff"),
    ("NaN SD", make(params={"sd": float("nan")}, n=10), InvalidParameter, "sd"),
    ("target power equal to alpha", make(find="n", alpha=0.05, target_power=0.05), InvalidParameter, "target_power"),
    ("target power below alpha", make(find="effect", n=10, alpha=0.2, target_power=0.1), InvalidParameter,
     "target_power"),
    ("target power 1", make(find="n", target_power=1.0), InvalidParameter, "target_power"),
    ("unknown parameter", make(params={"sigma": 1.0}, n=10), InvalidParameter, "sigma"),
    ("unknown design", make("mean-q", n=10), InvalidParameter, "design"),
    ("design not a string", make(42, n=10), InvalidParameter, "design"),
    ("bool for alpha", make(n=10, alpha=True), InvalidParameter, "alpha"),
    ("bool for n", make(n=True), InvalidParameter, "n"),
    ("bool for an SD", make(params={"sd": True}, n=10), InvalidParameter, "sd"),
    ("string for an SD", make(params={"sd": "10"}, n=10), InvalidParameter, "sd"),
    ("number for a yes/no parameter", make("two-proportions", {"continuity": 1}, n=10), InvalidParameter, "continuity"),
    ("proportion pushed past 1", make("proportion-normal", {"p0": 0.9, "delta": 0.2}, n=10), InvalidParameter, "delta"),
    ("ratio 0", make("two-means-t", {"ratio": 0.0}, n=10), InvalidParameter, "ratio"),
    ("unknown direction", make(n=10, direction="both"), InvalidParameter, "direction"),
    ("direction the design does not offer", make("two-means-noninferiority", n=10, direction="two-sided"),
     InvalidParameter, "direction"),
    ("unknown find", make(n=10, find="beta"), InvalidParameter, "find"),
    ("params not an object", make(params=[1, 2], n=10), InvalidParameter, "params"),
    ("dropout of 1", make(n=10, adjustments={"dropout": 1.0}), InvalidParameter, "adjustments.dropout"),
    ("unknown record field", lambda: pc.Scenario.from_dict({"design": "mean-t", "n": 10, "sigma": 2}),
     InvalidParameter, "sigma"),
    ("record without a design", lambda: pc.Scenario.from_dict({"n": 10}), InvalidParameter, "design"),
    ("record of the wrong schema version", lambda: pc.Scenario.from_dict({"design": "mean-t", "n": 10,
                                                                          "schema_version": 99}),
     InvalidParameter, "schema_version"),
    ("record that is not an object", lambda: pc.Scenario.from_dict([1]), RecordError, "scenario"),
]


@pytest.mark.parametrize("what, action, error, field", REFUSALS, ids=[row[0] for row in REFUSALS])
def test_refusals_are_named_errors_that_name_the_field(what, action, error, field):
    """Each bad input raises the named error, a ValueError, whose .field and message name the field at fault."""
    with pytest.raises(error) as info:
        action()
    e = info.value
    assert isinstance(e, ValueError)
    assert e.field == field
    assert field in str(e)


@pytest.mark.parametrize("value", [0, 1, 1.5, -0.1, float("nan")])
def test_alpha_message_states_constraint_and_value(value):
    """The α message reads 'alpha must be in (0, 1), got <value>': parameter, constraint and value."""
    with pytest.raises(InvalidParameter) as info:
        pc.Scenario("mean-t", n=10, alpha=value)
    assert str(info.value) == f"alpha must be in (0, 1), got {value!r}"
    assert info.value.value is value or info.value.value == value


def test_no_solution_carries_the_reason():
    """NoSolution keeps its reason and the offending value, and says why in words."""
    with pytest.raises(NoSolution) as info:
        pc.evaluate(pc.Scenario("mean-t", {"delta": -1.0}, find="n", direction="upper"))
    e = info.value
    assert e.field == "n" and e.value == -1.0 and "upper" in e.reason and e.reason in str(e)


def test_errors_do_not_leak_as_other_exception_types():
    """A scenario that evaluates raises nothing, and a NaN effect is an InvalidParameter, not a crash deeper down."""
    assert 0.0 <= pc.evaluate(pc.Scenario("mean-t", {"delta": 5.0}, n=30)).power <= 1.0
    with pytest.raises(InvalidParameter) as info:
        pc.Scenario("mean-t", {"delta": float("nan")}, n=30)
    assert info.value.field == "delta"
