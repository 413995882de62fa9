r"""Residual diagnostics per run: is what the fit leaves over random, or does it have shape?

A mechanism that is wrong in kind leaves residuals that stay of one sign for long
stretches of a run (the curve bends the wrong way), however well it scores on the
criteria. Three statistics of the residual series :math:`e_1..e_n` of one run, in time
order:

Wald-Wolfowitz runs test
    A run is a maximal stretch of residuals of one sign. With :math:`n_+` positive and
    :math:`n_-` negative residuals (:math:`n=n_++n_-`, exact zeros dropped) the number of
    runs *R* of random signs has mean and variance

    .. math:: \mu_R = \frac{2n_+n_-}{n}+1,\qquad
              \sigma_R^2=\frac{2n_+n_-(2n_+n_--n)}{n^2(n-1)}

    (Wald & Wolfowitz, "On a test whether two samples are from the same population", Ann.
    Math. Stat. 11 (1940) 147). ``z = (R - mu)/sigma`` and its two-sided normal p-value are
    reported; the flag uses the exact probability of as few runs as observed, from the
    distribution of *R* given :math:`n_+, n_-` (Swed & Eisenhart, "Tables for testing
    randomness of grouping in a sequence of alternatives", Ann. Math. Stat. 14 (1943) 66):

    .. math:: P(R=2k)=\frac{2\binom{n_+-1}{k-1}\binom{n_--1}{k-1}}{\binom{n}{n_+}},\quad
              P(R=2k+1)=\frac{\binom{n_+-1}{k}\binom{n_--1}{k-1}
              +\binom{n_+-1}{k-1}\binom{n_--1}{k}}{\binom{n}{n_+}}

    When every residual has the same sign the p-value is that of the sign test,
    :math:`2^{1-n}` (common practice).
Lag-1 autocorrelation
    :math:`r_1=\sum_{t<n}(e_t-\bar e)(e_{t+1}-\bar e)/\sum_t(e_t-\bar e)^2`; for white
    noise approximately normal with standard error :math:`1/\sqrt n` (Bartlett 1946; Box,
    Jenkins & Reinsel, *Time Series Analysis*, 4th ed. 2008, section 2.1.6, recalled from
    memory). The flag uses the one-sided p-value of :math:`z=r_1\sqrt n` (positive
    correlation is what misfit produces); series shorter than 8 points are not tested.
Durbin-Watson statistic
    :math:`d=\sum_{t\ge2}(e_t-e_{t-1})^2/\sum_t e_t^2`, about :math:`2(1-r_1)`: near 2 for
    independent residuals, towards 0 for positively correlated ones (Durbin & Watson,
    "Testing for serial correlation in least squares regression. I", Biometrika 37 (1950)
    409). Reported as a description; its critical values depend on the regressors of a
    linear model and have no exact counterpart for kinetic models.

A candidate's residuals are *structured* when the smallest of its p-values (runs test and
lag-1 test of every series) is below ``alpha / (2 m)`` for *m* series (Bonferroni, so the
chance of flagging a correct model stays below ``alpha``).

Examples
--------
>>> import numpy as np
>>> t = np.linspace(0.0, 1.0, 30)
>>> bent = np.sin(2 * np.pi * t)          # residuals of a curve bent the wrong way
>>> noise = np.random.default_rng(0).normal(size=30)
>>> d = residual_diagnostics({"r1": bent, "r2": noise})
>>> d.structured, d.structured_series
(True, ('r1',))
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import asdict, dataclass
from fractions import Fraction

import numpy as np
from scipy.special import ndtr

from mechfit.compare.errors import ComparisonError

#: shortest series on which the lag-1 autocorrelation is tested (common practice)
MIN_AUTOCORRELATION_POINTS = 8


def _series(residuals: Sequence[float] | np.ndarray, label: str = "residuals") -> np.ndarray:
    e = np.asarray(residuals, dtype=float).ravel()
    if e.size < 2 or not np.all(np.isfinite(e)):
        raise ComparisonError(f"{label}: residuals must be at least two finite numbers in time "
                              f"order, got {e.size} value(s)", names=(label,))
    return e


@dataclass(frozen=True)
class RunsTest:
    """The Wald-Wolfowitz runs test of the signs of a series.

    Attributes
    ----------
    n_positive, n_negative
        Counts of positive and negative residuals (zeros are dropped).
    runs, expected_runs
        Observed number of runs and its mean under random signs.
    z, p_two_sided
        Normal approximation: standard score and two-sided p-value (``nan`` when one sign
        is absent).
    p_too_few
        Exact probability of at most ``runs`` runs under random signs.
    """

    n_positive: int
    n_negative: int
    runs: int
    expected_runs: float
    z: float
    p_two_sided: float
    p_too_few: float


def _runs_distribution_cdf(runs: int, n1: int, n2: int) -> float:
    total = math.comb(n1 + n2, n1)
    probability = Fraction(0)
    for r in range(2, runs + 1):
        k, odd = divmod(r, 2)
        if odd:
            ways = math.comb(n1 - 1, k) * math.comb(n2 - 1, k - 1) + \
                math.comb(n1 - 1, k - 1) * math.comb(n2 - 1, k)
        else:
            ways = 2 * math.comb(n1 - 1, k - 1) * math.comb(n2 - 1, k - 1)
        probability += Fraction(ways, total)
    return float(probability)


def runs_test(residuals: Sequence[float] | np.ndarray) -> RunsTest:
    """Wald-Wolfowitz runs test about zero, with the normal approximation and exact tail.

    Examples
    --------
    >>> t = runs_test([1, 2, -1, -3, 2, 1, -2, 1])
    >>> t.runs, t.n_positive, t.n_negative, t.expected_runs
    (5, 5, 3, 4.75)
    >>> round(t.p_too_few, 4)
    0.7143
    """
    e = _series(residuals)
    signs = np.sign(e)
    signs = signs[signs != 0]
    n1 = int(np.sum(signs > 0))
    n2 = int(np.sum(signs < 0))
    n = n1 + n2
    runs = int(1 + np.count_nonzero(np.diff(signs))) if n else 0
    if n1 == 0 or n2 == 0:
        return RunsTest(n1, n2, runs, float(runs), math.nan, math.nan,
                        float(2.0 ** (1 - n)) if n else 1.0)
    mean = 2.0 * n1 * n2 / n + 1.0
    variance = 2.0 * n1 * n2 * (2.0 * n1 * n2 - n) / (n * n * (n - 1.0))
    z = (runs - mean) / math.sqrt(variance) if variance > 0 else math.nan
    p_two = float(2.0 * ndtr(-abs(z))) if math.isfinite(z) else math.nan
    return RunsTest(n1, n2, runs, mean, float(z), p_two, _runs_distribution_cdf(runs, n1, n2))


def lag1_autocorrelation(residuals: Sequence[float] | np.ndarray) -> float:
    """Sample autocorrelation at lag 1 (about the mean; 0 for a constant series).

    Examples
    --------
    >>> round(lag1_autocorrelation([1.0, 2.0, 3.0, 4.0]), 4)
    0.25
    """
    e = _series(residuals)
    d = e - e.mean()
    denominator = float(d @ d)
    return float(d[:-1] @ d[1:] / denominator) if denominator > 0 else 0.0


def durbin_watson(residuals: Sequence[float] | np.ndarray) -> float:
    """Durbin-Watson statistic of a residual series (2 for a series of zeros).

    Examples
    --------
    >>> durbin_watson([1.0, -1.0, 1.0, -1.0])
    3.0
    """
    e = _series(residuals)
    denominator = float(e @ e)
    return float(np.sum(np.diff(e) ** 2) / denominator) if denominator > 0 else 2.0


@dataclass(frozen=True)
class SeriesDiagnostics:
    """Runs test, lag-1 autocorrelation and Durbin-Watson of one residual series.

    Attributes
    ----------
    label
        The run (or ``run/observable``) the series belongs to.
    n
        Number of residuals.
    runs
        The :class:`RunsTest`.
    lag1_autocorrelation, lag1_p
        :math:`r_1` and the one-sided p-value of positive correlation (``nan`` when the
        series is shorter than 8 points).
    durbin_watson
        The Durbin-Watson statistic.
    """

    label: str
    n: int
    runs: RunsTest
    lag1_autocorrelation: float
    lag1_p: float
    durbin_watson: float

    @property
    def p_values(self) -> tuple[float, ...]:
        """The p-values that enter the structure flag (finite ones only)."""
        return tuple(p for p in (self.runs.p_too_few, self.lag1_p) if math.isfinite(p))


def series_diagnostics(label: str, residuals: Sequence[float] | np.ndarray) -> SeriesDiagnostics:
    """All three diagnostics of one series.

    Examples
    --------
    >>> s = series_diagnostics("r1", [0.5, -0.2, 0.1, -0.4, 0.3, -0.1, 0.2, -0.3])
    >>> s.runs.runs, s.lag1_autocorrelation < 0, s.durbin_watson > 2
    (8, True, True)
    """
    e = _series(residuals, label)
    r1 = lag1_autocorrelation(e)
    if e.size >= MIN_AUTOCORRELATION_POINTS:
        lag1_p = float(ndtr(-r1 * math.sqrt(e.size)))
    else:
        lag1_p = math.nan
    return SeriesDiagnostics(str(label), int(e.size), runs_test(e), r1, lag1_p,
                             durbin_watson(e))


def _json_number(value: float) -> float | None:
    return float(value) if math.isfinite(value) else None


@dataclass(frozen=True)
class ResidualDiagnostics:
    """The residual diagnostics of one candidate over all its series.

    Attributes
    ----------
    series
        One :class:`SeriesDiagnostics` per run (or run and observable).
    alpha
        Family-wise significance level of the structure flag.
    threshold
        ``alpha / (number of p-values)``, the Bonferroni level each p-value is held to.
    structured
        True when some p-value falls below ``threshold``.
    structured_series
        Labels of the series with such a p-value.
    """

    series: tuple[SeriesDiagnostics, ...]
    alpha: float
    threshold: float
    structured: bool
    structured_series: tuple[str, ...]

    def summary(self) -> dict:
        """A JSON-safe dictionary (``None`` where a value is undefined)."""
        rows = {}
        for s in self.series:
            runs = {k: (_json_number(v) if isinstance(v, float) else v)
                    for k, v in asdict(s.runs).items()}
            rows[s.label] = {"n": s.n, "runs_test": runs,
                             "lag1_autocorrelation": _json_number(s.lag1_autocorrelation),
                             "lag1_p": _json_number(s.lag1_p),
                             "durbin_watson": _json_number(s.durbin_watson),
                             "structured": s.label in self.structured_series}
        return {"alpha": self.alpha, "threshold": self.threshold,
                "structured": self.structured,
                "structured_series": list(self.structured_series), "series": rows}


def residual_diagnostics(series: Mapping[str, Sequence[float] | np.ndarray],
                         alpha: float = 0.05) -> ResidualDiagnostics:
    """Diagnose every residual series of a candidate and decide whether they are structured.

    Parameters
    ----------
    series
        Label -> residuals of that run (or of one observable of it) in time order;
        standardised residuals (divided by the noise level) are best when observables of
        different scale are mixed, though all three statistics are scale-free within a series.
    alpha
        Family-wise level of the flag (0.05).

    Raises
    ------
    ComparisonError
        No series, a series shorter than two points or with non-finite values, or an
        alpha outside (0, 1).

    Examples
    --------
    See the module docstring.
    """
    if not 0.0 < float(alpha) < 1.0:
        raise ComparisonError(f"alpha must lie between 0 and 1, got {alpha!r}", names=("alpha",))
    if not series:
        raise ComparisonError("no residual series given; pass run name -> residuals",
                              names=("residuals",))
    results = tuple(series_diagnostics(str(k), v) for k, v in series.items())
    n_tests = sum(len(s.p_values) for s in results)
    threshold = float(alpha) / max(n_tests, 1)
    flagged = tuple(s.label for s in results if any(p < threshold for p in s.p_values))
    return ResidualDiagnostics(results, float(alpha), threshold, bool(flagged), flagged)
