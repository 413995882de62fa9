r"""Model weights: Akaike weights from AICc, stacking and pseudo-BMA weights from LOO.

Akaike weights (Burnham & Anderson, *Model Selection and Multimodel Inference*, 2nd ed.
2002, section 2.9, recalled from memory):

.. math:: w_i = \frac{\exp(-\Delta_i/2)}{\sum_j \exp(-\Delta_j/2)},\qquad
          \Delta_i = \mathrm{AICc}_i - \min_j \mathrm{AICc}_j

the weight of evidence that candidate *i* is the best of the set in the Kullback-Leibler
sense. Stacking weights maximise the leave-one-out log score of the weighted mixture of
the candidates' predictive distributions; pseudo-BMA weights are proportional to
:math:`\exp(\widehat{\mathrm{elpd}}_i)` after a Bayesian bootstrap of the pointwise terms
(Yao, Vehtari, Simpson & Gelman, "Using stacking to average Bayesian predictive
distributions", Bayesian Anal. 13 (2018) 917). Both are computed by
:func:`arviz.compare`.

Examples
--------
>>> [round(w, 4) for w in akaike_weights([100.0, 102.0, 110.0])]
[0.7275, 0.2676, 0.0049]
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from mechfit.compare.elpd import PredictiveDensity, without_warnings
from mechfit.compare.errors import ComparisonError


def akaike_weights(criterion: Sequence[float]) -> list[float]:
    """Akaike weights from AIC or AICc values (one per candidate, same data).

    Raises
    ------
    ComparisonError
        When a value is not finite or the list is empty.

    Examples
    --------
    >>> akaike_weights([5.0])
    [1.0]
    """
    values = np.asarray(criterion, dtype=float)
    if values.size == 0 or not np.all(np.isfinite(values)):
        raise ComparisonError(f"Akaike weights need finite criterion values, got {list(values)}")
    relative = np.exp(-0.5 * (values - values.min()))
    return [float(w) for w in relative / relative.sum()]


@dataclass(frozen=True)
class PredictiveWeights:
    """Weights and differences of several candidates from :func:`arviz.compare`.

    Attributes
    ----------
    stacking, pseudo_bma
        Candidate key -> weight (each set sums to 1).
    difference, difference_se
        Candidate key -> elpd of the best minus elpd of the candidate, and its standard
        error from the pointwise differences (0 for the best itself).
    table
        The :func:`arviz.compare` data frame (stacking), for display.
    """

    stacking: dict[str, float]
    pseudo_bma: dict[str, float]
    difference: dict[str, float]
    difference_se: dict[str, float]
    table: object


def _stabilised(estimates: Mapping[str, PredictiveDensity]) -> dict[str, object]:
    # Stacking exponentiates the pointwise terms; shifting every point by the same constant
    # across candidates changes neither the weights nor the differences, and keeps
    # exp() finite for sharp likelihoods (concentrations measured to 1e-4 of their scale).
    stack = np.stack([e.pointwise for e in estimates.values()])
    shift = stack.max(axis=0)
    out = {}
    for key, estimate in estimates.items():
        data = estimate.elpd_data.copy()
        field = "loo_i" if "loo_i" in data else "waic_i"
        data[field] = data[field].copy(data=np.asarray(estimate.pointwise - shift).reshape(
            data[field].shape))
        out[key] = data
    return out


def predictive_weights(estimates: Mapping[str, PredictiveDensity], *,
                       seed: int = 0) -> PredictiveWeights:
    """Stacking and pseudo-BMA weights, and elpd differences to the best with their SE.

    Parameters
    ----------
    estimates
        Candidate key -> :class:`~mechfit.compare.elpd.PredictiveDensity` of one kind
        (all PSIS-LOO on points, or all leave-one-run-out) on the same data.
    seed
        Seed of the Bayesian bootstrap in the pseudo-BMA weights (results repeat).

    Raises
    ------
    ComparisonError
        When the estimates are of different kinds or have different numbers of terms.

    Examples
    --------
    >>> import numpy as np, arviz as az
    >>> from mechfit.compare.elpd import psis_loo
    >>> rng = np.random.default_rng(3)
    >>> def fake(offset):
    ...     ll = rng.normal(-1.0 - offset, 0.02, (2, 200, 30))
    ...     return psis_loo(az.from_dict(posterior={"a": ll[..., 0]},
    ...                                  log_likelihood={"y": ll}), "y")
    >>> w = predictive_weights({"good": fake(0.0), "poor": fake(0.5)})
    >>> w.stacking["good"] > 0.99, round(w.difference["poor"], 0)
    (True, 15.0)
    """
    import arviz as az

    if not estimates:
        raise ComparisonError("no candidates to weigh")
    kinds = {e.method for e in estimates.values()}
    sizes = {e.n_points for e in estimates.values()}
    if len(kinds) != 1 or len(sizes) != 1:
        raise ComparisonError(
            "candidates must be compared on the same data with the same method; got methods "
            f"{sorted(kinds)} and {sorted(sizes)} pointwise terms", names=tuple(estimates))
    keys = list(estimates)
    if len(keys) == 1:
        key = keys[0]
        return PredictiveWeights({key: 1.0}, {key: 1.0}, {key: 0.0}, {key: 0.0}, None)
    data = _stabilised(estimates)
    stacked = without_warnings(az.compare, data, ic=None, method="stacking", scale="log")
    pseudo = without_warnings(az.compare, data, ic=None, method="BB-pseudo-BMA", scale="log",
                    seed=seed)
    return PredictiveWeights(
        stacking={k: float(stacked.loc[k, "weight"]) for k in keys},
        pseudo_bma={k: float(pseudo.loc[k, "weight"]) for k in keys},
        difference={k: float(stacked.loc[k, "elpd_diff"]) for k in keys},
        difference_se={k: float(stacked.loc[k, "dse"]) for k in keys},
        table=stacked)
