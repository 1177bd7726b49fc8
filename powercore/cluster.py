"""Cluster-randomised two-arm trials, for means and for proportions.

Clusters of mean size m are randomised; outcomes within a cluster correlate
with intracluster correlation ρ (ICC). The design effect for unequal cluster
sizes with coefficient of variation cv is DE = 1 + ((cv² + 1)·m − 1)·ρ
(Eldridge, Ashby and Kerry 2006; cv = 0 gives the familiar 1 + (m − 1)ρ).
Each arm's information is that of k·m/DE independent subjects. Means use a t
test with 2(k − 1) degrees of freedom (the cluster-level analysis); proportions
a z test with unpooled variance.

Two ways to find n: ``*-clusters`` designs count clusters per arm for a given
cluster size; ``*-size`` designs count subjects per cluster for a given number
of clusters. More subjects per cluster help only up to a limit: as m → ∞ the
variance per arm tends to ρ(cv² + 1)·σ²/k, so some targets cannot be reached
by any cluster size, and the design says so.
"""
from __future__ import annotations

import numpy as np

from .design import Design, Explanation, Statistic, fmt, register
from .distributions import Normal, StudentT
from .spec import NSpec, ParamSpec
from .standard import PerProportion, PerSD

__all__ = ["ClusterMeansClusters", "ClusterMeansSize", "ClusterPropsClusters", "ClusterPropsSize",
           "design_effect"]


def design_effect(m, icc, cv=0.0):
    """Design effect 1 + ((cv² + 1)·m − 1)·ρ for mean cluster size m (Eldridge et al. 2006)."""
    m, icc, cv = (np.asarray(v, dtype=float) for v in (m, icc, cv))
    return 1.0 + ((cv * cv + 1.0) * m - 1.0) * icc


_ICC = ParamSpec("icc", "intracluster correlation ρ", "correlation", 0.05,
                 "correlation between outcomes of two subjects in the same cluster", low=0.0, high=1.0,
                 low_closed=True, soft=(0.0, 0.3), step=0.005)
_CV = ParamSpec("cv", "CV of cluster sizes", "ratio", 0.0,
                "coefficient of variation of the cluster sizes (0: all clusters the same size)",
                low=0.0, high=10.0, low_closed=True, soft=(0.0, 1.5), step=0.05)
_M = ParamSpec("m", "subjects per cluster m", "subjects", 20.0, "mean number of subjects per cluster",
               low=1.0, high=1e6, low_closed=True, soft=(1.0, 200.0), step=1.0)
_K = ParamSpec("k", "clusters per arm k", "clusters", 10.0, "number of clusters in each arm",
               low=2.0, high=1e6, low_closed=True, soft=(2.0, 100.0), step=1.0)
_DELTA = ParamSpec("delta", "difference δ", "data units", 5.0, "mean in the intervention arm minus control",
                   soft=(-20.0, 20.0), step=0.1)
_SD = ParamSpec("sd", "SD σ of single outcomes", "data units", 10.0, "total SD of a single subject's outcome",
                low=0.0, soft=(0.5, 40.0), step=0.1)
_P1 = ParamSpec("p1", "proportion in the control arm p1", "proportion", 0.3, "proportion with the outcome, control",
                low=0.0, high=1.0, soft=(0.01, 0.99), step=0.005)
_DP = ParamSpec("delta", "difference p2 − p1", "proportion", 0.1, "intervention proportion minus control",
                low=-1.0, high=1.0, soft=(-0.5, 0.5), step=0.005)

_CLUSTERS_N = NSpec("clusters per arm", "clusters in both arms", 2, 10, (2, 100),
                    "number of clusters in each arm; subjects per cluster is the parameter m; the groups "
                    "are counted in clusters")
_SIZE_N = NSpec("subjects per cluster", "subjects in both arms", 1, 20, (1, 200),
                "mean number of subjects per cluster; clusters per arm is the parameter k; the groups are "
                "counted in subjects per arm")


class _Cluster(Design):
    family = "cluster randomised"
    counts_clusters = True

    def km(self, p, sizes):
        """Clusters per arm and subjects per cluster, from the group sizes."""
        a = sizes[0]
        return (a, p["m"]) if self.counts_clusters else (p["k"], a / p["k"])

    def group_sizes(self, p, n, integer=True):
        """Clusters per arm (cluster-count designs) or subjects per arm (cluster-size designs)."""
        n = np.asarray(n, dtype=float)
        a = n if self.counts_clusters else n * p["k"]
        return a, a

    def check(self, p):
        super().check(p)
        if "k" in p and not float(p["k"]).is_integer():
            from .errors import InvalidParameter
            raise InvalidParameter("k", "must be a whole number of clusters", p["k"])


class _ClusterMeans(PerSD, _Cluster):
    statistic_symbol = "t"
    estimate_label = "difference in arm means"
    test = "t test on cluster means, 2(k − 1) degrees of freedom"
    method = ("approximate: design effect 1 + ((cv² + 1)m − 1)ρ (Eldridge, Ashby and Kerry 2006) with a "
              "noncentral t on 2(k − 1) df")
    notes = ("Approximation: the design effect with cv is accurate for cluster sizes that vary moderately; "
             "with few clusters (k below about 10 per arm) prefer simulation.",)

    def _parts(self, p, sizes):
        k, m = self.km(p, sizes)
        de = design_effect(m, p["icc"], p["cv"])
        se = p["sd"] * np.sqrt(2 * de / (k * m))
        return k, m, de, se

    def statistic(self, p, sizes):
        k, m, de, se = self._parts(p, sizes)
        nc = np.asarray(p["delta"]) / se
        df = 2 * (k - 1)
        return Statistic(StudentT(df), StudentT(df, nc), se, nc, lambda t: t * se)

    def explain(self, p, sizes, st):
        k, m, de, se = self._parts(p, sizes)
        return Explanation(
            se=(f"SE = σ·√(2·DE/(k·m)) = {fmt(p['sd'])}·√(2·{fmt(de)}/({fmt(k)}·{fmt(m)})) = {fmt(se)}"),
            null=f"T ~ t({fmt(2 * (k - 1))})", alt=f"T ~ noncentral t({fmt(2 * (k - 1))}, λ = {fmt(st.noncentrality)})",
            noncentrality=f"λ = δ/SE = {fmt(st.noncentrality)}",
            extra=[("design effect", f"DE = 1 + ((cv² + 1)·m − 1)·ρ = 1 + (({fmt(p['cv'])}² + 1)·{fmt(m)} − 1)·"
                    f"{fmt(p['icc'])} = {fmt(de)}; {fmt(k * m)} subjects per arm count as {fmt(k * m / de)}")])


class _ClusterProps(PerProportion, _Cluster):
    estimate_label = "difference in proportions p̂2 − p̂1"
    test = "z test of two proportions inflated by the design effect"
    method = ("approximate: unpooled normal approximation with variance multiplied by the design effect "
              "1 + ((cv² + 1)m − 1)ρ (Eldridge, Ashby and Kerry 2006)")
    notes = ("Approximation: accurate when every arm has at least about 10 clusters and 10 expected events.",)

    def _parts(self, p, sizes):
        k, m = self.km(p, sizes)
        de = design_effect(m, p["icc"], p["cv"])
        p1, p2 = p["p1"], p["p1"] + np.asarray(p["delta"])
        se = np.sqrt((p1 * (1 - p1) + p2 * (1 - p2)) * de / (k * m))
        return k, m, de, se

    def statistic(self, p, sizes):
        k, m, de, se = self._parts(p, sizes)
        nc = np.asarray(p["delta"]) / se
        return Statistic(Normal(0, 1), Normal(nc, 1), se, nc, lambda z: z * se)

    def explain(self, p, sizes, st):
        k, m, de, se = self._parts(p, sizes)
        return Explanation(
            se=f"SE = √((p1q1 + p2q2)·DE/(k·m)) = {fmt(se)}", null="Z ~ N(0, 1)",
            alt=f"Z ~ N({fmt(st.noncentrality)}, 1)", noncentrality=f"λ = (p2 − p1)/SE = {fmt(st.noncentrality)}",
            extra=[("design effect", f"DE = 1 + ((cv² + 1)·m − 1)·ρ = {fmt(de)}; {fmt(k * m)} subjects per arm "
                    f"count as {fmt(k * m / de)}")])


class _SizeCeiling:
    """For designs counting subjects per cluster: the power as m → ∞, a ceiling no cluster size passes."""

    counts_clusters = False
    n = _SIZE_N

    def power_ceiling(self, p, alpha, direction):
        from .engine import power_at
        return float(power_at(self, p, 1e12, alpha, direction)), (
            f"with k = {p['k']:g} clusters per arm and ICC {p['icc']:g}, the variance per arm cannot fall "
            f"below ρ(cv² + 1)σ²/k however many subjects each cluster has; add clusters instead")


@register
class ClusterMeansClusters(_ClusterMeans):
    id = "cluster-means-clusters"
    title = "Cluster trial, means: clusters per arm"
    params = (_DELTA, _SD, _ICC, _M, _CV)
    n = _CLUSTERS_N


@register
class ClusterMeansSize(_SizeCeiling, _ClusterMeans):
    id = "cluster-means-size"
    title = "Cluster trial, means: subjects per cluster"
    params = (_DELTA, _SD, _ICC, _K, _CV)


@register
class ClusterPropsClusters(_ClusterProps):
    id = "cluster-proportions-clusters"
    title = "Cluster trial, proportions: clusters per arm"
    params = (_P1, _DP, _ICC, _M, _CV)
    n = _CLUSTERS_N


@register
class ClusterPropsSize(_SizeCeiling, _ClusterProps):
    id = "cluster-proportions-size"
    title = "Cluster trial, proportions: subjects per cluster"
    params = (_P1, _DP, _ICC, _K, _CV)
