"""The command line and the generated scenario schema."""
from __future__ import annotations

import io
import json

import jsonschema
import pytest

import powercore as pc
from powercore import cli
from powercore.schema import SCHEMA_PATH, scenario_schema


def test_committed_schema_is_the_generated_one():
    """The schema file in the package is exactly what `python -m powercore.schema` writes."""
    assert json.loads(SCHEMA_PATH.read_text(encoding="utf-8")) == scenario_schema()


@pytest.mark.parametrize("design", [d.id for d in pc.designs()])
def test_every_design_serialises_to_a_valid_scenario(design):
    """Each registered design's default scenario validates against the schema and names the design."""
    d = pc.get_design(design)
    data = pc.Scenario(design, n=d.n.default).to_dict()
    jsonschema.validate(data, scenario_schema())
    assert data["design"] == design


@pytest.mark.parametrize("bad", [
    {"design": "mean-z", "params": {"sd": 0}},
    {"design": "mean-z", "params": {"unknown": 1}},
    {"design": "mean-z", "alpha": 1.5},
    {"design": "no-such-design"},
    {"design": "mean-z", "direction": "sideways"},
])
def test_schema_and_scenario_both_refuse_bad_input(bad):
    """What the schema rejects, Scenario.from_dict rejects too, with a ValueError naming a field."""
    with pytest.raises(jsonschema.ValidationError):
        jsonschema.validate(bad, scenario_schema())
    with pytest.raises(ValueError) as info:
        pc.Scenario.from_dict(bad)
    assert getattr(info.value, "field", None)


def test_compute_prints_the_result_as_json(capsys):
    """`powerlens compute` with flags prints a result whose power equals the library's."""
    rc = cli.main(["compute", "--design", "mean-t", "-p", "delta=2", "-p", "sd=5", "--n", "30"])
    out = json.loads(capsys.readouterr().out)
    expected = pc.evaluate(pc.Scenario("mean-t", {"delta": 2, "sd": 5}, n=30)).power
    assert rc == 0 and out["power"] == pytest.approx(expected, rel=1e-12)


def test_compute_reports_the_field_at_fault(capsys):
    """A bad flag value gives exit status 2 and an error object naming the field."""
    rc = cli.main(["compute", "--design", "mean-z", "--n", "20", "--alpha", "1.5"])
    out = json.loads(capsys.readouterr().out)
    assert rc == 2 and out["error"]["field"] == "alpha"


def test_compute_reads_a_json_scenario(capsys):
    """--json takes a scenario; the flags override it."""
    text = json.dumps({"design": "paired-t", "n": 12, "params": {"delta": 1.0, "sd_diff": 2.0}})
    cli.main(["compute", "--json", text, "--n", "40"])
    out = json.loads(capsys.readouterr().out)
    assert out["n"] == 40 and out["scenario"]["params"]["sd_diff"] == 2.0


def test_batch_goes_on_past_bad_lines():
    """The JSON Lines batch writes one line per input; bad lines carry an error and the rest still run."""
    lines = [json.dumps({"design": "mean-z", "n": 20}), "{not json", json.dumps({"design": "mean-z", "n": -3}),
             json.dumps({"design": "two-proportions", "find": "n", "params": {"delta": 0.1}})]
    out = io.StringIO()
    rc = cli._batch(io.StringIO("\n".join(lines) + "\n"), out)
    rows = [json.loads(x) for x in out.getvalue().splitlines()]
    assert rc == 1 and [r["line"] for r in rows] == [1, 2, 3, 4]
    assert "result" in rows[0] and rows[1]["error"]["field"] == "json"
    assert rows[2]["error"]["field"] == "n" and rows[3]["result"]["n"] > 100


def test_example_runs(capsys):
    """The worked example says it is invented and prints a required sample size."""
    assert cli.main(["example"]) == 0
    out = capsys.readouterr().out
    assert "invented" in out and "required n" in out
