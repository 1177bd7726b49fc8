"""The choice kind of parameter, and the rank designs' parent distribution that uses it."""
from __future__ import annotations

import json
import math

import jsonschema
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats

import powercore as pc
from powercore import cli, simulators
from powercore.simulate import simulate
from powercore.errors import InvalidParameter
from powercore.rank import ARE, PARENTS
from powercore.schema import scenario_schema
from powercore.spec import ParamSpec

from strategies import params as param_strategy

RANK = ["wilcoxon-mann-whitney", "wilcoxon-signed-rank"]
SPEC = ParamSpec("shape", "shape", "", "round", "a made-up choice for the tests", kind="choice",
                 choices=("round", "square"))


# ---- the kind itself ---------------------------------------------------------------------------
@pytest.mark.parametrize("value", ["round", "square"])
def test_choice_accepts_its_names(value):
    """A choice parameter returns an offered name unchanged."""
    assert SPEC.check(value) == value


@pytest.mark.parametrize("value", ["oval", "Round", "", 1, 0.5, None, True, ["round"]])
def test_choice_refuses_anything_else_by_name(value):
    """Anything but an offered name is an InvalidParameter naming the field and the offered names."""
    with pytest.raises(InvalidParameter) as info:
        SPEC.check(value)
    assert info.value.field == "shape" and "['round', 'square']" in str(info.value)


@pytest.mark.parametrize("kwargs", [dict(choices=("round",)), dict(choices=("a", "b")),
                                    dict(kind="colour", choices=("round", "square"))])
def test_bad_declarations_are_refused(kwargs):
    """A choice needs two or more names including its default; an unknown kind is refused."""
    base = dict(name="shape", label="shape", unit="", default="round", doc="d", kind="choice")
    with pytest.raises(ValueError):
        ParamSpec(**{**base, **kwargs})


def test_domain_text_lists_the_names():
    """The domain of a choice reads as its names (the CLI's `designs` listing uses it)."""
    assert SPEC.domain_text() == "one of round, square"


# ---- the rank designs' parent ------------------------------------------------------------------
@pytest.mark.parametrize("design", RANK)
@pytest.mark.parametrize("parent", list(ARE))
def test_named_parent_sets_its_are(design, parent):
    """A named parent fixes the ARE (Hodges and Lehmann 1956 values in powercore.rank.ARE); a typed ARE is ignored."""
    sc = pc.Scenario(design, {"parent": parent, "are": 1.9}, n=20)
    assert sc.params["are"] == ARE[parent]
    same = pc.Scenario(design, {"parent": "other", "are": ARE[parent]}, n=20)
    assert pc.evaluate(sc).power == pytest.approx(pc.evaluate(same).power, rel=1e-12)


@pytest.mark.parametrize("design", RANK)
def test_other_uses_the_typed_are(design):
    """With parent "other" the typed ARE is used: the power lies between those at the ARE's neighbours."""
    p = {"delta": 3.0}
    low = pc.evaluate(pc.Scenario(design, {**p, "parent": "uniform"}, n=20)).power        # ARE 1
    typed = pc.evaluate(pc.Scenario(design, {**p, "parent": "other", "are": 1.3}, n=20)).power
    high = pc.evaluate(pc.Scenario(design, {**p, "parent": "laplace"}, n=20)).power       # ARE 1.5
    assert low < typed < high


@pytest.mark.parametrize("are, parent", [(1.5, "laplace"), (1.0, "uniform"), (3 / math.pi, "normal"),
                                         (math.pi ** 2 / 9, "logistic"), (1.2, "other")])
def test_old_records_with_a_numeric_are_still_read(are, parent):
    """A scenario written before the parent choice (numeric ARE only) keeps its ARE and gets the matching parent."""
    old = {"design": "wilcoxon-mann-whitney", "n": 25, "params": {"delta": 4.0, "sd": 10.0, "are": are}}
    sc = pc.Scenario.from_dict(old)
    assert sc.params["parent"] == parent and sc.params["are"] == pytest.approx(are, rel=1e-12)
    new = pc.Scenario.from_dict({**old, "params": {"delta": 4.0, "sd": 10.0, "parent": "other", "are": are}})
    assert pc.evaluate(sc).power == pytest.approx(pc.evaluate(new).power, rel=1e-12)
    assert pc.Scenario.from_dict(sc.to_dict()) == sc


@pytest.mark.parametrize("design", RANK)
def test_bad_parent_is_refused_by_scenario_schema_and_cli(design, capsys):
    """An unknown parent is refused with its field named, by the scenario, the schema and the CLI."""
    with pytest.raises(InvalidParameter) as info:
        pc.Scenario(design, {"parent": "cauchy"}, n=20)
    assert info.value.field == "parent"
    with pytest.raises(jsonschema.ValidationError):
        jsonschema.validate({"design": design, "params": {"parent": "cauchy"}}, scenario_schema())
    rc = cli.main(["compute", "--design", design, "-p", "parent=cauchy", "--n", "20"])
    assert rc == 2 and json.loads(capsys.readouterr().out)["error"]["field"] == "parent"


def test_schema_offers_the_parents():
    """The generated schema lists the parents as an enum for the rank designs."""
    for branch in scenario_schema()["allOf"]:
        if branch["if"]["properties"]["design"]["const"] in RANK:
            assert branch["then"]["properties"]["params"]["properties"]["parent"]["enum"] == list(PARENTS)


def test_cli_takes_a_parent_flag(capsys):
    """`-p parent=laplace` reaches the scenario, and the result uses ARE 1.5."""
    rc = cli.main(["compute", "--design", "wilcoxon-signed-rank", "-p", "parent=laplace", "--n", "20"])
    out = json.loads(capsys.readouterr().out)
    want = pc.evaluate(pc.Scenario("wilcoxon-signed-rank", {"parent": "other", "are": 1.5}, n=20)).power
    assert rc == 0 and out["scenario"]["params"]["parent"] == "laplace"
    assert out["power"] == pytest.approx(want, rel=1e-12)


def test_designs_listing_names_the_choices(capsys):
    """`powerlens designs` shows the parents and when the typed ARE is used."""
    cli.main(["designs"])
    out = capsys.readouterr().out
    assert "one of normal, uniform, logistic, laplace, other" in out
    assert "used when parent is other" in out


def test_working_says_which_are():
    """The working names the ARE and where it came from."""
    r = pc.evaluate(pc.Scenario("wilcoxon-mann-whitney", {"parent": "logistic"}, n=20))
    assert any("logistic parent" in s.text for s in r.working)


# ---- simulating from the chosen parent ---------------------------------------------------------
@pytest.mark.parametrize("parent", ["normal", "uniform", "logistic", "laplace"])
def test_simulators_draw_the_chosen_parent(parent):
    """Draws have mean 0, SD 1 and the parent's excess kurtosis (scipy.stats <dist>.stats(moments='k'))."""
    ref = {"normal": stats.norm, "uniform": stats.uniform, "logistic": stats.logistic,
           "laplace": stats.laplace}[parent].stats(moments="k")   # scipy: 0, −1.2, 1.2, 3
    x = simulators._parent(np.random.default_rng(11), simulators._parent_name({"parent": parent}), 400_000)
    assert abs(x.mean()) < 0.01 and x.std() == pytest.approx(1.0, abs=0.01)
    assert stats.kurtosis(x) == pytest.approx(float(ref), abs=0.1)


def test_other_simulates_the_nearest_named_parent():
    """A typed ARE (parent other) is simulated from the named parent with the nearest ARE."""
    assert simulators._parent_name({"parent": "other", "are": 1.45}) == "laplace"
    assert simulators._parent_name({"parent": "other", "are": 0.9}) == "normal"


def test_simulation_of_a_laplace_parent_overstates_as_the_notes_say():
    """Simulating parent laplace (20 per group, d = 0.6) reproduces the notes' overstatement 0.051 (4 SE)."""
    sc = pc.Scenario("wilcoxon-mann-whitney", {"delta": 0.6, "sd": 1.0, "parent": "laplace"}, n=20)
    reps = 6000
    res = simulate(sc, reps=reps, seed=5)
    an = pc.evaluate(sc).power
    se = math.sqrt(an * (1 - an) / reps)
    assert abs((an - res.power) - 0.051) <= 4 * se   # 0.051: the design's notes (100 000 simulated studies)


# ---- round trips -------------------------------------------------------------------------------
@settings(max_examples=60, deadline=None)
@given(data=st.data(), design=st.sampled_from(RANK))
def test_rank_scenarios_round_trip(data, design):
    """Any rank scenario drawn from the strategies survives to_dict → from_dict, parent included."""
    d = pc.get_design(design)
    p = data.draw(param_strategy(d))
    sc = pc.Scenario(design, p, n=d.n.default)
    back = pc.Scenario.from_dict(json.loads(json.dumps(sc.to_dict())))
    assert back == sc and back.params["parent"] == p["parent"]
