"""Sampling distributions of test statistics, vectorised and guarded.

Every class offers ``pdf``, ``cdf``, ``sf``, ``ppf``, ``isf`` and the four
rejection-region helpers used by the engine:

* ``crit_upper(a)`` — the smallest ``c`` with ``P(T >= c) <= a``;
* ``crit_lower(a)`` — the largest ``c`` with ``P(T <= c) <= a``;
* ``tail_upper(c)`` — ``P(T >= c)``; ``tail_lower(c)`` — ``P(T <= c)``.

For continuous distributions these are ``isf``, ``ppf``, ``sf`` and ``cdf``.
Upper tails always come from ``sf``/``isf``, never from ``1 - cdf``.

Guards against scipy 1.17 (pinned by ``tests/test_scipy_defects.py``):

* ``scipy.special.nctdtr`` (and ``stats.nct.cdf``) return NaN far in the lower
  tail when the noncentrality is large; we fall back on the mirror identity
  ``cdf(x; df, nc) = sf(-x; df, -nc)`` and clamp to [0, 1].
* ``stats.ncf.sf(x, d1, d2, 0)`` is negative; at zero noncentrality we use the
  central F (and likewise the central chi-square).
"""
from __future__ import annotations

import warnings

import numpy as np
from scipy import special, stats
from scipy.integrate import IntegrationWarning, quad
from scipy.optimize import brentq

__all__ = ["Binomial", "ChiSquare", "FDist", "Normal", "SampleCorrelation", "StudentT"]


class _quiet(warnings.catch_warnings):
    """Silence scipy's convergence warnings far in the tails, where results are clamped anyway."""

    def __enter__(self):
        out = super().__enter__()
        warnings.simplefilter("ignore", RuntimeWarning)
        self._np = np.errstate(all="ignore")
        self._np.__enter__()
        return out

    def __exit__(self, *exc):
        self._np.__exit__(*exc)
        return super().__exit__(*exc)


def _arr(x) -> np.ndarray:
    return np.asarray(x, dtype=float)


def _clip01(p) -> np.ndarray:
    """Clamp probabilities to [0, 1]; NaN becomes 0 (``np.fmax`` ignores NaN)."""
    return np.fmax(np.minimum(_arr(p), 1.0), 0.0)


def _split(mask, when_true, when_false, *args) -> np.ndarray:
    """Evaluate ``when_true`` where ``mask`` holds and ``when_false`` elsewhere, each on its part only."""
    args = np.broadcast_arrays(*[_arr(a) for a in args])
    mask = np.broadcast_to(mask, args[0].shape)
    out = np.empty(args[0].shape)
    if mask.any():
        out[mask] = when_true(*[a[mask] for a in args])
    if (~mask).any():
        out[~mask] = when_false(*[a[~mask] for a in args])
    return out


class _Continuous:
    discrete = False

    def crit_upper(self, a):
        return self.isf(a)

    def crit_lower(self, a):
        return self.ppf(a)

    def tail_upper(self, c):
        return self.sf(c)

    def tail_lower(self, c):
        return self.cdf(c)

    def span(self, q: float = 1e-4):
        """A range holding all but ``2q`` of the probability, for drawing."""
        return self.ppf(q), self.isf(q)


class Normal(_Continuous):
    """Normal distribution with location ``loc`` and scale ``scale``."""

    name = "normal"

    def __init__(self, loc=0.0, scale=1.0):
        self.loc, self.scale = _arr(loc), _arr(scale)

    def _z(self, x):
        return (_arr(x) - self.loc) / self.scale

    def pdf(self, x):
        z = self._z(x)
        return np.exp(-0.5 * z * z) / (np.sqrt(2 * np.pi) * self.scale)

    def cdf(self, x):
        return special.ndtr(self._z(x))

    def sf(self, x):
        return special.ndtr(-self._z(x))

    def ppf(self, q):
        return self.loc + self.scale * special.ndtri(_arr(q))

    def isf(self, q):
        return self.loc - self.scale * special.ndtri(_arr(q))


def nct_cdf(x, df, nc):
    """Noncentral t CDF with the NaN of ``nctdtr`` far in the lower tail routed around."""
    with _quiet():
        p = _arr(special.nctdtr(df, nc, x))
    bad = ~np.isfinite(p)
    if bad.any():
        x, df, nc = np.broadcast_arrays(_arr(x), _arr(df), _arr(nc))
        x, df, nc = (np.broadcast_to(a, p.shape) for a in (x, df, nc))
        with _quiet():
            alt = _arr(stats.nct.sf(-x[bad], df[bad], -nc[bad]))
        still = ~np.isfinite(alt)
        alt[still] = np.where(x[bad][still] < nc[bad][still], 0.0, 1.0)
        p = p.copy()
        p[bad] = alt
    return _clip01(p)


def nct_sf(x, df, nc):
    """Noncentral t survival function, from the mirror identity ``sf(x; nc) = cdf(-x; -nc)``."""
    return nct_cdf(-_arr(x), df, -_arr(nc))


class StudentT(_Continuous):
    """Student t with ``df`` degrees of freedom and noncentrality ``nc`` (``None``: central)."""

    name = "t"

    def __init__(self, df, nc=None):
        self.df = _arr(df)
        self.central = nc is None
        self.nc = np.zeros(()) if nc is None else _arr(nc)

    def pdf(self, x):
        if self.central:
            return stats.t.pdf(x, self.df)
        try:
            with _quiet():
                f = _arr(stats.nct.pdf(x, self.df, self.nc))
            if np.all(np.isfinite(f)):
                return f
        except (OverflowError, FloatingPointError):
            pass  # scipy 1.17: nct.pdf overflows (tgamma) from about 500 df
        x = _arr(x)
        h = 1e-4 * (1.0 + np.abs(x))
        return np.maximum((nct_cdf(x + h, self.df, self.nc) - nct_cdf(x - h, self.df, self.nc)) / (2 * h), 0.0)

    def cdf(self, x):
        if self.central:
            return special.stdtr(self.df, _arr(x))
        return nct_cdf(x, self.df, self.nc)

    def sf(self, x):
        if self.central:
            return special.stdtr(self.df, -_arr(x))
        return nct_sf(x, self.df, self.nc)

    def ppf(self, q):
        if self.central:
            return special.stdtrit(self.df, _arr(q))
        with _quiet():
            return stats.nct.ppf(q, self.df, self.nc)

    def isf(self, q):
        if self.central:
            return -special.stdtrit(self.df, _arr(q))
        with _quiet():
            return stats.nct.isf(q, self.df, self.nc)


class FDist(_Continuous):
    """F with ``d1``, ``d2`` degrees of freedom and noncentrality ``nc`` (0: central)."""

    name = "F"

    def __init__(self, d1, d2, nc=0.0):
        # scipy 1.17: ncf.sf is 0 for a subnormal noncentrality (2.5e-323); treat it as central
        nc = _arr(nc)
        self.d1, self.d2, self.nc = _arr(d1), _arr(d2), np.where(nc < 1e-300, 0.0, nc)

    def pdf(self, x):
        return _split(self.nc == 0, lambda x, a, b, n: stats.f.pdf(x, a, b),
                      lambda x, a, b, n: stats.ncf.pdf(x, a, b, n), x, self.d1, self.d2, self.nc)

    def cdf(self, x):
        return _clip01(_split(self.nc == 0, lambda x, a, b, n: special.fdtr(a, b, np.maximum(x, 0)),
                              lambda x, a, b, n: stats.ncf.cdf(x, a, b, n), x, self.d1, self.d2, self.nc))

    def sf(self, x):
        return _clip01(_split(self.nc == 0, lambda x, a, b, n: special.fdtrc(a, b, np.maximum(x, 0)),
                              lambda x, a, b, n: stats.ncf.sf(x, a, b, n), x, self.d1, self.d2, self.nc))

    def ppf(self, q):
        return _split(self.nc == 0, lambda q, a, b, n: special.fdtri(a, b, q),
                      lambda q, a, b, n: stats.ncf.ppf(q, a, b, n), q, self.d1, self.d2, self.nc)

    def isf(self, q):
        return _split(self.nc == 0, lambda q, a, b, n: stats.f.isf(q, a, b),
                      lambda q, a, b, n: stats.ncf.isf(q, a, b, n), q, self.d1, self.d2, self.nc)


class ChiSquare(_Continuous):
    """Chi-square with ``df`` degrees of freedom and noncentrality ``nc`` (0: central)."""

    name = "chi-square"

    def __init__(self, df, nc=0.0):
        self.df, self.nc = _arr(df), _arr(nc)

    def pdf(self, x):
        return _split(self.nc == 0, lambda x, d, n: stats.chi2.pdf(x, d),
                      lambda x, d, n: stats.ncx2.pdf(x, d, n), x, self.df, self.nc)

    def cdf(self, x):
        return _clip01(_split(self.nc == 0, lambda x, d, n: special.chdtr(d, np.maximum(x, 0)),
                              lambda x, d, n: stats.ncx2.cdf(x, d, n), x, self.df, self.nc))

    def sf(self, x):
        return _clip01(_split(self.nc == 0, lambda x, d, n: special.chdtrc(d, np.maximum(x, 0)),
                              lambda x, d, n: stats.ncx2.sf(x, d, n), x, self.df, self.nc))

    def ppf(self, q):
        return _split(self.nc == 0, lambda q, d, n: special.chdtri(d, 1 - q),
                      lambda q, d, n: stats.ncx2.ppf(q, d, n), q, self.df, self.nc)

    def isf(self, q):
        return _split(self.nc == 0, lambda q, d, n: special.chdtri(d, q),
                      lambda q, d, n: stats.ncx2.isf(q, d, n), q, self.df, self.nc)


class Binomial:
    """Number of successes in ``n`` trials with success probability ``p`` (exact, discrete)."""

    name = "binomial"
    discrete = True

    def __init__(self, n, p):
        self.n, self.p = _arr(n), _arr(p)
        self._n_int = np.rint(self.n).astype(np.int64)   # scipy wants whole trial counts as integers

    def pdf(self, k):
        """Probability mass at the integers ``k``."""
        return stats.binom.pmf(k, self.n, self.p)

    def cdf(self, k):
        k, n, p = np.broadcast_arrays(np.floor(_arr(k)), self._n_int, self.p)
        kk = np.clip(k, 0, n).astype(np.int64)
        return np.where(k < 0, 0.0, np.where(k >= n, 1.0, special.bdtr(kk, n, p)))

    def sf(self, k):
        """``P(X > k)``."""
        k, n, p = np.broadcast_arrays(np.floor(_arr(k)), self._n_int, self.p)
        kk = np.clip(k, 0, n).astype(np.int64)
        return np.where(k < 0, 1.0, np.where(k >= n, 0.0, special.bdtrc(kk, n, p)))

    def tail_upper(self, c):
        return self.sf(_arr(c) - 1)

    def tail_lower(self, c):
        return self.cdf(c)

    def crit_upper(self, a):
        a = _arr(a)
        c = np.clip(_arr(stats.binom.isf(a, self.n, self.p)) + 1, 0, self.n + 1)
        for _ in range(3):  # settle float round-off of isf, both ways
            c = np.where(self.tail_upper(c - 1) <= a, c - 1, c)
            c = np.where(self.tail_upper(c) > a, c + 1, c)
        return c

    def crit_lower(self, a):
        a = _arr(a)
        c = np.clip(_arr(stats.binom.ppf(a, self.n, self.p)), -1, self.n)
        for _ in range(3):
            c = np.where(self.tail_lower(c) > a, c - 1, c)
            c = np.where(self.tail_lower(c + 1) <= a, c + 1, c)
        return c

    def ppf(self, q):
        return stats.binom.ppf(q, self.n, self.p)

    def isf(self, q):
        return stats.binom.isf(q, self.n, self.p)

    def span(self, q: float = 1e-4):
        return self.ppf(q), self.isf(q)


class _Correlation1:
    """Exact distribution of r for scalar ``n`` and ``rho`` (see SampleCorrelation)."""

    def __init__(self, n: float, rho: float):
        self.n, self.rho = float(n), float(rho)
        self.zm = float(np.arctanh(self.rho))
        self.zs = 1.0 / np.sqrt(max(self.n - 3.0, 0.5))

    def pdf(self, r):
        r = np.clip(_arr(r), -1 + 1e-15, 1 - 1e-15)
        n, rho = self.n, self.rho
        logf = (np.log(n - 2) + special.gammaln(n - 1) - 0.5 * np.log(2 * np.pi) - special.gammaln(n - 0.5)
                + (n - 1) / 2 * np.log1p(-rho * rho) + (n - 4) / 2 * np.log1p(-r * r)
                - (n - 1.5) * np.log1p(-rho * r))
        return np.exp(logf) * special.hyp2f1(0.5, 0.5, n - 0.5, (1 + rho * r) / 2)

    def _zpdf(self, z):
        return self.pdf(np.tanh(z)) / np.cosh(z) ** 2

    def mass(self, a: float, b: float) -> float:
        """Probability that atanh(r) lies in [a, b]."""
        lo, hi = max(a, self.zm - 40 * self.zs), min(b, self.zm + 40 * self.zs)
        if hi <= lo:
            return 0.0
        inner = [self.zm] if lo < self.zm < hi else None
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", IntegrationWarning)
            val, _ = quad(self._zpdf, lo, hi, epsabs=1e-15, epsrel=1e-10, limit=200, points=inner)
        return val

    def quantile(self, q: float, tail: str) -> float:
        if self.rho == 0.0:  # exact via t with n − 2 degrees of freedom
            t = special.stdtrit(self.n - 2, q)
            t = -t if tail == "upper" else t
            return float(t / np.sqrt(self.n - 2 + t * t))
        if tail == "upper":
            def f(z):
                return self.mass(z, np.inf) - q
        else:
            def f(z):
                return self.mass(-np.inf, z) - q
        return float(np.tanh(brentq(f, self.zm - 40 * self.zs, self.zm + 40 * self.zs, xtol=1e-13)))


class SampleCorrelation(_Continuous):
    """Exact distribution of Pearson's r from ``n`` bivariate-normal pairs with correlation ``rho``.

    Density from Hotelling (1953); probabilities by adaptive quadrature on
    Fisher's z scale, where the density is close to normal. Parameters may be
    arrays; evaluation loops over their elements (slower than the other classes).
    """

    name = "sample correlation"

    def __init__(self, n, rho):
        self.n, self.rho = _arr(n), _arr(rho)

    def _each(self, fn, x):
        x, n, rho = np.broadcast_arrays(_arr(x), self.n, self.rho)
        out = np.empty(x.shape)
        for idx in np.ndindex(x.shape):
            out[idx] = fn(_Correlation1(n[idx], rho[idx]), float(x[idx]))
        return out

    def pdf(self, x):
        return self._each(lambda d, v: float(d.pdf(v)), x)

    def cdf(self, x):
        with np.errstate(divide="ignore"):
            return _clip01(self._each(lambda d, v: d.mass(-np.inf, float(np.arctanh(np.clip(v, -1, 1)))), x))

    def sf(self, x):
        with np.errstate(divide="ignore"):
            return _clip01(self._each(lambda d, v: d.mass(float(np.arctanh(np.clip(v, -1, 1))), np.inf), x))

    def ppf(self, q):
        return self._each(lambda d, v: d.quantile(v, "lower"), q)

    def isf(self, q):
        return self._each(lambda d, v: d.quantile(v, "upper"), q)
