"""The effect helpers and the allocation and budget panel, without a browser.

Each converter is checked both ways against a direct formula (its source beside each value);
the Use buttons must set the state so that the page's power is powercore's for the new values;
bad input gets a message under its box and leaves the state alone.
"""
from __future__ import annotations

import html
import math

import numpy as np
import pytest
from scipy import stats

import powercore as pc
from app.allocation_view import AllocationPanel, is_two_group
from app.effect_helper import EffectHelper, converter_for
from app.explorer import Explorer
from app.state import ExplorerState
from app.text import num
from app_support import render
from powercore import effects


def explorer(design: str | None = None) -> Explorer:
    """A rendered page with the effect helper's card open, as the planner opens it to use it."""
    ex = Explorer()
    render(ex)
    ex.effect_helper.card.collapsed = False
    if design is not None:
        ex.state.design = design
        ex.refresh()
    return ex


def type_into(helper: EffectHelper, **values) -> None:
    for key, value in values.items():
        helper.fields[key].input.value = value


def press(button) -> None:
    button.clicks += 1


def message(helper_field) -> str:
    return html.unescape(helper_field.message.object) if helper_field.message.visible else ""


def expected_power(state: ExplorerState) -> float:
    return pc.evaluate(state.build_scenario()).power


# ---- which designs have a helper ---------------------------------------------------------------
@pytest.mark.parametrize("design, kind", [
    ("two-means-t", "MeansToD"), ("paired-t", "MeansToD"), ("mean-t", "MeansToD"),
    ("two-means-welch", "MeansToD"), ("two-means-noninferiority", "MeansToD"),
    ("wilcoxon-mann-whitney", "MeansToD"), ("wilcoxon-signed-rank", "MeansToD"),
    ("two-proportions", "ProportionsToH"), ("proportion-exact", "ProportionsToH"),
    ("two-proportions-superiority", "ProportionsToH"),
    ("chisquare-gof", "CellsToW"), ("chisquare-independence", "CellsToW"), ("anova-oneway", "MeansToF"),
    ("regression-r2", "R2ToF2"), ("regression-r2-change", "R2ToF2"),
    ("logrank-events", "MediansToHR"), ("logrank-subjects", "MediansToHR"),
    ("correlation-fisher", None), ("mcnemar", None), ("two-rates", None),
])
def test_each_design_gets_the_converter_for_its_effect(design, kind):
    """The helper offers the conversion that fits the design's effect, and none (no card) otherwise."""
    ex = explorer(design)
    conv = converter_for(pc.get_design(design))
    assert (conv.__name__ if conv else None) == kind
    assert ex.effect_helper.card.visible == (kind is not None)


# ---- two means and an SD ↔ d -------------------------------------------------------------------
def test_means_to_d_both_ways_and_use():
    """Means 100 and 108 with SD 16 give d = 0.5 (hand arithmetic; Cohen's medium d, Cohen 1988 ch. 2, from memory)."""
    ex = explorer()
    h, st = ex.effect_helper, ex.state
    type_into(h, mean1=100.0, mean2=108.0, sd=16.0)
    assert "d = (108 − 100)/16 = 0.5" in h.readout.object
    before = st.snapshot.result.power
    press(h.use)
    assert st.values["delta"] == 8.0 and st.values["sd"] == 16.0
    assert st.standardized() == pytest.approx(0.5, abs=1e-12)
    assert st.snapshot.result.power == pytest.approx(expected_power(st), rel=1e-12) != before
    # back: the current d = 0.5 on the typed scale is mean 2 = 100 + 0.5 × 16 = 108 (hand arithmetic)
    assert "mean 2 = 100 + 0.5 × 16 = 108" in h.readout.object


def test_means_to_d_with_two_sds_sets_the_standardized_effect():
    """For Welch's test the helper's d is kept: δ becomes d·√((σ1² + σ2²)/2) (the design's standardizer)."""
    ex = explorer("two-means-welch")
    st = ex.state
    st.values = {**st.values, "sd1": 6.0, "sd2": 8.0}
    type_into(ex.effect_helper, mean1=0.0, mean2=5.0, sd=10.0)
    press(ex.effect_helper.use)
    assert st.values["delta"] == pytest.approx(0.5 * math.sqrt((36 + 64) / 2), rel=1e-12)  # hand arithmetic
    assert st.values["sd1"] == 6.0 and st.values["sd2"] == 8.0


def test_paired_helper_sets_the_sd_of_the_differences():
    """For the signed-rank design the SD typed is that of the differences, and d_z = 4/8 = 0.5 (hand arithmetic)."""
    ex = explorer("wilcoxon-signed-rank")
    type_into(ex.effect_helper, mean1=20.0, mean2=24.0, sd=8.0)
    press(ex.effect_helper.use)
    assert ex.state.values["delta"] == 4.0 and ex.state.values["sd_diff"] == 8.0
    assert ex.state.standardized() == pytest.approx(0.5)
    assert ex.state.snapshot.result.power == pytest.approx(expected_power(ex.state), rel=1e-12)


# ---- two proportions ↔ h -------------------------------------------------------------------------
def test_proportions_to_h_both_ways_and_use():
    """p1 = 0.5, p2 = 0.65: h = 2·asin√0.65 − 2·asin√0.5 (direct computation with math.asin)."""
    ex = explorer("two-proportions")
    h, st = ex.effect_helper, ex.state
    type_into(h, p1=0.5, p2=0.65)
    want = 2 * math.asin(math.sqrt(0.65)) - 2 * math.asin(math.sqrt(0.5))   # direct formula, ≈ 0.3047
    assert f"= {num(want, 4)}" in h.readout.object
    press(h.use)
    assert st.values["p1"] == 0.5 and st.values["delta"] == pytest.approx(0.15, abs=1e-12)
    assert st.standardized() == pytest.approx(want, rel=1e-12)
    assert st.snapshot.result.power == pytest.approx(expected_power(st), rel=1e-12)
    # back: the proportion at h from 0.5 is sin²(h/2 + asin√0.5) (the same formula solved for p2)
    back = math.sin(want / 2 + math.asin(math.sqrt(0.5))) ** 2
    assert f"p2 = {num(back, 4)} from p1 = 0.5" in h.readout.object


# ---- cell proportions ↔ w ------------------------------------------------------------------------
def test_cells_to_w_against_scipy_chisquare_and_use():
    """w² is Pearson's χ² per observation: scipy.stats.chisquare(N·p1, N·p0).statistic / N."""
    ex = explorer("chisquare-gof")
    h, st = ex.effect_helper, ex.state
    p0, p1 = [0.2, 0.3, 0.5], [0.3, 0.3, 0.4]
    type_into(h, p0="0.2, 0.3, 0.5", p1="0.3; 0.3 0.4")
    ref = math.sqrt(stats.chisquare(1000 * np.array(p1), 1000 * np.array(p0)).statistic / 1000)   # scipy 1.17
    assert f"w = {num(ref, 4)} over 3 cells" in h.readout.object
    press(h.use)
    assert st.values["delta"] == pytest.approx(ref, rel=1e-12) and st.values["df"] == 2.0
    assert st.snapshot.result.power == pytest.approx(expected_power(st), rel=1e-12)
    # back: the cells at the current w on the same line from p0 have that w again (w_from_proportions)
    cells = effects.proportions_at_w(p0, p1, 0.2)
    assert effects.w_from_proportions(p0, cells) == pytest.approx(0.2, rel=1e-12)


# ---- group means ↔ f -----------------------------------------------------------------------------
def test_means_to_f_against_numpy_and_use():
    """f = σ_m/σ with σ_m the SD of the means, divisor k (Cohen 1988 §8.2): numpy std, ddof = 0."""
    ex = explorer("anova-oneway")
    h, st = ex.effect_helper, ex.state
    type_into(h, means="10, 12, 15, 11", sd=8.0)
    ref = float(np.std([10, 12, 15, 11])) / 8.0   # numpy, direct formula
    assert f"= {num(ref, 4)}" in h.readout.object
    press(h.use)
    assert st.values["k"] == 4.0 and st.values["sd"] == 8.0
    assert st.standardized() == pytest.approx(ref, rel=1e-12)
    assert st.snapshot.result.power == pytest.approx(expected_power(st), rel=1e-12)
    scaled = effects.means_at_f([10, 12, 15, 11], 8.0, 0.25)
    assert float(np.std(scaled)) / 8.0 == pytest.approx(0.25, rel=1e-12)   # numpy, back direction
    assert np.mean(scaled) == pytest.approx(12.0)                          # grand mean kept (hand arithmetic)


# ---- R² ↔ f² -----------------------------------------------------------------------------------
def test_r2_to_f2_matches_cohens_conventions_and_use():
    """R² = 0.13 gives f² = 0.13/0.87 ≈ 0.15 (Cohen 1988 §9.2.2: medium R² 0.13 ↔ f² 0.15, from memory)."""
    ex = explorer("regression-r2")
    h, st = ex.effect_helper, ex.state
    type_into(h, r2_full=0.13)
    assert "f² = 0.13/(1 − 0.13) = 0.1494" in h.readout.object   # 0.13/0.87 = 0.14943 (hand arithmetic)
    assert 0.13 / 0.87 == pytest.approx(0.15, abs=0.001)
    type_into(h, r2_full=0.26)
    press(h.use)
    assert st.values["delta"] == 0.26
    assert st.standardized() == pytest.approx(0.26 / 0.74, rel=1e-12)   # Cohen's large: f² 0.35, from memory
    assert st.snapshot.result.power == pytest.approx(expected_power(st), rel=1e-12)
    assert f"R² = f²/(1 + f²) = {num(0.26, 4)}" in h.readout.object


def test_r2_change_to_f2_and_use():
    """Full 0.30 over reduced 0.20: f² = 0.10/0.70 (Cohen 1988 §9.2, direct formula)."""
    ex = explorer("regression-r2-change")
    h, st = ex.effect_helper, ex.state
    type_into(h, r2_full=0.30, r2_reduced=0.20)
    assert f"= {num(0.1 / 0.7, 4)}" in h.readout.object
    press(h.use)
    assert st.values["delta"] == pytest.approx(0.1) and st.values["r2_base"] == 0.2
    assert st.standardized() == pytest.approx(0.1 / 0.7, rel=1e-12)
    assert effects.r2_from_f2(0.1 / 0.7, 0.2) == pytest.approx(0.3, rel=1e-12)   # back direction


# ---- medians ↔ hazard ratio --------------------------------------------------------------------
def test_medians_to_hr_is_the_exponential_hazard_ratio_and_use():
    """Medians 12 (control) and 18 (new): HR = (ln 2/18)/(ln 2/12) = 2/3 (exponential hazards, direct formula)."""
    ex = explorer("logrank-subjects")
    h, st = ex.effect_helper, ex.state
    type_into(h, median_control=12.0, median_new=18.0)
    ref = (math.log(2) / 18) / (math.log(2) / 12)
    assert f"HR = 12/18 = {num(ref, 4)}" in h.readout.object
    press(h.use)
    assert st.values["hr"] == pytest.approx(ref, rel=1e-12) and st.values["median_control"] == 12.0
    assert st.snapshot.result.power == pytest.approx(expected_power(st), rel=1e-12)
    assert "median new = 12/0.6667 = 18" in h.readout.object   # back: 12/(2/3) = 18 (hand arithmetic)


# ---- bad input -------------------------------------------------------------------------------
@pytest.mark.parametrize("design, values, field, words", [
    ("two-means-t", {"mean2": None}, "mean2", "must be a number"),
    ("two-means-t", {"sd": 0.0}, "sd", "greater than 0"),
    ("two-means-t", {"sd": -2.0}, "sd", "greater than 0"),
    ("two-proportions", {"p2": 1.2}, "p2", "between 0 and 1"),
    ("chisquare-gof", {"p1": "0.5, 0.6"}, "p1", "add up to 1.1"),
    ("chisquare-gof", {"p0": "0.5, abc"}, "p0", "'abc' is not a number"),
    ("chisquare-gof", {"p0": "0.5, 0.5", "p1": "0.2, 0.3, 0.5"}, "p1", "3 cells"),
    ("anova-oneway", {"means": "12"}, "means", "at least 2"),
    ("anova-oneway", {"sd": -1.0}, "sd", "greater than 0"),
    ("regression-r2", {"r2_full": 1.0}, "r2_full", "[0, 1)"),
    ("regression-r2", {"r2_full": -0.1}, "r2_full", "[0, 1)"),
    ("regression-r2-change", {"r2_full": 0.2, "r2_reduced": 0.25}, "r2_reduced", "below the full"),
    ("logrank-events", {"median_new": 0.0}, "median_new", "greater than 0"),
])
def test_bad_input_messages_at_the_field_and_leaves_the_state(design, values, field, words):
    """Bad helper input shows a message under that box, disables Use, and a press changes nothing."""
    ex = explorer(design)
    h, st = ex.effect_helper, ex.state
    before = (dict(st.values), st.snapshot.result.power)
    type_into(h, **values)
    assert words in message(h.fields[field]), message(h.fields[field])
    assert h.use.disabled
    assert h.apply() is False
    assert (dict(st.values), st.snapshot.result.power) == before
    assert all(not message(f) for k, f in h.fields.items() if k != field)


def test_a_value_the_design_refuses_is_caught_before_the_state():
    """102 group means: the ANOVA design allows at most 100 groups, so the message is at the means box."""
    ex = explorer("anova-oneway")
    h, st = ex.effect_helper, ex.state
    before = (dict(st.values), st.snapshot.result.power)
    type_into(h, means=", ".join(["1", "2"] * 51), sd=5.0)
    assert not h.use.disabled   # the helper itself can convert them
    assert h.apply() is False
    assert "refuses" in message(h.fields["means"]) and "k must be in" in message(h.fields["means"])
    assert (dict(st.values), st.snapshot.result.power) == before


def test_helper_follows_a_design_change():
    """Changing the design rebuilds the helper's boxes; a design without one hides the card."""
    ex = explorer()
    assert set(ex.effect_helper.fields) == {"mean1", "mean2", "sd"}
    ex.state.design = "chisquare-independence"
    ex.refresh()
    assert set(ex.effect_helper.fields) == {"p0", "p1"} and ex.effect_helper.card.visible
    ex.state.design = "correlation-fisher"
    ex.refresh()
    assert not ex.effect_helper.card.visible


# ---- allocation and budget ---------------------------------------------------------------------
def open_allocation(ex: Explorer) -> AllocationPanel:
    ex.allocation.card.collapsed = False
    return ex.allocation


def brute_force_best(scenario: pc.Scenario, total: float, costs=(1.0, 1.0), budget=None):
    """The ratio with the highest power over a fine grid (a direct scan, no optimiser)."""
    d = pc.get_design(scenario.design)
    ratios = np.geomspace(0.05, 20, 4001)
    best_r, best_p = None, -1.0
    for r in ratios:
        n1 = total / (1 + r) if budget is None else budget / (costs[0] + r * costs[1])
        pw = float(pc.power_at(d, {**scenario.params, "ratio": r}, n1, scenario.alpha, scenario.direction,
                               integer=False))
        if pw > best_p:
            best_r, best_p = r, pw
    return best_r, best_p


def test_panel_only_for_two_group_designs():
    """The allocation panel shows for designs with an allocation ratio and hides for the rest."""
    ex = explorer()
    for d in pc.designs():
        ex.state.design = d.id
        ex.refresh()
        assert ex.allocation.card.visible == is_two_group(d), d.id


def test_best_ratio_matches_a_brute_force_scan_and_use_sets_it():
    """Welch, σ1 = 5, σ2 = 15: the panel's best ratio for the same total equals a grid scan's (within its step)."""
    ex = explorer("two-means-welch")
    st = ex.state
    st.values = {**st.values, "delta": 4.0, "sd1": 5.0, "sd2": 15.0, "ratio": 1.0}
    st.n = 40
    ex.refresh()
    panel = open_allocation(ex)
    sc = st.snapshot.result.solved
    r_scan, p_scan = brute_force_best(sc, total=80.0)
    assert panel.best.ratio == pytest.approx(r_scan, rel=3e-3)
    assert panel.best.power >= p_scan - 1e-9
    assert panel.best.ratio == pytest.approx(3.0, rel=0.05)   # Neyman: σ2/σ1 = 3 (common practice, no source)
    before = st.snapshot.result.power
    press(panel.use_ratio)
    assert st.values["ratio"] == pytest.approx(panel.best.ratio, rel=1e-3)
    assert st.n == round(80 / (1 + st.values["ratio"]))   # n1 keeps the total of 80
    assert st.snapshot.result.power > before
    assert st.snapshot.result.power == pytest.approx(expected_power(st), rel=1e-12)


def test_best_ratio_under_unequal_costs_matches_a_scan():
    """Costs 1 and 4 per subject, the same spending: the panel's ratio equals a grid scan's (within its step)."""
    ex = explorer()
    panel = open_allocation(ex)
    panel.cost2.input.value = 4.0
    sc = ex.state.snapshot.result.solved
    spend = 1.0 * 60 + 4.0 * 60
    r_scan, p_scan = brute_force_best(sc, total=None, costs=(1.0, 4.0), budget=spend)
    assert panel.best.ratio == pytest.approx(r_scan, rel=3e-3) and panel.best.power >= p_scan - 1e-9
    assert panel.best.ratio == pytest.approx(0.5, rel=0.05)   # √(c1/c2) = 0.5 for equal SDs (Neyman, common practice)


def test_budget_plan_stays_within_budget_and_use_sets_the_sizes():
    """Budget 500 at costs 1 and 2: the plan's cost fits, one more subject in group 1 would not; Use sets n."""
    ex = explorer()
    st = ex.state
    panel = open_allocation(ex)
    panel.cost2.input.value = 2.0
    panel.budget.input.value = 500.0
    plan = panel.plan
    assert plan.cost <= 500.0 and plan.cost == 1.0 * plan.n1 + 2.0 * plan.n2
    d = st.current_design()
    n1_, n2_ = d.group_sizes(dict(st.snapshot.scenario.params), plan.n1 + 1, integer=True)
    assert 1.0 * float(n1_) + 2.0 * float(n2_) > 500.0
    press(panel.use_sizes)
    assert st.n == plan.n1
    assert st.snapshot.result.power == pytest.approx(plan.power, rel=1e-12)
    assert st.snapshot.result.power == pytest.approx(expected_power(st), rel=1e-12)


def test_use_sizes_when_finding_n_switches_to_power():
    """When the page finds n, using the budget's sizes makes it find power at those sizes."""
    ex = explorer()
    st = ex.state
    st.find = "n"
    ex.refresh()
    panel = open_allocation(ex)
    panel.budget.input.value = 300.0
    press(panel.use_sizes)
    assert st.find == "power" and st.n == panel.plan.n1


@pytest.mark.parametrize("box, value, words", [
    ("cost1", 0.0, "greater than 0"), ("cost2", -1.0, "greater than 0"), ("cost1", None, "must be a number"),
    ("budget", -5.0, "greater than 0"), ("budget", 3.0, "fewer than the design's minimum"),
])
def test_allocation_bad_input_messages_at_the_field(box, value, words):
    """Bad costs or budgets show a message under their box; Use is disabled and the state stays."""
    ex = explorer()
    st = ex.state
    panel = open_allocation(ex)
    before = (dict(st.values), st.n)
    getattr(panel, box).input.value = value
    shown = getattr(panel, box).message
    assert shown.visible and words in html.unescape(shown.object), shown.object
    assert panel.use_sizes.disabled and panel.apply_sizes() is False
    assert (dict(st.values), st.n) == before


def test_last_good_readouts_stay_marked_while_a_box_is_bad():
    """A bad box keeps the last good conversion and budget plan on view, marked as the last good values."""
    ex = explorer()
    h = ex.effect_helper
    type_into(h, mean1=100.0, mean2=108.0, sd=16.0)
    type_into(h, sd=0.0)
    assert "Last good values" in h.readout.object and "= 0.5" in h.readout.object
    panel = open_allocation(ex)
    panel.budget.input.value = 400.0
    shown = panel.plan_out.object
    panel.budget.input.value = -1.0
    assert "Last good values" in panel.plan_out.object and shown in panel.plan_out.object
    panel.budget.input.value = 400.0
    assert "Last good values" not in panel.plan_out.object


def test_use_while_finding_the_effect_switches_to_power():
    """An effect typed into the helper is an input: the page then finds power at it."""
    ex = explorer()
    st = ex.state
    st.find = "effect"
    ex.refresh()
    type_into(ex.effect_helper, mean1=0.0, mean2=25.0, sd=45.0)
    press(ex.effect_helper.use)
    assert st.find == "power" and st.values["delta"] == 25.0
    assert st.snapshot.result.power == pytest.approx(expected_power(st), rel=1e-12)


def test_closed_card_catches_up_when_opened():
    """A closed helper card does not follow every change (it cost a page layout per change); opening it
    shows the current effect."""
    ex = Explorer()
    render(ex)
    h = ex.effect_helper
    before = h.readout.object
    ex.state.set_value("delta", 27.0)
    ex.refresh()
    assert h.readout.object == before                    # closed: left alone
    h.card.collapsed = False
    d = ex.state.standardized()
    assert f"current d = {num(d, 4)}" in h.readout.object   # open: up to date
