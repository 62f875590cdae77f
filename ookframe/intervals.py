"""Confidence intervals for error rates measured by Monte Carlo."""

from __future__ import annotations


def clopper_pearson(k: int, n: int, confidence: float = 0.95) -> tuple[float, float]:
    """Return the exact (Clopper & Pearson 1934, Biometrika 26(4)) two-sided interval
    (low, high) for a binomial proportion after ``k`` events in ``n`` trials.

    low = Beta(alpha/2; k, n-k+1) quantile (0 when k = 0), high = Beta(1-alpha/2; k+1,
    n-k) quantile (1 when k = n), alpha = 1 - confidence.
    """
    if n < 0 or not 0 <= k <= max(n, 0):
        raise ValueError(f"need 0 <= k <= n, got k={k}, n={n}")
    if not 0 < confidence < 1:
        raise ValueError(f"confidence must be in (0, 1), got {confidence}")
    if n == 0:
        return (0.0, 1.0)
    from scipy.stats import beta  # slow import: only when an interval is computed

    alpha = 1.0 - confidence
    low = 0.0 if k == 0 else float(beta.ppf(alpha / 2, k, n - k + 1))
    high = 1.0 if k == n else float(beta.ppf(1 - alpha / 2, k + 1, n - k))
    return (low, high)


def poisson_ci(k: int, confidence: float = 0.95) -> tuple[float, float]:
    """Return the exact (Garwood 1936, Biometrika 28) two-sided interval for the mean of a
    Poisson count after observing ``k`` events: chi-square quantiles / 2."""
    if k < 0:
        raise ValueError(f"need k >= 0, got {k}")
    from scipy.stats import chi2  # slow import: only when an interval is computed

    alpha = 1.0 - confidence
    low = 0.0 if k == 0 else float(chi2.ppf(alpha / 2, 2 * k) / 2)
    high = float(chi2.ppf(1 - alpha / 2, 2 * k + 2) / 2)
    return (low, high)
