"""Time to event: the log-rank test, by required events and by subjects with accrual and follow-up.

The log-rank statistic is approximately normal with mean
* Schoenfeld (1983): log(HR)·√(D·π1·π2), or
* Freedman (1982): √(D·r)·(HR − 1)/(1 + r·HR),
for D events and allocation π1 = 1/(1 + r), π2 = r/(1 + r) (r = n2/n1). Subjects
are turned into events with exponential survival in each arm, uniform accrual
over A time units and F further units of follow-up (Lachin and Foulkes 1986,
without loss to follow-up): P(event) = 1 − (e^(−λF) − e^(−λ(A+F)))/(λA).
"""
from __future__ import annotations

import math

import numpy as np

from .design import RATIO, TWO_GROUP_N, Design, Explanation, Statistic, TwoGroups, fmt, register
from .distributions import Normal
from .spec import NSpec, ParamSpec

__all__ = ["LogRankEvents", "LogRankSubjects", "event_probability", "hazard_ratio_from_medians",
           "median_from_hazard_ratio"]


def hazard_ratio_from_medians(median_control, median_new):
    """Hazard ratio new : control under exponential survival, from the two median survival times."""
    return np.asarray(median_control, dtype=float) / np.asarray(median_new, dtype=float)


def median_from_hazard_ratio(median_control, hr):
    """Median survival in the new arm implied by a hazard ratio under exponential survival."""
    return np.asarray(median_control, dtype=float) / np.asarray(hr, dtype=float)


def event_probability(hazard, accrual, follow_up):
    """P(event observed) with uniform accrual over ``accrual`` and ``follow_up`` further time units."""
    lam, a, f = (np.asarray(v, dtype=float) for v in (hazard, accrual, follow_up))
    with np.errstate(divide="ignore", invalid="ignore"):   # expm1 keeps a tiny accrual period exact
        la = lam * a
        tail = np.where(la > 0, np.exp(-lam * f) * -np.expm1(-la) / np.where(la > 0, la, 1.0), np.exp(-lam * f))
    return 1.0 - tail


_HR = ParamSpec("hr", "hazard ratio HR (new : control)", "ratio", 0.7,
                "hazard in the new arm divided by the hazard in the control arm; below 1 favours the new arm",
                low=0.0, high=100.0, soft=(0.3, 2.0), step=0.01)
_FREEDMAN = ParamSpec("freedman", "Freedman's formula", "", False,
                      "use Freedman (1982) instead of Schoenfeld (1983); Freedman is closer for unequal "
                      "allocation and hazard ratios far from 1", kind="bool", low=0, high=1, soft=(0, 1), step=1)


class _LogRank(Design):
    family = "time to event"
    effect = "hr"
    effect_label = "hazard ratio"
    standardized_name = "log HR"
    estimate_label = "estimated hazard ratio"
    test = "log-rank test"
    method = ("approximate: normal log-rank statistic with Schoenfeld's (1983) or Freedman's (1982) mean")
    notes = ("Approximation: the log-rank normal approximations assume proportional hazards; with strong "
             "effects (HR below about 0.5) Schoenfeld's formula is optimistic by up to a few points of "
             "power against simulation; check by simulation.",)

    def null_effect(self, p):
        return 1.0

    def effect_bounds(self, p):
        return 0.0, 100.0

    def standardized(self, p):
        return np.log(np.asarray(p["hr"], dtype=float))

    def from_standardized(self, p, s):
        return np.exp(np.asarray(s, dtype=float))

    def effect_scale(self, p):
        return 0.3

    def _z(self, p, events, r):
        hr = np.asarray(p["hr"], dtype=float)
        if p["freedman"]:
            return np.sqrt(events * r) * (hr - 1) / (1 + r * hr)
        return np.log(hr) * np.sqrt(events * r) / (1 + r)

    def _explain(self, p, events, r, st):
        formula = ("√(D·r)·(HR − 1)/(1 + r·HR)" if p["freedman"] else "log(HR)·√(D·r)/(1 + r)")
        return Explanation(
            se=f"SE of log(HR) ≈ (1 + r)/√(D·r) = {fmt(st.se)} with D = {fmt(events)} events, r = {fmt(r)}",
            null="Z ~ N(0, 1)", alt=f"Z ~ N({fmt(st.noncentrality)}, 1)",
            noncentrality=f"λ = {formula} = {fmt(st.noncentrality)}")


@register
class LogRankEvents(_LogRank):
    id = "logrank-events"
    title = "Time to event: log-rank, required events"
    params = (_HR, ParamSpec("ratio", "allocation ratio n2/n1", "ratio", 1.0,
                             "subjects in the new arm per subject in the control arm", low=0.0, high=1000.0,
                             soft=(0.25, 4.0), step=0.05), _FREEDMAN)
    n = NSpec("events", "events", 4, 200, (4, 1000), "number of events (deaths, relapses...) observed in both arms")

    def statistic(self, p, sizes):
        events = sizes[0]
        r = p["ratio"]
        nc = self._z(p, events, r)
        se = (1 + r) / np.sqrt(events * r)
        return Statistic(Normal(0, 1), Normal(nc, 1), se, nc, lambda z: np.exp(z * se))

    def explain(self, p, sizes, st):
        return self._explain(p, sizes[0], p["ratio"], st)


@register
class LogRankSubjects(TwoGroups, _LogRank):
    id = "logrank-subjects"
    title = "Time to event: log-rank, subjects with accrual and follow-up"
    params = (_HR,
              ParamSpec("median_control", "median survival, control", "time units", 12.0,
                        "median time to event in the control arm (exponential survival)", low=0.0,
                        soft=(1.0, 120.0), step=0.5),
              ParamSpec("accrual", "accrual period A", "time units", 12.0,
                        "subjects enter uniformly over this period", low=0.0, low_closed=True,
                        soft=(0.0, 60.0), step=0.5),
              ParamSpec("follow_up", "further follow-up F", "time units", 12.0,
                        "follow-up after the last subject enters", low=0.0, low_closed=True,
                        soft=(0.0, 60.0), step=0.5),
              RATIO, _FREEDMAN)
    n = TWO_GROUP_N

    def check(self, p):
        super().check(p)
        lam = math.log(2) / p["median_control"]
        if float(event_probability(lam, p["accrual"], p["follow_up"])) < 1e-3:
            from .errors import InvalidParameter
            raise InvalidParameter("follow_up", "with the accrual period gives almost no events (under 0.1% "
                                   "of the control arm); lengthen the follow-up", p["follow_up"])

    def events(self, p, sizes):
        n1, n2 = sizes
        lam1 = math.log(2) / p["median_control"]
        lam2 = lam1 * np.asarray(p["hr"], dtype=float)
        p1 = event_probability(lam1, p["accrual"], p["follow_up"])
        p2 = event_probability(lam2, p["accrual"], p["follow_up"])
        return n1 * p1 + n2 * p2, p1, p2

    def statistic(self, p, sizes):
        n1, n2 = sizes
        d, _, _ = self.events(p, sizes)
        r = n2 / n1
        nc = self._z(p, d, r)
        se = (1 + r) / np.sqrt(d * r)
        return Statistic(Normal(0, 1), Normal(nc, 1), se, nc, lambda z: np.exp(z * se))

    def explain(self, p, sizes, st):
        n1, n2 = sizes
        d, p1, p2 = self.events(p, sizes)
        ex = self._explain(p, d, n2 / n1, st)
        ex.extra = [("expected events", f"P(event) control {fmt(p1)}, new {fmt(p2)} (exponential, accrual "
                     f"{fmt(p['accrual'])}, follow-up {fmt(p['follow_up'])}): D = {fmt(n1)}·{fmt(p1)} + "
                     f"{fmt(n2)}·{fmt(p2)} = {fmt(d)}")]
        return ex
