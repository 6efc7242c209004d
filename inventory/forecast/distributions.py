"""Distributions of demand over a number of periods, vectorised over parts.

One small module shared by the forecaster (which builds the distribution) and the
replenishment policy (which reads quantiles and expected shortages from it), so both the
backtest and the planner use the same arithmetic.

A :class:`DemandDistribution` describes demand in ONE period for each of ``n`` parts; its
:meth:`DemandDistribution.over` gives the distribution of the sum over ``k`` periods
(``k`` may differ per part and need not be whole, e.g. a lead time of 0.5 month):

- ``"poisson"``: mean ``mean``; over k periods Poisson(k * mean).
- ``"nbinom"``: negative binomial with mean ``mean`` and variance-to-mean ratio ``vmr``
  (>= 1; 1 is Poisson). In scipy's terms ``nbinom(n, p)`` with ``p = 1 / vmr`` and
  ``n = mean / (vmr - 1)``. The sum of k independent periods keeps ``p`` and multiplies
  ``n`` by k, so the ratio is the same at every horizon: the compound-Poisson view of lumpy
  demand, where variance/mean = E[size^2] / E[size] is a property of the part.
- ``"normal"``: mean ``mean`` and standard deviation ``sd`` per period; over k periods mean
  k * mean and sd sqrt(k) * sd (independent periods).

Discrete distributions are evaluated at whole units. The expected shortage
E[(D - s)^+] (the first-order loss function) is exact for all three:
E[(D - s)^+] = mean - s + s F(s) - E[D 1{D <= s}], with
E[D 1{D <= s}] = mean * F(s - 1; lambda) for Poisson and mean * F(s - 1; n + 1, p) for the
negative binomial (the size-biased distribution is the same family shifted by one), and
sigma * G((s - mean) / sigma) for the normal, G the standard normal loss function.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy import special, stats

Kind = Literal["poisson", "nbinom", "normal"]

FloatArray = NDArray[np.float64]


def normal_loss(k: ArrayLike) -> FloatArray:
    """Standard normal first-order loss G(k) = phi(k) - k (1 - Phi(k)) = E[(Z - k)^+].

    Silver, Pyke and Peterson, Appendix B; the identity is in REFERENCE.md section 8.
    """
    kk: FloatArray = np.asarray(k, dtype=float)
    return np.asarray(stats.norm.pdf(kk) - kk * stats.norm.sf(kk), dtype=float)


def _nbinom_cdf(x: FloatArray, n: FloatArray, p: FloatArray) -> FloatArray:
    """CDF of scipy's ``nbinom(n, p)`` at whole numbers ``x`` (0 below zero).

    Uses the regularised incomplete beta function, F(x) = I_p(n, x + 1), which is what
    scipy's own ``nbinom.cdf`` computes, without its argument checking overhead.
    """
    x = np.floor(x)
    out = np.zeros(np.broadcast(x, n, p).shape)
    ok = np.broadcast_to(x >= 0, out.shape)
    xb, nb, pb = (np.broadcast_to(a, out.shape) for a in (x, n, p))
    out[ok] = special.betainc(nb[ok], xb[ok] + 1.0, pb[ok])
    return out


def _poisson_cdf(x: FloatArray, lam: FloatArray) -> FloatArray:
    """CDF of Poisson(lam) at whole numbers ``x`` (0 below zero)."""
    x = np.floor(x)
    out = np.zeros(np.broadcast(x, lam).shape)
    ok = np.broadcast_to(x >= 0, out.shape)
    xb, lb = (np.broadcast_to(a, out.shape) for a in (x, lam))
    out[ok] = special.pdtr(xb[ok], lb[ok])
    return out


@dataclass(frozen=True)
class DemandDistribution:
    """Per-period demand distribution of ``n`` parts (arrays of shape ``(n,)``).

    ``vmr`` is used by ``"nbinom"`` (a part with ``vmr`` <= 1 falls back to Poisson);
    ``sd`` by ``"normal"``. Build with :func:`poisson`, :func:`negative_binomial` or
    :func:`normal` rather than directly.
    """

    kind: Kind
    mean: FloatArray
    vmr: FloatArray | None = None
    sd: FloatArray | None = None

    def __len__(self) -> int:
        return int(np.size(self.mean))

    # -- horizons -------------------------------------------------------------------------

    def over(self, periods: ArrayLike) -> DemandDistribution:
        """Distribution of the demand summed over ``periods`` periods (scalar or per part)."""
        k = np.asarray(periods, dtype=float)
        if np.any(k < 0):
            raise ValueError("periods must be >= 0")
        mean = self.mean * k
        if self.kind == "normal":
            assert self.sd is not None
            return DemandDistribution("normal", mean, sd=self.sd * np.sqrt(k))
        return DemandDistribution(self.kind, mean, vmr=self.vmr)

    def variance(self) -> FloatArray:
        if self.kind == "poisson":
            return self.mean.copy()
        if self.kind == "nbinom":
            return self.mean * self._effective_vmr()
        assert self.sd is not None
        return self.sd**2

    # -- scipy-style evaluation -----------------------------------------------------------

    def _effective_vmr(self) -> FloatArray:
        assert self.vmr is not None
        return np.maximum(np.broadcast_to(self.vmr, self.mean.shape), 1.0)

    def _nb_params(self) -> tuple[FloatArray, FloatArray, NDArray[np.bool_]]:
        """(n, p, is_nb) with Poisson parts marked False."""
        vmr = self._effective_vmr()
        is_nb = (vmr > 1.0 + 1e-9) & (self.mean > 0)
        p = np.where(is_nb, 1.0 / np.where(is_nb, vmr, 2.0), 0.5)
        n = np.where(is_nb, self.mean / np.where(is_nb, vmr - 1.0, 1.0), 1.0)
        return n, p, is_nb

    def cdf(self, at: ArrayLike) -> FloatArray:
        """P(D <= x); for the discrete kinds x is floored to whole units."""
        x: FloatArray = np.asarray(at, dtype=float)
        mean = self.mean
        if self.kind == "normal":
            assert self.sd is not None
            sd = np.maximum(self.sd, 1e-12)
            return stats.norm.cdf((x - mean) / sd)
        zero = mean <= 0
        if self.kind == "poisson":
            out = _poisson_cdf(x, np.where(zero, 1.0, mean))
        else:
            n, p, is_nb = self._nb_params()
            out = np.where(
                is_nb,
                _nbinom_cdf(x, n, p),
                _poisson_cdf(x, np.where(zero, 1.0, mean)),
            )
        return np.where(zero, (np.floor(x) >= 0).astype(float), out)

    def expected_shortage(self, level: ArrayLike) -> FloatArray:
        """E[(D - s)^+], the expected units of demand above a stock level ``s``.

        Exact for the discrete kinds at whole ``s`` (see the module docstring).
        """
        s: FloatArray = np.asarray(level, dtype=float)
        mean = self.mean
        if self.kind == "normal":
            assert self.sd is not None
            sd = np.maximum(self.sd, 1e-12)
            return sd * normal_loss((s - mean) / sd)
        s = np.floor(s)
        zero = mean <= 0
        if self.kind == "poisson":
            lam = np.where(zero, 1.0, mean)
            partial = mean * _poisson_cdf(s - 1, lam)
        else:
            n, p, is_nb = self._nb_params()
            lam = np.where(zero, 1.0, mean)
            partial = mean * np.where(
                is_nb, _nbinom_cdf(s - 1, n + 1.0, p), _poisson_cdf(s - 1, lam)
            )
        loss = mean - s + s * self.cdf(s) - partial
        loss = np.maximum(loss, np.maximum(mean - s, 0.0))  # guard rounding below Jensen
        return np.where(zero, np.maximum(-s, 0.0), loss)

    def quantile(self, prob: ArrayLike) -> FloatArray:
        """Smallest whole x with P(D <= x) >= q (discrete kinds); the normal quantile else."""
        q: FloatArray = np.asarray(prob, dtype=float)
        mean = self.mean
        if self.kind == "normal":
            assert self.sd is not None
            return mean + self.sd * stats.norm.ppf(q)
        zero = mean <= 0
        if self.kind == "poisson":
            out = stats.poisson.ppf(q, np.where(zero, 1.0, mean))
        else:
            n, p, is_nb = self._nb_params()
            out = np.where(
                is_nb,
                stats.nbinom.ppf(q, n, p),
                stats.poisson.ppf(q, np.where(zero, 1.0, mean)),
            )
        return np.where(zero, 0.0, out)

    def take(self, index: ArrayLike) -> DemandDistribution:
        """The distribution of a subset of parts (fancy or boolean index)."""
        idx = np.asarray(index)
        return DemandDistribution(
            self.kind,
            self.mean[idx],
            vmr=None if self.vmr is None else np.broadcast_to(self.vmr, self.mean.shape)[idx],
            sd=None if self.sd is None else np.broadcast_to(self.sd, self.mean.shape)[idx],
        )


def poisson(mean: ArrayLike) -> DemandDistribution:
    """Poisson demand per period (variance = mean)."""
    m = np.maximum(np.atleast_1d(np.asarray(mean, dtype=float)), 0.0)
    return DemandDistribution("poisson", m)


def negative_binomial(mean: ArrayLike, vmr: ArrayLike) -> DemandDistribution:
    """Negative binomial demand per period with a variance-to-mean ratio ``vmr`` (values
    below 1 are raised to 1, i.e. Poisson)."""
    m = np.maximum(np.atleast_1d(np.asarray(mean, dtype=float)), 0.0)
    v = np.broadcast_to(np.asarray(vmr, dtype=float), m.shape).astype(float)
    return DemandDistribution("nbinom", m, vmr=np.maximum(v, 1.0))


def negative_binomial_from_moments(mean: ArrayLike, variance: ArrayLike) -> DemandDistribution:
    """Negative binomial from a mean and variance (variance <= mean gives Poisson)."""
    m = np.maximum(np.atleast_1d(np.asarray(mean, dtype=float)), 0.0)
    var = np.broadcast_to(np.asarray(variance, dtype=float), m.shape)
    vmr = np.where(m > 0, var / np.where(m > 0, m, 1.0), 1.0)
    return negative_binomial(m, vmr)


def normal(mean: ArrayLike, sd: ArrayLike) -> DemandDistribution:
    """Normal demand per period (mean, standard deviation)."""
    m = np.atleast_1d(np.asarray(mean, dtype=float))
    s = np.broadcast_to(np.asarray(sd, dtype=float), m.shape).astype(float)
    return DemandDistribution("normal", m.astype(float), sd=np.maximum(s, 0.0))
