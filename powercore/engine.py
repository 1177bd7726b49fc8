"""Shared machinery: critical regions, power, the solvers, and ``evaluate``.

Nothing here knows a particular design; every design reaches these functions
through the :class:`~powercore.design.Design` protocol.
"""
from __future__ import annotations

import math
import numpy as np
from scipy.special import expit, logit, ndtri

from . import adjust
from .design import Design, fmt, get_design
from .errors import NoSolution
from .result import Result, SampleSize, Step
from .scenario import N_MAX, Scenario
from .solver import solve_increasing

__all__ = ["critical_values", "detectable_effect", "evaluate", "power", "power_at",
           "sample_size", "significance_level"]

EXACT_SCAN_LIMIT = 2 * 10**6
ALPHA_RANGE = (1e-12, 1 - 1e-12)


def critical_values(st, alpha, direction):
    """Lower and upper critical values of the statistic (NaN for a side that does not reject)."""
    if direction == "two-sided":
        half = np.asarray(alpha) / 2
        return (np.asarray(st.null.crit_lower(half) - st.shift, dtype=float),
                np.asarray(st.null.crit_upper(half) + st.shift, dtype=float))
    nan = np.full(np.shape(alpha), np.nan)
    if direction == "upper":
        return nan, np.asarray(st.null.crit_upper(alpha) + st.shift, dtype=float)
    return np.asarray(st.null.crit_lower(alpha) - st.shift, dtype=float), nan


def _tails(st, lo, hi):
    """Probability under the alternative of each rejection tail (0 for an unused side)."""
    upper = 0.0 if np.isnan(hi).all() else st.alt.tail_upper(hi)
    lower = 0.0 if np.isnan(lo).all() else st.alt.tail_lower(lo)
    return np.asarray(lower, dtype=float), np.asarray(upper, dtype=float)


def _within(level, alpha):
    """Where a test whose smallest reachable level is ``level`` can reject at ``alpha`` (None: anywhere)."""
    return True if level is None else np.asarray(level) <= np.asarray(alpha) * (1 + 1e-12)


def _reachable(design: Design, p: dict, sizes, alpha, direction: str):
    """Where the real test can reject at level ``alpha`` (True, or a boolean array; see ``smallest_level``)."""
    return _within(design.smallest_level(p, sizes, direction), alpha)


def power_at(design: Design, p: dict, n, alpha, direction: str, integer: bool = True) -> np.ndarray:
    """Power, vectorised over any of ``p``'s values, ``n`` and ``alpha`` (they broadcast)."""
    sizes = design.group_sizes(p, n, integer)
    if design.custom_power is not None:
        return np.maximum(np.minimum(design.custom_power(p, sizes, alpha, direction), 1.0), 0.0)
    st = design.statistic(p, sizes)
    lo, hi = critical_values(st, alpha, direction)
    lower, upper = _tails(st, lo, hi)
    pw = np.maximum(np.minimum(lower + upper, 1.0), 0.0)
    return np.where(_reachable(design, p, sizes, alpha, direction), pw, 0.0)


def power(scenario: Scenario) -> float:
    """Power of the scenario at its own n, effect and (per-test) α."""
    d = get_design(scenario.design)
    alpha = adjust.test_alpha(scenario.alpha, scenario.adjustments)
    return float(power_at(d, dict(scenario.params), scenario.n, alpha, scenario.direction))


# ---- sample size --------------------------------------------------------------
def _check_effect_for_n(d: Design, p: dict, direction: str) -> None:
    gap = d.alternative_gap(p, direction)
    if gap is not None:
        raise NoSolution("n", gap + "; power does not rise with the sample size", p[d.effect])


def _n_guess(d: Design, p: dict, alpha: float, direction: str, target: float, n0: int) -> float:
    """Normal-theory guess at n from the noncentrality at ``n0`` (it grows like √n)."""
    st = d.statistic(p, d.group_sizes(p, n0, integer=False))
    nc = abs(float(np.asarray(st.noncentrality)))
    a = alpha / 2 if direction == "two-sided" else alpha
    need = -ndtri(a) + ndtri(target)
    if not math.isfinite(nc) or nc == 0:
        return float(n0) * 4
    ratio = need / nc
    if ratio > 1e6:
        return float(N_MAX)
    return max(float(n0), n0 * ratio * ratio)


def sample_size(design: Design, p: dict, alpha: float, direction: str, target: float) -> SampleSize:
    """The smallest whole n whose power reaches ``target``."""
    _check_effect_for_n(design, p, direction)
    ceiling = design.power_ceiling(p, alpha, direction)
    if ceiling is not None and ceiling[0] < target:
        raise NoSolution("n", f"no {design.n.unit} reach power {target:g}: at most {ceiling[0]:.4f}; {ceiling[1]}")
    n_min = design.min_n(p)
    guess = _n_guess(design, p, alpha, direction, target, n_min)
    if design.discrete:
        return _exact_sample_size(design, p, alpha, direction, target, n_min, guess)

    def pw(n, integer=True):
        return power_at(design, p, n, alpha, direction, integer)

    # solve on the √n scale, where power is close to probit-linear
    u = solve_increasing(lambda u: pw(u * u, False), target, math.sqrt(n_min), math.inf, field="n",
                         start=math.sqrt(min(max(guess, n_min + 0.5), float(N_MAX))),
                         what="the target power", xtol=1e-3, rtol=1e-7, limit=math.sqrt(N_MAX) * 1.01)
    n_cont = u * u
    if n_cont <= n_min * (1 + 1e-9) and pw(float(n_min), False) >= target:
        n_cont = None   # the smallest allowed n already exceeds the target: no root inside the domain
    elif n_cont > N_MAX:
        raise NoSolution("n", f"the target power needs more than {N_MAX:g} {design.n.unit}", n_cont)
    n0 = n_min if n_cont is None else max(n_min, math.ceil(n_cont - 1e-9))
    lo, width = max(n_min, n0 - 1), 2
    for _ in range(12):  # the whole-number answer is near the root; widen the window if rounding moved it
        cand = np.arange(lo, n0 + width, dtype=float)
        powers = pw(cand)
        ok = np.nonzero(powers >= target)[0]
        if ok.size == 0:
            width *= 8
            continue
        k = int(ok[0])
        if k == 0 and cand[0] > n_min:
            lo = max(n_min, int(cand[0]) - width)
            width *= 8
            continue
        n = int(cand[k])
        below = (int(cand[k - 1]), float(powers[k - 1])) if k > 0 else None
        return _make_sample_size(design, p, n, float(powers[k]), below, target, n, None, n_cont)
    raise NoSolution("n", "power does not rise steadily with n near the solution")


def _exact_sample_size(design, p, alpha, direction, target, n_min, guess) -> SampleSize:
    """Scan whole n for an exact discrete test: first n reaching the target, and where it stays.

    The scan starts at half the normal-theory guess unless a coarse look below that point finds
    the target already reached there; it stops at EXACT_SCAN_LIMIT.
    """
    def pw(ns):
        return power_at(design, p, ns, alpha, direction)

    if guess > 10_000:
        # saw-tooth swings are tiny this far out: find the crossing with the solver on whole n, then
        # scan a window around it for the first n reaching the target and where power stays above it
        root = solve_increasing(lambda n: pw(np.round(n)), target, float(n_min), math.inf, field="n",
                                start=float(guess), what="the target power", xtol=0.5,
                                limit=float(N_MAX))
        lo_w = max(n_min, int(root) - 2000)
        ns = np.arange(lo_w, int(root) + 2001, dtype=float)
        powers = pw(ns)
        hit = np.nonzero(powers >= target)[0]
        if hit.size and (hit[0] > 0 or lo_w == n_min):
            first = int(ns[hit[0]])
            after = np.nonzero(powers[hit[0]:] < target)[0]
            stays = first if after.size == 0 else int(ns[hit[0] + after[-1]]) + 1
            below = (first - 1, float(powers[hit[0] - 1])) if hit[0] > 0 else None
            return _make_sample_size(design, p, first, float(powers[hit[0]]), below, target, stays,
                                     int(ns[-1]))
    start = max(n_min, int(0.5 * guess))
    if start > n_min:
        coarse = np.unique(np.linspace(n_min, start, 400).round())
        if np.any(pw(coarse) >= target):
            start = n_min
    size = int(min(max(guess, 1000), 100_000))
    first = None
    while start <= EXACT_SCAN_LIMIT:
        ns = np.arange(start, min(start + size, EXACT_SCAN_LIMIT + 1), dtype=float)
        hit = np.nonzero(pw(ns) >= target)[0]
        if hit.size:
            first = int(ns[hit[0]])
            break
        start, size = start + size, min(size * 2, 200_000)
    if first is None:
        raise NoSolution("n", f"the exact search stops at {EXACT_SCAN_LIMIT:g} {design.n.unit}; "
                              "use the normal approximation for effects this small")
    horizon = first + min(max(100, first // 2), 100_000)
    ns = np.arange(max(n_min, first - 1), horizon + 1, dtype=float)
    powers = pw(ns)
    at = int(np.nonzero(ns == first)[0][0])
    below_mask = np.nonzero(powers[at:] < target)[0]
    stays = first if below_mask.size == 0 else int(ns[at + below_mask[-1]]) + 1
    below = (first - 1, float(powers[at - 1])) if at > 0 else None
    return _make_sample_size(design, p, first, float(powers[at]), below, target, stays, horizon)


def _make_sample_size(design, p, n, power_n, below, target, stays, horizon, n_cont=None) -> SampleSize:
    sizes = tuple(int(round(float(s))) for s in design.group_sizes(p, n, integer=True))
    return SampleSize(n=int(n), power=power_n, n_below=None if below is None else below[0],
                      power_below=None if below is None else below[1],
                      group_sizes=sizes, total=int(sum(sizes)), target=target,
                      stays_from=int(stays), checked_to=horizon,
                      n_continuous=None if n_cont is None else float(n_cont))


# ---- smallest detectable effect -----------------------------------------------
def detectable_effect(design: Design, p: dict, n: int, alpha: float, direction: str,
                      target: float) -> dict[str, float | None]:
    """Smallest effect on each allowed side whose power at n reaches ``target``.

    Returns ``{"upper": x, "lower": y}``; a side is ``None`` when the direction
    does not test it. Raises NoSolution when a tested side cannot reach the target.
    """
    out: dict[str, float | None] = {"upper": None, "lower": None}
    scale = design.effect_scale(p)
    probe = 1e-3 * scale   # noncentrality is close to linear in a small effect
    sizes = design.group_sizes(p, n, integer=True)
    level = design.smallest_level(p, sizes, direction)
    if not np.all(_within(level, alpha)):
        raise NoSolution("effect", f"with n = {n} {design.n.unit} the exact test's smallest p-value is "
                         f"{fmt(float(level), 4)}, above α = {fmt(alpha)}, so it can never reject; add units", n)
    a = alpha / 2 if direction == "two-sided" else alpha
    for side, e0, sign, bound in design.effect_sides(p, direction):
        nc0 = float(np.asarray(design.statistic({**p, design.effect: e0}, sizes).noncentrality))
        nc1 = float(np.asarray(design.statistic({**p, design.effect: e0 + sign * probe}, sizes).noncentrality))
        slope = abs(nc1 - nc0)
        guess = probe * (-ndtri(a) + ndtri(target)) / slope if slope > 0 and math.isfinite(slope) else scale
        reach = abs(bound - e0)
        edge = reach - max(1e-9, 1e-9 * reach) if math.isfinite(reach) else math.inf

        def f(m, e0=e0, sign=sign):
            return power_at(design, {**p, design.effect: e0 + sign * m}, n, alpha, direction)

        m = solve_increasing(f, target, 0.0, edge, field="effect",
                             start=min(guess, 0.5 * edge) if math.isfinite(edge) else guess,
                             what=f"the target power on the {side} side", xtol=1e-12 * max(scale, 1e-3))
        out[side] = float(e0 + sign * m)
    return out


# ---- significance level -------------------------------------------------------
def significance_level(design: Design, p: dict, n: int, direction: str, target: float) -> float:
    """Smallest α at which the test reaches ``target`` power at n."""
    lo, hi = (float(logit(a)) for a in ALPHA_RANGE)

    def f(u):
        return power_at(design, p, n, expit(u), direction)

    u = solve_increasing(f, target, lo, hi, field="alpha", start=float(logit(0.05)),
                         what="the target power", xtol=1e-10, steps=design.discrete)
    return float(expit(u))


# ---- evaluate -----------------------------------------------------------------
def evaluate(scenario: Scenario) -> Result:
    """Find the scenario's unknown, then compute power, critical region and the working there.

    Every test runs at the per-test level that the multiplicity adjustment gives
    from the scenario's (familywise) α.
    """
    d = get_design(scenario.design)
    p = dict(scenario.params)
    adj = scenario.adjustments
    find, direction, target = scenario.find, scenario.direction, scenario.target_power
    n = scenario.n
    alpha = None if scenario.alpha is None else adjust.test_alpha(scenario.alpha, adj)
    messages: dict[str, str] = {}
    ss = None

    if find == "n":
        ss = sample_size(d, p, alpha, direction, target)
        n = ss.n
    elif find == "effect":
        det = detectable_effect(d, p, n, alpha, direction, target)
        current = p.get(d.effect)
        sides = d.effect_sides(p if current is not None else {**p, d.effect: 0.0}, direction)
        side = sides[0][0]
        for name, e0, sign, _ in sides:   # the side the planner's own effect lies on, if any
            if current is not None and sign * (current - e0) > 0:
                side = name
                break
        p[d.effect] = det[side]
    elif find == "alpha":
        alpha = significance_level(d, p, n, direction, target)
    alpha_fw = adjust.familywise_alpha(alpha, adj) if find == "alpha" else scenario.alpha

    solved = scenario.replace(n=n, alpha=alpha_fw, params={d.effect: p[d.effect]})
    if ss is None and find != "effect":
        try:
            ss = sample_size(d, p, alpha, direction, target) if alpha < target else None
        except NoSolution as e:
            messages["n"] = str(e)
    try:
        detectable = detectable_effect(d, p, n, alpha, direction, target)
    except NoSolution as e:
        messages["effect"] = str(e)
        detectable = {"upper": None, "lower": None}
    if find == "effect":
        ss = sample_size(d, p, alpha, direction, target)
    return _describe(d, scenario, solved, p, n, alpha, direction, ss, detectable, messages)


def _describe(d, scenario, solved, p, n, alpha, direction, ss, detectable, messages) -> Result:
    sizes = d.group_sizes(p, n, integer=True)
    st = d.statistic(p, sizes)
    lo, hi = critical_values(st, alpha, direction)
    lower, upper = _tails(st, lo, hi)
    level = d.smallest_level(p, sizes, direction)
    reachable = bool(np.all(_within(level, alpha)))
    pw = float(np.clip(lower + upper, 0, 1)) if reachable else 0.0
    size = float(power_at(d, {**p, d.effect: d.effect_sides(p, direction)[0][1]}, n, alpha, direction))
    ex = d.explain(p, sizes, st)
    s = d.statistic_symbol
    lo_f, hi_f = float(lo), float(hi)
    data_lo = None if math.isnan(lo_f) else float(st.to_data(lo_f))
    data_hi = None if math.isnan(hi_f) else float(st.to_data(hi_f))
    stat_lo = None if math.isnan(lo_f) else lo_f
    stat_hi = None if math.isnan(hi_f) else hi_f
    int_sizes = tuple(int(round(float(x))) for x in sizes)
    eff = float(p[d.effect])
    std = float(d.standardized(p))
    a_side = f"α/2 = {fmt(alpha / 2)} in each tail" if direction == "two-sided" else f"α = {fmt(alpha)}"

    rejects = "inside" if d.custom_power is not None else "outside"

    def region(lo_v, hi_v, sym):
        if rejects == "inside":
            return f"reject H0 if {fmt(lo_v)} ≤ {sym} ≤ {fmt(hi_v)} (the interval is empty if lower > upper)"
        parts = []
        if lo_v is not None:
            parts.append(f"{sym} ≤ {fmt(lo_v)}")
        if hi_v is not None:
            parts.append(f"{sym} ≥ {fmt(hi_v)}")
        return "reject H0 if " + " or ".join(parts)

    prob_parts = []
    if stat_hi is not None:
        prob_parts.append(f"P({s} ≥ {fmt(stat_hi)} | H1) = {fmt(float(upper), 6)}")
    if stat_lo is not None:
        prob_parts.append(f"P({s} ≤ {fmt(stat_lo)} | H1) = {fmt(float(lower), 6)}")
    if rejects == "inside":   # the rejection region is an interval (equivalence)
        pw = float(power_at(d, p, n, alpha, direction))
        stat_lo, stat_hi, data_lo, data_hi = (float(v) for v in d.inside_region(p, sizes, alpha))
        prob_parts = [f"P({fmt(data_lo)} ≤ {d.estimate_label} ≤ {fmt(data_hi)} | H1), integrated over the "
                      f"estimated SE = {fmt(pw, 6)}"]
    groups = " + ".join(str(g) for g in int_sizes)
    working = [
        Step("design", f"{d.test}; n = {n} {d.n.unit}"
             + (f" (groups {groups} = {sum(int_sizes)} {d.n.total_unit})" if len(int_sizes) > 1 else ""),
             float(n)),
        Step("effect", f"{d.effect_label} = {fmt(eff)}, standardized {d.standardized_name} = {fmt(std)}", eff),
        Step("standard error", ex.se, float(st.se)),
        Step("null distribution", ex.null),
        Step("critical value (statistic)", f"{region(stat_lo, stat_hi, s)} ({a_side})",
             stat_hi if stat_hi is not None else stat_lo),
        Step("critical value (data units)", region(data_lo, data_hi, d.estimate_label),
             data_hi if data_hi is not None else data_lo),
        Step("noncentrality", ex.noncentrality, float(st.noncentrality)),
        Step("alternative distribution", ex.alt),
        Step("power", "; ".join(prob_parts) + (
            "; but the exact test cannot reject at these sizes (smallest reachable level below): power = 0"
            if not reachable else f"; power = sum = {fmt(pw, 6)}" if len(prob_parts) > 1 else ""), pw),
    ]
    working += [Step(label, text) for label, text in ex.extra]
    if level is not None:
        working.append(Step("smallest reachable level", (
            f"with these sizes the exact test's smallest p-value is {fmt(float(level), 4)}, "
            + (f"not above α = {fmt(alpha)}" if reachable else
               f"above α = {fmt(alpha)}: it can never reject, so power is 0 whatever the approximation gives")),
            float(level)))
    if d.conservative_at(p):
        working.append(Step("actual size", f"P(reject H0 | H0) = {fmt(size, 6)} ≤ α", size))
    adj = scenario.adjustments
    if adj["multiplicity"] != "none" and adj["comparisons"] > 1:
        rule = "α/m" if adj["multiplicity"] == "bonferroni" else "1 − (1 − α)^(1/m)"
        working.insert(2, Step("multiplicity", f"{adj['comparisons']} tests, {adj['multiplicity']}: each test at "
                               f"{rule} = {fmt(alpha, 6)} for familywise α = {fmt(solved.alpha)}", alpha))
    enrolled = adjust.enrolled(int_sizes, adj["dropout"])
    if adj["dropout"] > 0:
        working.append(Step("dropout allowance", f"expected dropout {fmt(adj['dropout'])}: enrol "
                            f"ceil(n/(1 − {fmt(adj['dropout'])})) per group = "
                            f"{' + '.join(str(e) for e in enrolled)} = {sum(enrolled)} to analyse "
                            f"{' + '.join(str(g) for g in int_sizes)} = {sum(int_sizes)}", float(sum(enrolled))))
    return Result(
        scenario=scenario, solved=solved, design_title=d.title, power=pw, n=int(n), n_unit=d.n.unit,
        group_sizes=int_sizes, total=int(sum(int_sizes)), total_unit=d.n.total_unit, alpha=float(solved.alpha),
        alpha_test=float(alpha), enrolled_sizes=enrolled, enrolled_total=int(sum(enrolled)),
        effect=eff, standardized_effect=std, standardized_name=d.standardized_name, se=float(st.se),
        noncentrality=float(st.noncentrality),
        critical={"statistic": (stat_lo, stat_hi), "data": (data_lo, data_hi)}, rejects=rejects, size=size,
        sample_size=ss, detectable=detectable, working=tuple(working), notes=tuple(d.notes) + (d.method,),
        messages=messages)

