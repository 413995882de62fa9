r"""Information criteria from the maximum log-likelihood: AIC, AICc and BIC.

With :math:`\hat L` the maximum of the likelihood, :math:`K` the number of fitted
parameters (rate constants, orders, extinction coefficients *and* fitted noise levels)
and :math:`n` the number of data points:

.. math::

    \mathrm{AIC}  &= -2\ln\hat L + 2K \\
    \mathrm{AICc} &= \mathrm{AIC} + \frac{2K(K+1)}{n-K-1} \\
    \mathrm{BIC}  &= -2\ln\hat L + K\ln n

AIC: Akaike, "A new look at the statistical model identification", IEEE Trans. Autom.
Control 19 (1974) 716; AICc, the second-order correction, and the rule that :math:`K`
counts every estimated parameter including the variance: Burnham & Anderson, *Model
Selection and Multimodel Inference*, 2nd ed. (2002), sections 2.2 and 2.4 (recalled from
memory). BIC: Schwarz, "Estimating the dimension of a model", Ann. Stat. 6 (1978) 461.
Smaller is better for all three.

Examples
--------
>>> ic = information_criteria(log_likelihood_max=-10.0, n_parameters=2, n_data=20)
>>> round(ic.aic, 3), round(ic.aicc, 3), round(ic.bic, 3)
(24.0, 24.706, 25.991)
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from mechfit.compare.errors import ComparisonError


@dataclass(frozen=True)
class InformationCriteria:
    """AIC, AICc and BIC of one fitted candidate, with the numbers they come from.

    Attributes
    ----------
    log_likelihood_max, n_parameters, n_data
        The inputs: maximum log-likelihood, fitted parameters K, data points n.
    aic, aicc, bic
        The criteria (smaller is better).
    """

    log_likelihood_max: float
    n_parameters: int
    n_data: int
    aic: float
    aicc: float
    bic: float


def _count(value: object, field: str, minimum: int) -> int:
    if isinstance(value, bool) or not float(value).is_integer() or int(value) < minimum:
        raise ComparisonError(f"{field} must be a whole number >= {minimum}, got {value!r}",
                              names=(field,))
    return int(value)


def information_criteria(log_likelihood_max: float, n_parameters: int,
                         n_data: int) -> InformationCriteria:
    """AIC, AICc and BIC from the maximum log-likelihood.

    Parameters
    ----------
    log_likelihood_max
        :math:`\\ln\\hat L`, the log-likelihood at the maximum-likelihood estimate.
    n_parameters
        Number of fitted parameters K, counting fitted noise levels.
    n_data
        Number of data points n; AICc needs n > K + 1.

    Returns
    -------
    InformationCriteria

    Raises
    ------
    ComparisonError
        When the log-likelihood is not finite, a count is not a whole number, or
        n <= K + 1 (AICc undefined: fewer points than parameters plus one).

    Examples
    --------
    >>> information_criteria(-3.5, 1, 10).aic
    9.0
    """
    loglik = float(log_likelihood_max)
    if not math.isfinite(loglik):
        raise ComparisonError(f"log_likelihood_max must be a finite number, got {loglik!r}",
                              names=("log_likelihood_max",))
    k = _count(n_parameters, "n_parameters", 0)
    n = _count(n_data, "n_data", 1)
    if n <= k + 1:
        raise ComparisonError(
            f"AICc needs more data points than parameters plus one: n_data = {n}, "
            f"n_parameters = {k}; add data or fit fewer parameters",
            names=("n_data", "n_parameters"))
    aic = -2.0 * loglik + 2.0 * k
    aicc = aic + 2.0 * k * (k + 1) / (n - k - 1)
    bic = -2.0 * loglik + k * math.log(n)
    return InformationCriteria(loglik, k, n, aic, aicc, bic)
