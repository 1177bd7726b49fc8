"""The plain-language sample-size justification, built only from a result's numbers.

It covers what reporting guidelines ask of a sample-size statement (SPIRIT 2013
item 14, CONSORT 2010 item 7a, DELTA2): the significance level and sidedness,
the power, the target difference in data units and standardized with the spread
it assumes, the allocation, the allowance for dropout, the resulting n per group
and in total, the method, and the software with its version.
"""
from __future__ import annotations

from .design import Design, get_design
from .result import Result

__all__ = ["BASES", "CAUTIONS", "DELTA2_NOTE", "OBSERVED_WARNING", "basis_sentence", "cautions_for",
           "check_basis", "justification", "standardized_only"]

CAUTIONS = (
    "A study plan that affects people, such as a clinical trial, needs a qualified statistician; "
    "local regulations, ethics committees and reporting rules prevail over this tool.",
    "Do not compute 'observed power' from the effect observed in the same study: it is a restatement "
    "of the p-value and adds nothing (Hoenig and Heisey 2001).",
    "Power rests on the assumed effect and spread; show how the sample size moves when they are wrong.",
)

#: where the assumed effect comes from: id → words used in the sentence and on the page
BASES = {
    "relevance": "the smallest difference that matters (clinical or practical relevance)",
    "pilot": "a pilot study",
    "published": "published studies",
    "observed": "the observed result of this same study",
}

OBSERVED_WARNING = (
    "Warning: the assumed effect is the effect observed in this same study. Power computed from it "
    "('observed power') is a restatement of the p-value (Hoenig and Heisey 2001) and must not be used "
    "to interpret a finished study.")

DELTA2_NOTE = (
    "The effect is given only as a standardized effect, with no difference in data units; report the "
    "target difference in the outcome's own units too, as the DELTA2 guidance asks.")

#: effect units that are themselves standardized (no data-unit difference exists for these designs)
_STANDARDIZED_UNITS = ("proportion of variance", "standardized")


def standardized_only(d: Design) -> bool:
    """True when the design's effect parameter is itself a standardized effect (Cohen's w, f, f², R²...)."""
    unit = d.param(d.effect).unit
    return unit.startswith("Cohen's") or unit in _STANDARDIZED_UNITS


def check_basis(basis: object, field: str = "basis") -> str | None:
    """``basis`` if it is one of :data:`BASES` (or None); else RecordError naming ``field``."""
    from .errors import RecordError
    if basis is None or (isinstance(basis, str) and basis in BASES):
        return basis
    raise RecordError(field, f"must be one of {sorted(BASES)} or null, got {basis!r}")


def basis_sentence(basis: str | None) -> str:
    """The sentence saying where the assumed effect comes from ('' when not stated)."""
    if basis is None:
        return ""
    if basis == "observed":
        return OBSERVED_WARNING
    return f"The assumed effect is based on {BASES[basis]}."


def cautions_for(d: Design, basis: str | None = None) -> list[str]:
    """The general cautions plus those this design and basis call for."""
    out = list(CAUTIONS)
    if basis == "observed":
        out.append(OBSERVED_WARNING)
    if standardized_only(d):
        out.append(DELTA2_NOTE)
    return out


_SIDES = {"two-sided": "two-sided", "upper": "one-sided (upper alternative)",
          "lower": "one-sided (lower alternative)"}


def _g(x: float, digits: int = 4) -> str:
    return f"{x:.{digits}g}"


def justification(result: Result, version: str, basis: str | None = None, unit_name: str = "") -> str:
    """One paragraph, every number taken from ``result``; ``basis`` (a key of BASES) says where the
    assumed effect comes from; ``unit_name`` is the planner's word for the data units (e.g. "min"),
    written after the effect and the spreads instead of "data units"."""
    check_basis(basis)
    d = get_design(result.scenario.design)
    s = result.solved
    p = dict(s.params)
    unit_name = " ".join(str(unit_name or "").split())[:40]

    def in_units(spec) -> str:
        return f" {unit_name}" if unit_name and spec.unit == "data units" else ""

    spread = [f"{spec.label} of {_g(p[spec.name])}{in_units(spec)}" for spec in d.params
              if spec.unit == "data units" and spec.name not in (d.effect, "mu0")]
    refs = [f"{spec.label} of {_g(p[spec.name])}" for spec in d.params
            if spec.unit in ("proportion", "correlation") and spec.name != d.effect]
    assumed = spread + refs
    effect_unit = f" {unit_name}" if in_units(d.param(d.effect)) else f" ({d.param(d.effect).unit})"
    effect = (f"a {d.effect_label} of {_g(result.effect)}{effect_unit}, "
              f"a standardized effect {d.standardized_name} = {_g(result.standardized_effect)}")
    if assumed:
        effect += ", assuming " + " and ".join(assumed)
    if len(result.group_sizes) > 1:
        ratio = p.get("ratio", 1.0)
        alloc = (f"Allocation is {_g(ratio)} : 1 (group 2 : group 1), giving "
                 f"{result.group_sizes[0]} in group 1 and {result.group_sizes[1]} in group 2, "
                 f"{result.total} {result.total_unit} in total.")
    else:
        alloc = f"This gives {result.n} {result.n_unit} in total."
    ss = result.sample_size
    if s.find == "n" and ss is not None:
        opening = (f"A sample size of {result.n} {result.n_unit} gives a power of {_g(ss.power, 3)} "
                   f"(target {_g(ss.target, 3)}; {_g(ss.power_below, 3)} with one fewer)"
                   if ss.power_below is not None else
                   f"A sample size of {result.n} {result.n_unit} gives a power of {_g(ss.power, 3)} "
                   f"(target {_g(ss.target, 3)})")
    else:
        opening = f"With {result.n} {result.n_unit} the power is {_g(result.power, 3)}"
    if ss is not None and ss.stays_from != ss.n:
        alloc += (f" Because the exact test's power is a saw-tooth in n, power stays at or above the target "
                  f"from {ss.stays_from} {result.n_unit} (checked up to {ss.checked_to}).")
    adj = s.adjustments
    level = f"significance level α = {_g(result.alpha)}"
    if adj["multiplicity"] != "none" and adj["comparisons"] > 1:
        level = (f"a familywise significance level α = {_g(result.alpha)} shared over {adj['comparisons']} "
                 f"tests ({adj['multiplicity']} adjustment: each test at {_g(result.alpha_test)})")
    if adj["dropout"] > 0:
        drop = (f"Allowing for {_g(100 * adj['dropout'])}% dropout, "
                f"{' and '.join(str(e) for e in result.enrolled_sizes)} are to be enrolled "
                f"({result.enrolled_total} in total) so that {result.total} remain for analysis.")
    else:
        drop = "No allowance for dropout or loss to follow-up is included; enrol more to allow for it."
    tail = " ".join(t for t in (basis_sentence(basis), DELTA2_NOTE if standardized_only(d) else "") if t)
    return (f"{opening} to detect {effect}, with a {_SIDES[s.direction]} {d.test} at {level}. {alloc} "
            f"{drop} {tail + ' ' if tail else ''}Method: {d.method}. "
            f"Computed with Powerlens {version} (design '{d.id}').")
