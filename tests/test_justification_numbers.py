"""Every number in a sample-size justification comes from the record it was made from, and back.

The paragraph is read as a reader would: each number in it must be a number of the record (a stored
value at the precision shown, or a number inside the record's own words: method, notes, cautions,
versions). The record's key numbers (n, groups, total, power, α, effect, standardized effect,
target) must in turn appear in the paragraph. Labels that are words, not values ("group 1", "group
2", "DELTA2"), are removed first.
"""
from __future__ import annotations

import json
import math
import re

import pytest

import powercore as pc
from powercore.record import make_record

NUMBER = re.compile(r"(?<![\w.])(\d+(?:\.\d+)*(?:e[+-]?\d+)?)(%?)")
LABELS = re.compile(r"group [12]\b|DELTA2|\bn[12]\b|p̂[12]|λ̂[12]|T[12]\b|n01|n10|p0|p1\b|p2\b|R²|f²|w²|cv²|δ²")


def _numbers_and_words(x, nums: list[float], words: list[str], skip=("justification",)) -> None:
    if isinstance(x, bool) or x is None:
        return
    if isinstance(x, (int, float)):
        nums.append(float(x))
    elif isinstance(x, str):
        words.append(x)
    elif isinstance(x, dict):
        for k, v in x.items():
            if k not in skip:
                _numbers_and_words(v, nums, words, skip)
    elif isinstance(x, list):
        for v in x:
            _numbers_and_words(v, nums, words, skip)


def _sig(token: str) -> int:
    mant = token.split("e")[0].replace(".", "").lstrip("0")
    return max(len(mant), 1)


def _matches(token: str, pct: bool, values: list[float]) -> bool:
    t = float(token)
    k = _sig(token)
    for v in values:
        for cand in ((100 * v,) if pct else (v, abs(v))):
            if cand == 0:
                if t == 0:
                    return True
                continue
            if math.isclose(float(f"{abs(cand):.{k}g}"), t, rel_tol=1e-12):
                return True
    return False


def unsourced_numbers(text: str, record: dict) -> list[str]:
    """Numbers in ``text`` that are neither a value of ``record`` nor part of the record's own words."""
    nums: list[float] = []
    words: list[str] = []
    _numbers_and_words(record, nums, words)
    rest = text
    for w in sorted(set(words), key=len, reverse=True):   # the record's own phrases (method, test, cautions...)
        if len(w) >= 6 and w in rest:
            rest = rest.replace(w, " ")
    rest = LABELS.sub(" ", rest)
    out = []
    for tok, pct in NUMBER.findall(rest):
        if tok.count(".") > 1:   # a version number: one of the record's version strings
            ok = tok in words
        else:
            ok = _matches(tok, bool(pct), nums)
        if not ok:
            out.append(tok + pct)
    return out


def key_numbers(results: dict) -> list[str]:
    """The record's key numbers as the paragraph prints them."""
    g = lambda x, k=4: f"{x:.{k}g}"   # noqa: E731  (the paragraph's own precision)
    out = [str(results["n"]), str(results["total"]), g(results["alpha"]), g(results["standardized_effect"])]
    out.append(g(results["sample_size"]["power"], 3) if results["solved"]["find"] == "n" and results["sample_size"]
               else g(results["power"], 3))
    out += [str(s) for s in results["group_sizes"]] if len(results["group_sizes"]) > 1 else []
    return out


def _assumed_numbers(record: dict) -> list[str]:
    a = record["results"]["solved"]
    return [f"{a['target_power']:.3g}"] if a["find"] == "n" else []


SCENARIOS = [pc.Scenario(d.id, n=d.n.default) for d in pc.designs() if d.id != "correlation-exact"] + [
    pc.Scenario("two-means-t", {"delta": 4.0, "sd": 9.0, "ratio": 1.5}, find="n", target_power=0.9,
                adjustments={"dropout": 0.2}),
    pc.Scenario("two-proportions", {"p1": 0.3, "delta": -0.12}, n=150, alpha=0.025, direction="lower",
                adjustments={"comparisons": 3, "multiplicity": "sidak"}),
    pc.Scenario("proportion-exact", {"p0": 0.2, "delta": 0.15}, find="n", target_power=0.8),
    pc.Scenario("mean-t", {"delta": 0.37, "sd": 1.3}, n=41, find="effect"),
    pc.Scenario("logrank-events", {"hr": 0.7}, find="n"),
]


@pytest.mark.parametrize("basis", [None, "observed", "published"])
@pytest.mark.parametrize("sc", SCENARIOS, ids=lambda s: f"{s.design}-{s.find}")
def test_every_number_in_the_justification_is_in_the_record(sc, basis):
    """No number in the paragraph is missing from its record, and the record's key numbers are in it."""
    rec = json.loads(json.dumps(make_record(sc, curves=False, basis=basis)))
    text = rec["justification"]
    assert unsourced_numbers(text, rec) == []
    for number in key_numbers(rec["results"]) + _assumed_numbers(rec):
        assert re.search(rf"(?<![\d.]){re.escape(number)}(?![\d])", text), (number, text)


def test_pinned_justifications_come_from_their_own_entries():
    """Each pinned entry's paragraph takes its numbers from that entry (assumptions and results) only."""
    a = pc.Scenario("two-means-t", {"delta": 20.0, "sd": 45.0}, n=60)
    b = a.replace(n=97, params={"sd": 38.5})
    rec = json.loads(json.dumps(make_record(a, curves=False, pinned=[("A", a), ("B", b, "min", "pilot")])))
    for entry in rec["pinned"]:
        own = {**entry, "software": rec["software"], "cautions": rec["cautions"]}
        assert unsourced_numbers(entry["justification"], own) == []
        r = entry["results"]
        for number in (str(r["n"]), str(r["total"]), f"{r['power']:.3g}", f"{r['standardized_effect']:.4g}"):
            assert number in entry["justification"]
    assert "38.5" in rec["pinned"][1]["justification"] and "97 in group 1" in rec["pinned"][1]["justification"]


def test_the_check_catches_an_invented_number():
    """The checker itself flags a number the record does not hold (so the tests above can fail)."""
    rec = json.loads(json.dumps(make_record(pc.Scenario("mean-z", n=20), curves=False)))
    assert unsourced_numbers(rec["justification"].replace("20 observations", "23 observations", 1), rec) == ["23"]
