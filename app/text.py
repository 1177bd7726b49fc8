"""Words and numbers for the page: labels, units, captions and readout lines.

Pure functions of powercore objects, with no Panel or Bokeh import, so that the
tests can check the text without a browser.
"""
from __future__ import annotations

import math
import re

from powercore import Design, NoSolution, Result
from powercore.errors import InvalidParameter

__all__ = ["DIRECTION_LABELS", "FIND_LABELS", "caption", "effect_unit", "effect_value", "error_text",
           "estimate_unit", "field_label", "num", "signed", "value_unit"]

DIRECTION_LABELS = {"two-sided": "two-sided", "upper": "one-sided, upper", "lower": "one-sided, lower"}
FIND_LABELS = {"power": "power", "n": "sample size", "effect": "smallest detectable effect",
               "alpha": "significance level α"}
MULTIPLICITY_LABELS = {"none": "none", "bonferroni": "Bonferroni", "sidak": "Šidák"}
SCALE_LABELS = {"statistic": "test statistic", "data": "estimate (data units)"}
DATA_UNITS = "data units"


def num(x, digits: int = 4) -> str:
    """A number with ``digits`` significant digits, a true minus sign, and no float noise."""
    if x is None:
        return "—"
    x = float(x)
    if math.isnan(x):
        return "—"
    if math.isinf(x):
        return "∞" if x > 0 else "−∞"
    if x == 0:
        return "0"
    text = f"{x:.{digits}g}"
    if "e" in text:
        mant, exp = text.split("e")
        text = f"{mant}×10^{int(exp)}"
    return text.replace("-", "−")


def signed(x, digits: int = 4) -> str:
    """Like :func:`num` with an explicit ``+`` on positive values (for effects)."""
    s = num(x, digits)
    return s if s.startswith("−") or s in ("0", "—") else "+" + s


PLAIN_UNITS = ("", "proportion", "correlation", "ratio")


def value_unit(unit: str) -> str:
    """The unit to print after a number ('' for dimensionless words such as 'proportion')."""
    return "" if unit in PLAIN_UNITS else unit


def effect_value(design: Design, p: dict, x, digits: int = 4) -> str:
    """An effect with a sign when its null value is 0 (a difference), plain otherwise (a ratio)."""
    try:
        null = float(design.null_effect(dict(p))) if hasattr(design, "null_effect") else 0.0
    except (TypeError, ValueError, KeyError):
        null = 0.0
    return signed(x, digits) if null == 0 else num(x, digits)


def effect_unit(design: Design, unit_name: str = "") -> str:
    """The unit of the design's effect, with the planner's own unit name for 'data units'."""
    unit = design.param(design.effect).unit
    if unit == DATA_UNITS and unit_name.strip():
        return unit_name.strip()
    return unit


def param_unit(design: Design, name: str, unit_name: str = "") -> str:
    """The unit of parameter ``name``, with the planner's unit name for 'data units'."""
    unit = design.param(name).unit
    if unit == DATA_UNITS and unit_name.strip():
        return unit_name.strip()
    return unit


def estimate_unit(design: Design, unit_name: str = "") -> str:
    """Unit of the estimate on the data scale of the densities.

    Designs may declare ``estimate_unit``; otherwise the effect's unit is used,
    except for transformed scales (an arcsine or Fisher-z label), which get none.
    """
    declared = getattr(design, "estimate_unit", None)
    if declared is not None:
        return unit_name.strip() if declared == DATA_UNITS and unit_name.strip() else declared
    if "asin" in design.estimate_label or "atanh" in design.estimate_label:
        return ""
    return effect_unit(design, unit_name)


def with_unit(label: str, unit: str) -> str:
    return f"{label} ({unit})" if unit else label


def field_label(design: Design | None, field: str) -> str:
    """Words for a scenario field, for messages placed at that field."""
    fixed = {"alpha": "significance level α", "target_power": "target power", "n": "sample size",
             "direction": "direction", "find": "find", "design": "design", "effect": "effect",
             "standardized": "standardized effect", "adjustments.dropout": "expected dropout",
             "adjustments.comparisons": "number of tests", "adjustments.multiplicity": "correction"}
    if design is not None:
        try:
            return design.param(field).label
        except KeyError:
            pass
    return fixed.get(field, field)


def error_text(design: Design | None, err: Exception) -> str:
    """A one-line message for an error from powercore, in the words of the page."""
    if isinstance(err, InvalidParameter):
        value = err.value
        shown = "nothing" if value is None else (num(value, 6) if isinstance(value, (int, float))
                                                  and not isinstance(value, bool) else repr(value))
        constraint = re.sub(r"\balpha\b", "α", err.constraint)
        constraint = re.sub(r"(?<![\w.])-inf\b", "−∞", re.sub(r"(?<![\w.-])inf\b", "∞", constraint))
        return f"{field_label(design, err.field)} {constraint}; got {shown}"
    if isinstance(err, NoSolution):
        what = {"n": "sample size", "effect": "detectable effect",
                "alpha": "significance level"}.get(err.field, err.field)
        return f"No {what} reaches the target power: {err.reason}"
    return f"could not compute: {err}"


def caption(design: Design, result: Result, unit_name: str = "", date: str | None = None) -> tuple[str, ...]:
    """Short lines naming the scenario behind a figure (drawn inside each figure, so exports keep them).

    Design; direction, α (and the per-test level when corrected), power; the effect in data units and
    standardized; the other parameters (the spread among them); the sample size and what it counts;
    the date and the Powerlens version.
    """
    import datetime as _dt

    from powercore import __version__

    sc = result.solved
    unit = value_unit(effect_unit(design, unit_name))
    eff = f"effect {design.effect_label} = {effect_value(design, sc.params, result.effect, 3)}"
    if unit:
        eff += f" {unit}"
    eff += f" (standardized {design.standardized_name} = {num(result.standardized_effect, 3)})"
    others = []
    for spec in design.params:
        if spec.name == design.effect:
            continue
        v = sc.params.get(spec.name)
        if spec.kind == "bool":
            others.append(f"{spec.label}: {'yes' if v else 'no'}")
            continue
        if spec.kind == "choice":
            others.append(f"{spec.label}: {v}")
            continue
        u = value_unit(param_unit(design, spec.name, unit_name))
        others.append(f"{spec.label} = {num(v, 4)}" + (f" {u}" if u else ""))
    n_text = f"n = {result.n} {design.n.unit}"
    if len(result.group_sizes) > 1:
        n_text += f" ({result.total} {design.n.total_unit})"
    adj = dict(sc.adjustments)
    if adj.get("dropout"):
        n_text += f"; enrol {getattr(result, 'enrolled_total', result.total)} for {num(adj['dropout'] * 100, 3)}% dropout"
    alpha = f"α = {num(result.alpha, 3)}"
    if adj.get("comparisons", 1) > 1 and adj.get("multiplicity", "none") != "none":
        alpha += f" ({adj['comparisons']} tests, {adj['multiplicity']}: {num(result.alpha_test, 3)} per test)"
    line2 = f"{DIRECTION_LABELS[sc.direction]} · {alpha} · power = {num(result.power, 3)}"
    stamp = f"Powerlens {__version__} · {date or _dt.datetime.now(_dt.timezone.utc).date().isoformat()}"
    return (design.title, line2, eff, " · ".join(others) or "—", n_text, stamp)
