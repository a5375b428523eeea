"""Confidence intervals of simulated blocking: batch means, exact binomial, and their union.

A simulated blocking is a ratio of counts (blocked calls over offered calls). Two intervals
describe its uncertainty, each right where the other fails:

* **batch means** [1]_: the run is cut into consecutive batches; the Student-t interval of
  the batch ratios accounts for the correlation between successive calls (losses come in
  bursts while a link is full), but says nothing when few batches see a loss: with no loss
  in any batch it is ``[0, 0]``;
* **Clopper-Pearson** [2]_: the exact binomial interval of ``k`` losses in ``n`` calls,
  right for small counts (for ``k = 0`` its upper limit is ``1 - (alpha/2)^(1/n)``, about
  ``3.7 / n`` at 95 %; the "rule of three" ``3 / n`` is the one-sided limit), but too narrow
  when the calls are correlated.

:func:`blocking_interval` reports their union: the lower end the smaller of the two, the
upper end the larger. It is never narrower than what independent calls would allow, nor
than what the batches show. Where the counts are weighted (link blocking weighted by
bandwidth x holding), the binomial interval uses Kish's effective number of calls
``(sum w)^2 / sum w^2`` and ``k = p n_eff``, as Korn and Graubard do for weighted
proportions [3]_.

Quantiles come from :mod:`scipy.special` (``stdtrit``, ``betaincinv``): ``scipy.stats``
takes seconds to import.

References
----------
.. [1] A. M. Law, W. D. Kelton, *Simulation Modeling and Analysis*, 3rd ed., McGraw-Hill
   2000, ch. 9.
.. [2] C. J. Clopper, E. S. Pearson, "The use of confidence or fiducial limits illustrated
   in the case of the binomial", Biometrika 26 (1934) 404-413.
.. [3] E. L. Korn, B. I. Graubard, "Confidence intervals for proportions with small expected
   number of positive counts estimated from survey data", Survey Methodology 24 (1998)
   193-201 (cited from memory).
"""

from __future__ import annotations

import numpy as np
from scipy.special import betaincinv, stdtrit

__all__ = ["t_quantile", "clopper_pearson", "batch_means", "blocking_interval"]


def t_quantile(p, df):
    """Quantile ``p`` of Student's t with ``df`` degrees of freedom (``scipy.special.stdtrit``)."""
    return stdtrit(np.asarray(df, dtype=float), p)


def clopper_pearson(k, n, confidence=0.95):
    """Exact (Clopper-Pearson) two-sided interval of a binomial proportion.

    Parameters
    ----------
    k, n : array_like
        Successes and trials (blocked and offered calls); non-integer effective counts are
        accepted. ``k`` must lie in ``[0, n]``.
    confidence : float in (0, 1)

    Returns
    -------
    lo, hi : ndarray
        ``lo = B^-1(alpha/2; k, n - k + 1)`` (0 when ``k = 0``) and
        ``hi = B^-1(1 - alpha/2; k + 1, n - k)`` (1 when ``k = n``), ``B^-1`` the inverse
        regularised incomplete beta function; ``[0, 1]`` when ``n = 0``.

    References
    ----------
    .. [1] C. J. Clopper, E. S. Pearson, "The use of confidence or fiducial limits
       illustrated in the case of the binomial", Biometrika 26 (1934) 404-413.

    Examples
    --------
    No loss in 1000 calls: the 95 % upper limit is about 3.7 / 1000.

    >>> lo, hi = clopper_pearson(0, 1000)
    >>> float(lo), round(float(hi), 6)
    (0.0, 0.003682)
    """
    k = np.asarray(k, dtype=float)
    n = np.asarray(n, dtype=float)
    k, n = np.broadcast_arrays(k, n)
    alpha = 1.0 - confidence
    lo = np.zeros(k.shape)
    hi = np.ones(k.shape)
    some = (k > 0) & (n > 0)
    if some.any():
        lo[some] = betaincinv(k[some], n[some] - k[some] + 1.0, alpha / 2)
    below = (k < n) & (n > 0)
    if below.any():
        hi[below] = betaincinv(k[below] + 1.0, n[below] - k[below], 1.0 - alpha / 2)
    return lo, hi


def batch_means(num, den, confidence=0.95):
    """Ratio estimate and Student-t half-width from per-batch numerators and denominators.

    Parameters
    ----------
    num, den : array_like, shape (batches, n)
    confidence : float

    Returns
    -------
    est, half : ndarray, shape (n,)
        ``est = sum(num) / sum(den)`` (0 where no denominator); ``half`` the half-width
        ``t_{m-1} s / sqrt(m)`` over the ``m`` batches with a denominator, 1 where fewer
        than two have one (nothing to judge by).

    References
    ----------
    .. [1] A. M. Law, W. D. Kelton, *Simulation Modeling and Analysis*, 3rd ed.,
       McGraw-Hill 2000, ch. 9.
    """
    num = np.asarray(num, dtype=float)
    den = np.asarray(den, dtype=float)
    tot_den = den.sum(axis=0)
    est = np.divide(num.sum(axis=0), tot_den, out=np.zeros(num.shape[1]), where=tot_den > 0)
    with np.errstate(invalid="ignore", divide="ignore"):
        ratios = np.where(den > 0, num / np.where(den > 0, den, 1.0), np.nan)
    m = np.sum(np.isfinite(ratios), axis=0)
    half = np.zeros(num.shape[1])
    ok = m >= 2
    if ok.any():
        sd = np.nanstd(ratios[:, ok], axis=0, ddof=1)
        half[ok] = t_quantile(0.5 + confidence / 2, m[ok] - 1) * sd / np.sqrt(m[ok])
    half[~ok & (tot_den > 0)] = 1.0
    return est, half


def blocking_interval(est, half, k, n, confidence=0.95):
    """The union of the batch-means interval ``est -/+ half`` and the exact binomial one.

    Parameters
    ----------
    est, half : array_like
        From :func:`batch_means`.
    k, n : array_like
        Blocked and offered calls (or effective counts, see the module notes).
    confidence : float

    Returns
    -------
    ndarray, shape (n, 2)
        ``[low, high]`` per row, within [0, 1]; ``[0, 1]`` where nothing was offered.
    """
    est = np.asarray(est, dtype=float)
    half = np.asarray(half, dtype=float)
    lo_b = np.clip(est - half, 0.0, 1.0)
    hi_b = np.clip(est + half, 0.0, 1.0)
    lo_c, hi_c = clopper_pearson(np.minimum(k, n), n, confidence)
    return np.column_stack([np.minimum(lo_b, lo_c), np.maximum(hi_b, hi_c)])
