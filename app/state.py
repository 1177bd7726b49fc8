"""The state of one explorer session: what the planner has set, and the last good result.

``ExplorerState`` is a plain ``param.Parameterized`` with no Panel dependency.
Its inputs may hold bad values (a typed 1.5 for α, −3 for n): every change
builds a :class:`powercore.Scenario`, and when that or ``evaluate`` refuses,
the message goes to ``errors`` under the field at fault while ``snapshot``
keeps the last good result, densities and curves.
"""
from __future__ import annotations

import logging
import math
import threading
from dataclasses import dataclass
from types import MappingProxyType
from typing import Any

import numpy as np
import param

import powercore as pc
from powercore import Curve, Densities, Design, InvalidParameter, NoSolution, Result, Scenario

from .text import error_text

__all__ = ["DEMO", "ExplorerState", "Snapshot", "directions"]

log = logging.getLogger("powerlens.app")

#: The invented demo loaded at start (read-only). Every number in it is made up.
DEMO = MappingProxyType({
    "design": "two-means-t",
    "params": MappingProxyType({"delta": 20.0, "sd": 45.0, "ratio": 1.0}),
    "n": 60,
    "alpha": 0.05,
    "direction": "two-sided",
    "find": "power",
    "target_power": 0.8,
    "unit_name": "min",
    "story": ("Invented example, not a real study: a made-up trial of a sleep app. Adults who sleep "
              "badly get the app (group 2) or a leaflet (group 1); the outcome is minutes of sleep a "
              "night after four weeks. Assumed: the app adds 20 min, SD 45 min, 60 people a group."),
})


#: parameters that mean the same thing under another name, for carrying values between designs
SYNONYMS = MappingProxyType({"sd1": ("sd",), "sd2": ("sd",), "sd": ("sd1", "sd2")})

#: no dropout, one test, no correction
DEFAULT_ADJUSTMENTS = MappingProxyType({"dropout": 0.0, "comparisons": 1, "multiplicity": "none"})


@dataclass(frozen=True)
class Snapshot:
    """Everything the views draw for one good scenario."""

    scenario: Scenario
    result: Result
    densities: Densities
    effect_curve: Curve
    n_curve: Curve
    unit_name: str
    #: the rejection region in the densities' x units: two tails outside (lo, hi), or the interval
    #: between them for designs whose test rejects inside an interval (equivalence)
    region: tuple[float | None, float | None] = (None, None)
    interval: bool = False

    @property
    def design(self) -> Design:
        return pc.get_design(self.scenario.design)


class ExplorerState(param.Parameterized):
    """One session's scenario inputs and outputs.

    Inputs are plain values (possibly invalid); ``values`` holds the design's own
    parameters by name. Outputs: ``snapshot`` (last good), ``errors`` (field →
    message for the current inputs, empty when they are good).
    """

    design = param.Selector(default=DEMO["design"], objects=[DEMO["design"]],
                            doc="id of the design in powercore's registry")
    direction = param.Selector(default="two-sided", objects=list(pc.DIRECTIONS),
                               doc="direction of the alternative")
    find = param.Selector(default="power", objects=list(pc.FINDS), doc="the unknown to find")
    alpha = param.Number(default=0.05, allow_None=True, softbounds=(0.001, 0.2),
                         doc="significance level α; checked by powercore, in (0, 1)")
    target_power = param.Number(default=0.8, allow_None=True, softbounds=(0.5, 0.99),
                                doc="power the study should reach; must exceed α")
    n = param.Number(default=60, allow_None=True,
                     doc="sample size, in the design's unit (NSpec.unit); a whole number")
    values = param.Dict(default={}, doc="the design's parameters by name (data units)")
    scale = param.Selector(default="statistic", objects=["statistic", "data"],
                           doc="draw the densities of the test statistic or of the estimate")
    unit_name = param.String(default="", doc="the planner's name for 'data units' (e.g. min)")
    adjustments = param.Dict(default=dict(DEFAULT_ADJUSTMENTS),
                             doc="dropout, number of tests and multiplicity correction (powercore checks them)")

    snapshot = param.Parameter(default=None, doc="Snapshot of the last good scenario (read-only)")
    errors = param.Dict(default={}, doc="field → message for the current inputs (read-only)")

    def __init__(self, demo: bool = True, **params: Any) -> None:
        self._lock = threading.RLock()
        design = params.pop("design", None)
        super().__init__(**params)
        ids = [d.id for d in pc.designs()]
        self.param.design.objects = ids   # this instance's copy: designs registered since import appear
        with param.parameterized.discard_events(self):
            if design is not None:
                pc.get_design(design)     # InvalidParameter for an unknown id
                self.design = design
            if demo:
                self.design = DEMO["design"]
                self.values = dict(DEMO["params"])
                self.n, self.alpha = DEMO["n"], DEMO["alpha"]
                self.direction, self.find = DEMO["direction"], DEMO["find"]
                self.target_power, self.unit_name = DEMO["target_power"], DEMO["unit_name"]
            else:
                if self.design not in ids:
                    self.design = ids[0]
                self._reset_for(self.current_design(), keep=False)
        self.param.watch(self._inputs_changed, ["design", "direction", "find", "alpha", "target_power",
                                                "n", "values", "scale", "unit_name", "adjustments"])
        self.recompute()

    # ---- helpers ------------------------------------------------------------
    def current_design(self) -> Design:
        return pc.get_design(self.design)

    def value(self, name: str) -> Any:
        d = self.current_design()
        return self.values.get(name, d.param(name).default)

    def set_value(self, name: str, value: Any) -> None:
        """Set one design parameter (a new dict, so watchers fire)."""
        if self.values.get(name, object()) != value:
            self.values = {**self.values, name: value}

    def standardized(self) -> float | None:
        """The standardized effect of the current inputs, or None when they are not valid numbers."""
        d = self.current_design()
        p = self._params_or_none(d)
        if p is None:
            return None
        try:
            with np.errstate(all="ignore"):
                s = float(d.standardized(p))
        except (ValueError, TypeError, ZeroDivisionError, KeyError):
            return None
        return s if math.isfinite(s) else None

    def set_standardized(self, s: Any) -> None:
        """Set the effect from a standardized effect (Cohen's d, h, q...), keeping the rest."""
        d = self.current_design()
        p = self._params_or_none(d, skip=d.effect)
        if p is None or s is None or isinstance(s, bool) or not isinstance(s, (int, float)):
            self.errors = {**self.errors, "standardized": "the standardized effect needs valid values "
                                                           "of the other parameters"}
            return
        with np.errstate(all="ignore"):
            x = float(d.from_standardized({**p, d.effect: 0.0}, float(s)))
        if not math.isfinite(x):
            self.errors = {**self.errors, "standardized": f"no {d.effect_label} has "
                                                           f"{d.standardized_name} = {s:g} here"}
            return
        self.set_value(d.effect, x)

    def _params_or_none(self, d: Design, skip: str | None = None) -> dict | None:
        out = {}
        for spec in d.params:
            v = self.values.get(spec.name, spec.default)
            if spec.name != skip:
                try:
                    v = spec.check(v)
                except InvalidParameter:
                    return None
            out[spec.name] = v
        return out

    def _reset_for(self, d: Design, keep: bool, old: Design | None = None) -> None:
        """Give a newly chosen design its defaults, keeping values that mean the same thing.

        Within a family a value is kept under its own name or a synonym (a common SD stands for
        both groups' SDs and back). The effect and the spreads in data units go together: when a
        spread cannot be carried over (a paired design's SD of the differences is not the SD of one
        group), they all take the new design's defaults, so that δ = 20 min is never set against a
        default SD made for another scale.
        """
        values, carried = {}, set()
        same_family = keep and old is not None and old.family == d.family
        for spec in d.params:
            v = spec.default
            if same_family:
                for name in (spec.name, *SYNONYMS.get(spec.name, ())):
                    try:
                        if old.param(name).unit == spec.unit and name in self.values:
                            v = spec.check(self.values[name])
                            carried.add(spec.name)
                            break
                    except (KeyError, InvalidParameter):
                        continue
            values[spec.name] = v
        data_units = {spec.name for spec in d.params if spec.unit == "data units"}
        spreads = {name for name in data_units if name.startswith("sd")}   # a null mean may take its default
        if (spreads | ({d.effect} & data_units)) - carried:
            for name in data_units:
                values[name] = d.param(name).default
        self.values = values
        if not (keep and old is not None and old.n.unit == d.n.unit and _whole(self.n)
                and self.n >= d.min_n(values)):
            self.n = d.n.default
        if not (keep and old is not None and old.family == d.family):
            self.unit_name = ""
        allowed = directions(d)
        if self.direction not in allowed:
            self.direction = allowed[0]

    # ---- reacting to changes --------------------------------------------------
    def _inputs_changed(self, *events) -> None:
        names = {e.name for e in events}
        with self._lock:
            if "design" in names:
                ev = next(e for e in events if e.name == "design")
                with param.parameterized.discard_events(self):
                    old = pc.get_design(ev.old) if ev.old in self.param.design.objects else None
                    self._reset_for(self.current_design(), keep=True, old=old)
            if "find" in names:
                ev = next(e for e in events if e.name == "find")
                self._adopt_found(ev.old)
            self.recompute()

    def _adopt_found(self, old_find: str) -> None:
        """When the unknown changes, the value found so far becomes the new input."""
        snap = self.snapshot
        if snap is None or old_find == "power" or snap.scenario.design != self.design:
            return
        solved = snap.result.solved
        with param.parameterized.discard_events(self):
            if old_find == "n":
                self.n = solved.n
            elif old_find == "alpha":
                self.alpha = float(f"{solved.alpha:.4g}")
            elif old_find == "effect":
                d = self.current_design()
                self.values = {**self.values, d.effect: float(f"{solved.params[d.effect]:.4g}")}

    def set_adjustment(self, name: str, value: Any) -> None:
        """Set one adjustment (dropout, comparisons, multiplicity); a new dict, so watchers fire."""
        if self.adjustments.get(name, object()) != value:
            self.adjustments = {**self.adjustments, name: value}

    def load(self, scenario: Scenario, unit_name: str | None = None) -> None:
        """Show exactly ``scenario`` (from a record or a link): design, every value, n, α, find, target."""
        d = pc.get_design(scenario.design)
        with self._lock:
            with param.parameterized.discard_events(self):
                self.design = d.id
                self.values = {spec.name: scenario.params.get(spec.name, spec.default) for spec in d.params}
                if scenario.n is not None:
                    self.n = scenario.n
                elif not _whole(self.n) or self.n < d.n.minimum:
                    self.n = d.n.default
                if scenario.alpha is not None:
                    self.alpha = scenario.alpha
                allowed = directions(d)
                self.direction = scenario.direction if scenario.direction in allowed else allowed[0]
                self.find = scenario.find
                self.target_power = scenario.target_power
                self.adjustments = {**DEFAULT_ADJUSTMENTS, **dict(scenario.adjustments)}
                if unit_name is not None:
                    self.unit_name = unit_name
                elif not any(s.unit == "data units" for s in d.params):
                    self.unit_name = ""
            self.recompute()
            self.param.trigger("errors")   # the page refreshes even when the messages are unchanged

    def build_scenario(self) -> Scenario:
        """The scenario of the current inputs; raises InvalidParameter naming the field."""
        d = self.current_design()
        params = {spec.name: self.values.get(spec.name, spec.default) for spec in d.params}
        find = self.find
        kwargs = dict(design=d.id, direction=self.direction, find=find,
                      target_power=self.target_power, adjustments=dict(self.adjustments),
                      n=None if find == "n" else _as_int(self.n),
                      alpha=None if find == "alpha" else self.alpha)
        if find == "effect":
            try:   # the current effect only tells the side; a bad one is ignored
                return Scenario(params=params, **kwargs)
            except InvalidParameter as e:
                if e.field != d.effect:
                    raise
                return Scenario(params={**params, d.effect: None}, **kwargs)
        sc = Scenario(params=params, **kwargs)
        if find == "power" and sc.target_power <= sc.alpha:
            raise InvalidParameter("target_power", f"must exceed the significance level α = {sc.alpha:g}",
                                   sc.target_power)
        return sc

    def recompute(self) -> None:
        """Evaluate the current inputs; on success replace ``snapshot``, else set ``errors``."""
        with self._lock:
            d = self.current_design()
            try:
                sc = self.build_scenario()
                with np.errstate(all="ignore"):
                    snap = self._evaluate(sc)
            except (InvalidParameter, NoSolution) as e:
                self.errors = {e.field: error_text(d, e)}
                return
            except (ValueError, ArithmeticError, RuntimeError) as e:   # a numeric failure
                log.warning("evaluation failed for %s: %s", d.id, e)
                self.errors = {"find": f"could not compute this scenario: {e}"}
                return
            self.param.update(snapshot=snap, errors={})

    def _evaluate(self, sc: Scenario) -> Snapshot:
        result = pc.evaluate(sc)
        lo, hi = pc.effect_range(result)
        a, b = pc.n_range(result)
        dens = pc.densities(result.solved, self.scale)
        region = tuple(_nan_to_none(c) for c in dens.critical)
        interval = dens.rejects == "inside"
        return Snapshot(scenario=sc, result=result, densities=dens,
                        effect_curve=pc.curve_effect(result.solved, lo, hi, points=300),
                        n_curve=pc.curve_n(result.solved, a, b, points=300),
                        unit_name=self.unit_name, region=region, interval=interval)


def directions(d: Design) -> tuple[str, ...]:
    """The directions of the alternative the design's test offers."""
    return tuple(getattr(d, "directions", pc.DIRECTIONS))


def _nan_to_none(x: Any) -> float | None:
    return None if x is None or not math.isfinite(float(x)) else float(x)


def _as_int(n: Any) -> Any:
    """Whole floats from a number box become ints; anything else goes to powercore to refuse."""
    if isinstance(n, float) and math.isfinite(n) and n.is_integer():
        return int(n)
    return n


def _whole(n: Any) -> bool:
    return isinstance(n, (int, float)) and not isinstance(n, bool) and math.isfinite(n) \
        and float(n).is_integer()
