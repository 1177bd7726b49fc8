"""Pin the scipy 1.17 defects that powercore.distributions routes around (DESIGN.md §2).

Each defect has two tests: one that asserts the defect still exists in the installed
scipy (so that an upgrade that fixes or changes it fails loudly, with a message saying
which guard may go), and one that checks powercore's guarded function at the same point
against an independent reference. The references are direct scipy computations along a
different route (numerical integration over the chi-square mixing distribution, the
central F) and elementary bounds, named beside each value.
"""
from __future__ import annotations

import math
import warnings

import numpy as np
import pytest
import scipy
from scipy import integrate, special, stats

from powercore.distributions import FDist, StudentT, nct_cdf, nct_sf

# Points far in the lower tail where scipy 1.17's nct.cdf returns NaN (nc above about 5).
NCT_NAN_POINTS = [(-5.0, 5.0, 7.0), (-10.0, 5.0, 7.0), (-6.0, 20.0, 10.0)]
# Powers are reported to 6 digits and never matter below 1e-15; errors smaller than this are harmless.
NEGLIGIBLE = 1e-15


def nct_cdf_by_integration(x, df, nc):
    """P(T ≤ x) for T = (Z + nc)/√(V/df): ∫ Φ(x·√(v/df) − nc) dχ²_df(v) (direct scipy computation)."""
    def integrand(v):
        return special.ndtr(x * math.sqrt(v / df) - nc) * stats.chi2.pdf(v, df)
    hi = stats.chi2.isf(1e-300, df) if df < 50 else df + 60 * math.sqrt(2 * df)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", integrate.IntegrationWarning)
        val, _ = integrate.quad(integrand, 0.0, hi, epsabs=1e-300, epsrel=1e-10, limit=400)
    return val


def test_scipy_version_is_the_one_pinned():
    """The defects below were measured on scipy 1.17; a different minor version must re-check them."""
    major, minor = (int(v) for v in scipy.__version__.split(".")[:2])
    assert (major, minor) == (1, 17), (
        f"scipy {scipy.__version__} installed; re-run tests/test_scipy_defects.py and update the pins")


@pytest.mark.parametrize("x, df, nc", NCT_NAN_POINTS)
def test_scipy_nct_cdf_is_still_nan_far_in_the_lower_tail(x, df, nc):
    """scipy.stats.nct.cdf (and special.nctdtr) still return NaN far in the lower tail when nc > 5."""
    with np.errstate(all="ignore"):
        value = stats.nct.cdf(x, df, nc)
        raw = special.nctdtr(df, nc, x)
    assert math.isnan(value) and math.isnan(raw), (
        f"scipy fixed nct.cdf NaN at x={x}, df={df}, nc={nc} (got {value!r}, nctdtr {raw!r}); "
        "the NaN guard in powercore/distributions.py (nct_cdf) may go")


@pytest.mark.parametrize("x, df, nc", NCT_NAN_POINTS)
def test_powercore_nct_cdf_is_finite_and_right_where_scipy_is_nan(x, df, nc):
    """powercore's nct_cdf is finite, in [0, 1], below Φ(−nc), and within 1e-15 of numerical integration there."""
    ours = float(nct_cdf(x, df, nc))
    assert math.isfinite(ours) and 0.0 <= ours <= 1.0
    # For x ≤ 0, T ≤ x needs Z + nc ≤ 0, so P(T ≤ x) ≤ Φ(−nc) (elementary bound, no source needed).
    assert ours <= special.ndtr(-nc)
    reference = nct_cdf_by_integration(x, df, nc)  # direct scipy computation (quad over χ²)
    assert ours == pytest.approx(reference, rel=1e-6, abs=NEGLIGIBLE)


def test_scipy_nct_cdf_is_still_wrong_by_orders_of_magnitude_at_tiny_values():
    """At x = −4.3, df = 2, nc = 17.3 scipy's nct.cdf is finite but far above the bound Φ(−nc) it must respect."""
    value = stats.nct.cdf(-4.3, 2, 17.3)
    bound = special.ndtr(-17.3)  # P(T ≤ x < 0) ≤ P(Z ≤ −nc): elementary bound, no source needed
    assert value > 1e6 * bound, (f"scipy fixed nct.cdf's tiny-value error at (−4.3, 2, 17.3) (got {value!r}, "
                                 f"bound {bound!r}); re-check the guard in powercore/distributions.py")


def test_powercore_nct_cdf_error_at_tiny_values_is_negligible():
    """Where scipy's tiny nct.cdf value is wrong, powercore's value is still within 1e-15 of the truth (harmless for power)."""
    ours = float(nct_cdf(-4.3, 2, 17.3))
    reference = nct_cdf_by_integration(-4.3, 2, 17.3)  # direct scipy computation (quad over χ²)
    assert 0.0 <= ours <= 1.0 and abs(ours - reference) <= NEGLIGIBLE


def test_scipy_nct_cdf_is_still_not_monotone_far_in_the_lower_tail():
    """Far in the lower tail with nc = 7, df = 5 scipy's nct.cdf is NaN at some points and not monotone where finite."""
    x = np.linspace(-10.0, 0.0, 11)
    with np.errstate(all="ignore"):
        values = stats.nct.cdf(x, 5, 7)
    finite = values[np.isfinite(values)]
    defect = np.isnan(values).any() or np.any(np.diff(finite) < 0)
    assert defect, ("scipy fixed nct.cdf in the far lower tail (NaN and non-monotone values at df=5, nc=7); "
                    "the guard in powercore/distributions.py (nct_cdf) may go")


def test_powercore_nct_cdf_is_negligibly_non_monotone_where_scipy_is():
    """powercore's nct_cdf on the same grid is finite, and any fall between points is below 1e-15 (far below any power of interest)."""
    x = np.linspace(-10.0, 0.0, 11)
    ours = nct_cdf(x, 5, 7)
    assert np.all(np.isfinite(ours)) and np.all((0 <= ours) & (ours <= 1))
    assert np.min(np.diff(ours)) >= -NEGLIGIBLE
    reference = np.array([nct_cdf_by_integration(v, 5, 7) for v in x])  # direct scipy computation
    np.testing.assert_allclose(ours, reference, rtol=1e-5, atol=NEGLIGIBLE)


def test_powercore_nct_sf_uses_the_mirror_identity_consistently():
    """nct_sf(x; nc) equals nct_cdf(−x; −nc), and StudentT tails agree with it at a NaN point of scipy."""
    x, df, nc = 5.0, 5.0, -7.0   # mirror of (−5, 5, 7)
    assert float(nct_sf(x, df, nc)) == float(nct_cdf(-x, df, -nc))
    t = StudentT(df, nc)
    assert math.isfinite(float(t.sf(x))) and math.isfinite(float(t.cdf(-x)))


def test_scipy_ncf_sf_is_still_negative_at_zero_noncentrality():
    """scipy.stats.ncf.sf(2.0, 3, 20, 0) is still negative instead of the central F tail."""
    value = stats.ncf.sf(2.0, 3, 20, 0)
    assert value < 0, (f"scipy fixed ncf.sf at zero noncentrality (got {value!r}); "
                       "the central-F guard in powercore/distributions.py (FDist) may go")


def test_powercore_fdist_sf_at_zero_noncentrality_is_the_central_f():
    """FDist(3, 20, 0).sf(2.0) equals scipy.stats.f.sf(2.0, 3, 20) and is a probability."""
    reference = stats.f.sf(2.0, 3, 20)  # direct scipy computation (central F)
    ours = float(FDist(3, 20, 0).sf(2.0))
    assert 0.0 <= ours <= 1.0
    assert ours == pytest.approx(reference, rel=1e-12)
    assert float(FDist(3, 20, 0).cdf(2.0)) == pytest.approx(stats.f.cdf(2.0, 3, 20), rel=1e-12)


def test_powercore_fdist_is_continuous_as_noncentrality_leaves_zero():
    """FDist.sf at a tiny noncentrality is next to the central value, so the zero-nc branch is not a jump."""
    central = float(FDist(3, 20, 0).sf(2.0))
    near = float(FDist(3, 20, 1e-8).sf(2.0))
    assert 0.0 <= near <= 1.0 and near == pytest.approx(central, abs=1e-6)


def test_scipy_ncf_sf_is_still_wrong_at_the_smallest_subnormal_noncentrality():
    """scipy.stats.ncf.sf(2.0, 3, 20, 5e-324) is still 0 (and warns that its series did not converge) instead of the central tail."""
    with np.errstate(all="ignore"), warnings.catch_warnings():
        warnings.simplefilter("ignore")
        value = stats.ncf.sf(2.0, 3, 20, 5e-324)
    central = stats.f.sf(2.0, 3, 20)  # direct scipy computation (central F)
    assert abs(value - central) > 0.1, (f"scipy fixed ncf.sf at subnormal noncentrality (got {value!r}); the "
                                        "subnormal guard in powercore/distributions.py (FDist) may go")


@pytest.mark.parametrize("nc", [5e-324, 1e-310, 1e-300])
def test_powercore_fdist_at_subnormal_noncentrality_is_the_central_f(nc):
    """FDist(3, 20, nc).sf(2.0) at subnormal or tiny nc equals the central F tail to 1e-12."""
    assert float(FDist(3, 20, nc).sf(2.0)) == pytest.approx(stats.f.sf(2.0, 3, 20), rel=1e-12)
