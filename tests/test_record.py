"""The assumptions record: building, reading back, verifying, and refusing bad input by field."""
from __future__ import annotations

import json

import jsonschema
import pytest
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

import powercore as pc
from powercore.record import MAX_RECORD_BYTES, make_record, read_record, verify_record
from powercore.schema import RECORD_SCHEMA_PATH, record_schema, scenario_schema

FAST = [d.id for d in pc.designs() if d.id != "correlation-exact"]  # the exact design integrates numerically


@st.composite
def scenarios(draw):
    """Valid scenarios of the fast designs, drawn over each parameter's slider range."""
    d = pc.get_design(draw(st.sampled_from(FAST)))
    params = {}
    for spec in d.params:
        if spec.kind == "bool":
            params[spec.name] = draw(st.booleans())
        elif spec.kind == "choice":
            params[spec.name] = draw(st.sampled_from(spec.choices))
        else:
            params[spec.name] = draw(st.floats(*spec.soft, allow_nan=False))
    find = draw(st.sampled_from(["power", "n", "effect", "alpha"]))
    data = {"design": d.id, "params": params, "find": find,
            "direction": draw(st.sampled_from(["two-sided", "upper", "lower"])),
            "alpha": draw(st.sampled_from([0.001, 0.01, 0.05, 0.1])),
            "target_power": draw(st.sampled_from([0.8, 0.9, 0.95])),
            "n": draw(st.integers(*d.n.soft)),
            "adjustments": {"dropout": draw(st.sampled_from([0.0, 0.1, 0.33])),
                            "comparisons": draw(st.integers(1, 5)),
                            "multiplicity": draw(st.sampled_from(["none", "bonferroni", "sidak"]))}}
    try:
        sc = pc.Scenario.from_dict(data)
        pc.evaluate(sc)
    except ValueError:
        assume(False)
    return sc


def _validate(record):
    from referencing import Registry, Resource
    reg = Registry().with_resource(scenario_schema()["$id"], Resource.from_contents(scenario_schema()))
    jsonschema.Draft202012Validator(record_schema(), registry=reg).validate(record)


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.filter_too_much,
                                                                 HealthCheck.too_slow])
@given(scenarios())
def test_record_round_trip_is_lossless(sc):
    """scenario → record → JSON → scenario is identical, and recomputing gives the stored numbers."""
    record = make_record(sc, curves=False)
    back = json.loads(json.dumps(record))
    assert read_record(back) == sc
    assert verify_record(back) == {}


def test_committed_record_schema_is_generated():
    """The record schema file is what `python -m powercore.schema` writes."""
    assert json.loads(RECORD_SCHEMA_PATH.read_text(encoding="utf-8")) == record_schema()


@pytest.mark.parametrize("design", [d.id for d in pc.designs()])
def test_every_design_makes_a_schema_valid_record(design):
    """Each design's record, curves included, validates against the record schema."""
    d = pc.get_design(design)
    record = make_record(pc.Scenario(design, n=d.n.default))
    _validate(json.loads(json.dumps(record)))
    assert record["curves"]["power_vs_n"]["x"][0] == d.min_n(d.defaults())


def test_record_carries_versions_cautions_and_justification():
    """The record names the software versions, carries the cautions and a justification with its n."""
    rec = make_record(pc.Scenario("two-means-t", {"delta": 4.0, "sd": 9.0}, find="n", target_power=0.9))
    assert set(rec["software"]) == {"powerlens", "python", "numpy", "scipy"}
    assert any("statistician" in c for c in rec["cautions"])
    assert any("observed power" in c for c in rec["cautions"])
    n, total = rec["results"]["n"], rec["results"]["total"]
    assert f"{n} in group 1" in rec["justification"] and f"{total} subjects" in rec["justification"]
    assert rec["software"]["powerlens"] in rec["justification"]


@pytest.mark.parametrize("how, m, expected", [
    ("bonferroni", 4, 0.05 / 4),                        # Bonferroni: α/m, common practice, no source
    ("sidak", 4, 1 - (1 - 0.05) ** (1 / 4)),            # Šidák: 1 − (1 − α)^(1/m), common practice, no source
    ("none", 4, 0.05),
])
def test_multiplicity_sets_the_per_test_level(how, m, expected):
    """Each test runs at the adjusted level, and the result reports both levels."""
    r = pc.evaluate(pc.Scenario("mean-z", n=30, adjustments={"comparisons": m, "multiplicity": how}))
    assert r.alpha == 0.05 and r.alpha_test == pytest.approx(expected, rel=1e-12)
    unadjusted = pc.evaluate(pc.Scenario("mean-z", n=30, alpha=expected))
    assert r.power == pytest.approx(unadjusted.power, rel=1e-12)


def test_dropout_enrols_each_group_rounded_up():
    """Enrolment is ceil(n/(1 − dropout)) per group, and the record shows analysed and enrolled n."""
    sc = pc.Scenario("two-means-t", {"delta": 4.0, "sd": 9.0, "ratio": 1.5}, n=41, adjustments={"dropout": 0.2})
    r = pc.evaluate(sc)
    assert r.group_sizes == (41, 62)                     # 1.5 × 41 = 61.5, rounded up
    assert r.enrolled_sizes == (52, 78)                  # ceil(41/0.8) = 52, ceil(62/0.8) = 78
    rec = make_record(sc, curves=False)
    assert rec["results"]["enrolled_total"] == 130 and rec["results"]["total"] == 103
    assert "20% dropout" in rec["justification"]


@pytest.mark.parametrize("adj, field", [
    ({"dropout": 1.0}, "adjustments.dropout"),
    ({"dropout": -0.1}, "adjustments.dropout"),
    ({"comparisons": 0}, "adjustments.comparisons"),
    ({"comparisons": 2.5}, "adjustments.comparisons"),
    ({"comparisons": 3}, "adjustments.multiplicity"),     # several tests, but no word on how α is split
    ({"multiplicity": "holm-ish"}, "adjustments.multiplicity"),
    ({"attrition": 0.1}, "adjustments.attrition"),
])
def test_bad_adjustments_name_their_field(adj, field):
    """A bad adjustment is refused with the adjustment's own field name."""
    with pytest.raises(pc.InvalidParameter) as info:
        pc.Scenario("mean-z", n=20, adjustments=adj)
    assert info.value.field == field


def test_tampered_record_is_caught_by_verify():
    """A record whose stored power was edited no longer verifies, and the field is named."""
    rec = make_record(pc.Scenario("mean-z", n=20), curves=False)
    rec["results"]["power"] = 0.99
    assert "power" in verify_record(rec)


@pytest.mark.parametrize("text, field", [
    ("{", "json"),
    ("[1, 2]", "record"),
    ('{"assumptions": {"design": "mean-z", "alpha": NaN}, "schema_version": 1}', "json"),
    ('{"assumptions": {"design": "mean-z", "n": Infinity}, "schema_version": 1}', "json"),
    ('{"assumptions": {"design": "mean-z", "n": "x"}, "schema_version": 1}', "assumptions.n"),
    ('{"assumptions": {"design": "mean-z", "n": 20}, "schema_version": 2}', "schema_version"),
    ('{"assumptions": {"design": "mean-z", "n": 20}, "schema_version": "1"}', "schema_version"),
    ('{"assumptions": {"design": "mean-z", "n": 20}, "schema_version": 1, "colour": 3}', "colour"),
    ('{"assumptions": {"design": "mean-z", "n": 20, "extra": 1}, "schema_version": 1}', "assumptions.extra"),
    ('{"assumptions": {"design": "mean-z", "params": {"sd": -1}, "n": 20}, "schema_version": 1}',
     "assumptions.sd"),
    ('{"assumptions": [], "schema_version": 1}', "assumptions"),
    ('{"assumptions": {"design": "mean-z", "n": 1e400}, "schema_version": 1}', "assumptions.n"),
    ("[" * 3000 + "]" * 3000, "json"),
    ('{"a":' * 20 + "1" + "}" * 20, "record"),
])
def test_malformed_records_name_the_field(text, field):
    """Each malformed record is refused with a RecordError naming the field at fault."""
    with pytest.raises(pc.RecordError) as info:
        read_record(text)
    assert info.value.field == field


def test_oversized_record_is_refused_before_parsing():
    """A file larger than the limit is refused by size, whatever it holds."""
    blob = b'{"assumptions": {}, "pad": "' + b"x" * (MAX_RECORD_BYTES + 10) + b'"}'
    with pytest.raises(pc.RecordError) as info:
        read_record(blob)
    assert info.value.field == "file"


# ---- pinned scenarios and the basis of the assumed effect ----------------------------------------
from powercore.record import MAX_PINNED, Pinned, read_basis, read_pinned  # noqa: E402

BASE = pc.Scenario("two-means-t", {"delta": 20.0, "sd": 45.0}, n=60)


def _pinned_record(**kw):
    pins = [("A", BASE, "min"), (" B ", BASE.replace(n=90), "", "pilot"),
            ("C", pc.Scenario("two-proportions", {"p1": 0.3, "delta": 0.1}, find="n", n=None))]
    return json.loads(json.dumps(make_record(BASE, curves=False, pinned=pins, **kw)))


def test_pinned_scenarios_round_trip_and_verify():
    """Pinned entries carry name, assumptions, key results and justification, and read back as scenarios."""
    rec = _pinned_record(basis="relevance")
    _validate(rec)
    assert read_record(rec) == BASE and read_basis(rec) == "relevance"
    pins = read_pinned(rec)
    assert [(p.name, p.scenario, p.unit_name, p.basis) for p in pins] == [
        ("A", BASE, "min", None), ("B", BASE.replace(n=90), "", "pilot"),
        ("C", pc.Scenario("two-proportions", {"p1": 0.3, "delta": 0.1}, find="n", n=None), "", None)]
    entry = rec["pinned"][1]
    fresh = pc.evaluate(BASE.replace(n=90))
    assert entry["results"]["power"] == fresh.power and entry["results"]["total"] == 180
    assert "180 subjects in both groups" in entry["justification"] and "pilot study" in entry["justification"]
    assert verify_record(rec) == {}
    rec["pinned"][2]["results"]["n"] = 3
    assert set(verify_record(rec)) == {"pinned[2].results.n"}


def test_record_without_pins_has_no_pinned_field():
    """A record made without pins or basis has neither key (older readers see the same record)."""
    rec = make_record(BASE, curves=False)
    assert "pinned" not in rec and "basis" not in rec and read_pinned(rec) == []


def _bad(mutate):
    rec = _pinned_record()
    mutate(rec)
    return rec


@pytest.mark.parametrize("mutate, field", [
    (lambda r: r["pinned"][1]["assumptions"].__setitem__("alpha", 1.5), "pinned[1].assumptions.alpha"),
    (lambda r: r["pinned"][2]["assumptions"]["params"].__setitem__("p1", -0.2), "pinned[2].assumptions.p1"),
    (lambda r: r["pinned"][0]["assumptions"].__setitem__("design", "no-such"), "pinned[0].assumptions.design"),
    (lambda r: r["pinned"][0].__setitem__("name", "   "), "pinned[0].name"),
    (lambda r: r["pinned"][0].__setitem__("name", "x" * 41), "pinned[0].name"),
    (lambda r: r["pinned"][1].__setitem__("name", "A"), "pinned[1].name"),
    (lambda r: r["pinned"][1].__setitem__("name", 7), "pinned[1].name"),
    (lambda r: r["pinned"][1].__setitem__("colour", "red"), "pinned[1].colour"),
    (lambda r: r["pinned"][2].pop("assumptions"), "pinned[2].assumptions"),
    (lambda r: r["pinned"][2].__setitem__("basis", "hunch"), "pinned[2].basis"),
    (lambda r: r["pinned"][2].__setitem__("unit_name", ["min"]), "pinned[2].unit_name"),
    (lambda r: r["pinned"].__setitem__(1, "B"), "pinned[1]"),
    (lambda r: r.__setitem__("pinned", {"A": 1}), "pinned"),
    (lambda r: r["pinned"].extend([r["pinned"][0]] * MAX_PINNED), "pinned[3].name"),
])
def test_bad_pinned_entries_name_their_field(mutate, field):
    """Each bad pinned entry is refused by a RecordError naming it; the main scenario still reads."""
    rec = _bad(mutate)
    with pytest.raises(pc.RecordError) as info:
        read_pinned(rec)
    assert info.value.field == field
    assert read_record(rec) == BASE
    errors = []
    good = read_pinned(rec, on_error=errors.append)
    assert field in [e.field for e in errors]
    assert len(good) + len(errors) >= min(3, len(rec["pinned"]) if isinstance(rec["pinned"], list) else 0)


def test_more_than_six_pins_are_refused_past_the_sixth():
    """Entries past MAX_PINNED are reported, the first six come back; make_record refuses a seventh."""
    rec = _pinned_record()
    rec["pinned"] = [{**rec["pinned"][0], "name": f"p{i}"} for i in range(MAX_PINNED + 1)]
    errors = []
    assert [p.name for p in read_pinned(rec, on_error=errors.append)] == [f"p{i}" for i in range(MAX_PINNED)]
    assert [e.field for e in errors] == [f"pinned[{MAX_PINNED}]"]
    with pytest.raises(pc.RecordError) as info:
        make_record(BASE, curves=False, pinned=[(f"p{i}", BASE) for i in range(MAX_PINNED + 1)])
    assert info.value.field == "pinned"
    with pytest.raises(pc.RecordError) as info:
        make_record(BASE, curves=False, pinned=[("A", BASE), ("A ", BASE)])
    assert info.value.field == "pinned[1].name"


def test_basis_goes_into_record_cautions_and_justification():
    """The observed-result basis puts the observed-power warning into the cautions and the justification."""
    rec = make_record(BASE, curves=False, basis="observed")
    assert rec["basis"] == "observed"
    assert any("Hoenig and Heisey 2001" in c and "finished study" in c for c in rec["cautions"])
    assert "restatement of the p-value" in rec["justification"]
    assert "pilot study" in make_record(BASE, curves=False, basis="pilot")["justification"]
    with pytest.raises(pc.RecordError) as info:
        make_record(BASE, curves=False, basis="hunch")
    assert info.value.field == "basis"
    bad = json.loads(json.dumps(rec))
    bad["basis"] = "hunch"
    with pytest.raises(pc.RecordError) as info:
        read_record(bad)
    assert info.value.field == "basis"


@pytest.mark.parametrize("design, note", [("chisquare-gof", True), ("regression-r2", True),
                                          ("two-means-t", False), ("two-proportions", False)])
def test_delta2_note_for_designs_whose_effect_is_standardized(design, note):
    """Designs whose effect is itself standardized get the DELTA2 note in cautions and justification."""
    d = pc.get_design(design)
    rec = make_record(pc.Scenario(design, n=d.n.default), curves=False)
    assert ("DELTA2" in rec["justification"]) is note
    assert any("DELTA2" in c for c in rec["cautions"]) is note


def test_pinned_record_stays_under_the_size_limit_and_depth():
    """Six pins with full names stay far below the size limit and within the nesting limit."""
    pins = [("x" * 39 + str(i), BASE.replace(n=20 + i), "min", "published") for i in range(MAX_PINNED)]
    text = json.dumps(make_record(BASE, pinned=pins))
    assert len(text) < MAX_RECORD_BYTES / 4
    assert len(read_pinned(text)) == MAX_PINNED


def test_unit_name_goes_into_the_justification_and_extras():
    """The planner's unit follows the effect and the SD in the paragraph; without one, "(data units)"."""
    sc = pc.Scenario("two-means-t", {"delta": 20.0, "sd": 45.0}, n=60)
    rec = make_record(sc, unit_name="min", curves=False)
    assert rec["extras"] == {"unit_name": "min"}
    assert "a difference of 20 min" in rec["justification"] and "σ of 45 min" in rec["justification"]
    plain = make_record(sc, curves=False)
    assert "extras" not in plain and "a difference of 20 (data units)" in plain["justification"]
    assert read_record(json.dumps(rec)) == sc
