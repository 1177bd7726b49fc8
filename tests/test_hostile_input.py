"""Hardening: a table of bad inputs across the core and the CLI, record fuzzing, numerical corners."""
from __future__ import annotations

import json
import math

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import powercore as pc
from powercore import cli
from powercore.engine import power_at
from powercore.record import MAX_RECORD_BYTES, make_record, read_record

BAD_NUMBERS = [float("nan"), float("inf"), -float("inf"), "3", None, True, [1], {"x": 1}, 1e308 * 10]
FAST = [d for d in pc.designs() if d.id != "correlation-exact"]


def _bad_param_cases():
    """Every parameter of every design, given each kind of bad value (and values past its hard bounds)."""
    cases = []
    for d in pc.designs():
        for spec in d.params:
            values = list(BAD_NUMBERS)
            if spec.kind == "real":
                if math.isfinite(spec.low):
                    values.append(spec.low - 1.0)
                    if not spec.low_closed:
                        values.append(spec.low)
                if math.isfinite(spec.high):
                    values.append(spec.high + 1.0)
            else:
                values = [1, 0, "yes", None, 0.5]
            for v in values:
                if not (v is None and spec.name == d.effect):  # an empty effect is allowed as the unknown
                    cases.append((d.id, spec.name, v))
    return cases


BAD_PARAMS = _bad_param_cases()


def test_the_table_holds_hundreds_of_bad_inputs():
    """The bad-input table below covers at least 200 cases."""
    assert len(BAD_PARAMS) + len(BAD_FIELDS) >= 200


@pytest.mark.parametrize("design, name, value", BAD_PARAMS)
def test_bad_parameter_values_are_named_errors(design, name, value):
    """Each bad parameter value raises InvalidParameter naming that parameter (never a crash or NaN)."""
    with pytest.raises(pc.InvalidParameter) as info:
        pc.Scenario(design, {name: value}, n=pc.get_design(design).n.default,
                    direction=pc.get_design(design).directions[0])
    assert info.value.field == name and name in str(info.value)


BAD_FIELDS = [
    ("alpha", v) for v in (0, 1, 1.5, -0.1, float("nan"), float("inf"), "0.05", None, True)
] + [
    ("target_power", v) for v in (0, 1, 1.2, -1, float("nan"), "0.8", None, 0.01)
] + [
    ("n", v) for v in (-3, 0, 1, 2.5, float("nan"), float("inf"), "30", True, 10**12, 1e300)
] + [
    ("direction", v) for v in ("both", "", 2, "Two-Sided", "lower-ish")
] + [
    ("find", v) for v in ("sample size", "", None, 3, "beta")
] + [
    ("design", v) for v in ("nope", "", None, 7, ["mean-z"])
] + [
    ("adjustments", {"dropout": 1.0}), ("adjustments", {"comparisons": -1}), ("adjustments", "none"),
    ("params", [1, 2]), ("params", "delta=3"),
]


@pytest.mark.parametrize("field, value", BAD_FIELDS)
def test_bad_scenario_fields_are_named_errors(field, value):
    """A bad top-level field raises a ValueError whose field names it."""
    data = {"design": "two-means-t", "n": 30, field: value}
    if field == "target_power":
        data["find"] = "n"   # a target at or below α is refused when solving for n
    with pytest.raises(ValueError) as info:
        pc.Scenario.from_dict(data)
    assert str(info.value.field).split(".")[0] in (field, "target_power")


@pytest.mark.parametrize("case", [
    {"design": "mean-z", "find": "n", "params": {"delta": 0.0}},                        # zero effect
    {"design": "mean-z", "find": "n", "direction": "upper", "params": {"delta": -1.0}},  # wrong direction
    {"design": "two-means-equivalence", "find": "n", "params": {"delta": 5.0, "margin": 5.0}},
    {"design": "cluster-means-size", "find": "n", "params": {"k": 3.0, "icc": 0.2}},
    {"design": "proportion-normal", "find": "effect", "n": 2, "target_power": 0.999, "alpha": 1e-6},
])
def test_unreachable_targets_are_named_no_solution(case):
    """Targets that cannot be met raise NoSolution with a field and a reason, never a bracket end."""
    with pytest.raises(pc.NoSolution) as info:
        pc.evaluate(pc.Scenario.from_dict(case))
    assert info.value.field in ("n", "effect") and info.value.reason


@pytest.mark.parametrize("argv", [
    ["compute", "--design", "mean-z", "--n", "-3"],
    ["compute", "--design", "mean-z", "--n", "20", "--alpha", "1.5"],
    ["compute", "--design", "mean-z", "--n", "20", "-p", "sd=0"],
    ["compute", "--design", "mean-z", "--n", "20", "-p", "nosuch=1"],
    ["compute", "--design", "mean-z", "--n", "20", "-p", "sd"],
    ["compute", "--json", "{not json"],
    ["compute", "--json", "[1, 2]"],
    ["compute", "--json", '{"assumptions": {"design": "mean-z"}, "schema_version": 9}'],
    ["compute", "--design", "mean-z", "--find", "n", "-p", "delta=0"],
    ["record", "--design", "mean-t", "--n", "1"],
    ["simulate", "--design", "mean-t", "--n", "20", "--reps", "3", "--quiet"],
])
def test_cli_bad_input_exits_2_with_a_message(argv, capsys):
    """The CLI answers bad input with exit status 2 and a message on stderr, never a traceback."""
    assert cli.main(argv) == 2
    err = capsys.readouterr().err
    assert err.startswith("powerlens:") and "Traceback" not in err


json_leaf = st.one_of(st.none(), st.booleans(), st.integers(-10**30, 10**30), st.floats(allow_nan=False),
                      st.text(max_size=20))
json_value = st.recursive(json_leaf, lambda kids: st.lists(kids, max_size=4) | st.dictionaries(
    st.text(max_size=10), kids, max_size=4), max_leaves=30)


@st.composite
def hostile_records(draw):
    """Records built from a valid one with a field replaced, removed or added, or raw JSON noise."""
    base = make_record(pc.Scenario("two-means-t", {"delta": 4.0, "sd": 9.0}, n=40), curves=False)
    kind = draw(st.sampled_from(["replace", "drop", "add", "noise", "assumption"]))
    rec = json.loads(json.dumps(base))
    if kind == "replace":
        rec[draw(st.sampled_from(sorted(rec)))] = draw(json_value)
    elif kind == "drop":
        rec.pop(draw(st.sampled_from(sorted(rec))))
    elif kind == "add":
        rec[draw(st.text(min_size=1, max_size=12))] = draw(json_value)
    elif kind == "assumption":
        target = draw(st.sampled_from(["alpha", "n", "find", "direction", "params", "design", "adjustments",
                                       "target_power"]))
        rec["assumptions"][target] = draw(json_value)
    else:
        return draw(st.text(max_size=200))
    return json.dumps(rec)


@settings(max_examples=2000, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(hostile_records())
def test_record_fuzzing_never_crashes(text):
    """Any mangled record is either read (and evaluates) or refused with a ValueError naming a field."""
    try:
        sc = read_record(text)
    except ValueError as e:
        assert getattr(e, "field", None)
        return
    try:
        pc.evaluate(sc)
    except pc.NoSolution as e:
        assert e.field


def test_nan_and_infinity_literals_and_near_limit_size():
    """NaN/Infinity literals are refused; a record just under the size limit is read; one over is refused."""
    with pytest.raises(pc.RecordError):
        read_record('{"design": "mean-z", "n": 20, "alpha": Infinity}')
    rec = make_record(pc.Scenario("mean-z", n=20), curves=False)
    rec["extras"] = {"pad": "x" * (MAX_RECORD_BYTES - len(json.dumps(rec)) - 100)}
    assert read_record(json.dumps(rec)) == pc.Scenario("mean-z", n=20)
    rec["extras"]["pad"] += "x" * 200
    with pytest.raises(pc.RecordError) as info:
        read_record(json.dumps(rec))
    assert info.value.field == "file"


@pytest.mark.parametrize("design", [d.id for d in FAST])
def test_no_nan_and_power_in_unit_interval_over_the_whole_domain(design):
    """Across each parameter's hard domain (extremes included), n from the minimum to 10^7 and α down to
    1e-10, power is never NaN and stays in [0, 1]."""
    d = pc.get_design(design)
    base = d.defaults()
    rng = np.random.default_rng(0)
    for spec in d.params:
        if spec.kind != "real":
            continue
        lo = spec.low if math.isfinite(spec.low) else -1e6
        hi = spec.high if math.isfinite(spec.high) else 1e6
        eps = 1e-9 * max(1.0, abs(hi - lo))
        for v in [lo + eps, hi - eps, *rng.uniform(lo, hi, 6)]:
            p = {**base, spec.name: float(v)}
            if spec.name in ("k", "u", "v", "df", "groups"):
                p[spec.name] = float(max(round(v), 2))
            try:
                pc.Scenario(design, p, n=d.n.default, direction=d.directions[0])
            except ValueError:
                continue  # outside a cross-parameter constraint, refused by name
            for n in (d.min_n(p), 50, 10**7):
                for a in (1e-10, 0.05, 0.5):
                    val = float(power_at(d, p, n, a, d.directions[0]))
                    assert 0.0 <= val <= 1.0, (spec.name, v, n, a, val)
