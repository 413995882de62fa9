"""How well a planned run would tell candidate mechanisms apart, or pin down parameters.

Discrimination: the criterion of G. E. P. Box and W. J. Hill, "Discrimination among
mechanistic models", Technometrics 9 (1967) 57-71 (the form recalled from memory): for
two candidates i and j with predictive means mu_i, mu_j and predictive variances s_i^2,
s_j^2 at a measured point, and measurement variance s^2,

    C_ij = (s_i^2 - s_j^2)^2 / ((s^2 + s_i^2)(s^2 + s_j^2))
           + (mu_i - mu_j)^2 * (1/(s^2 + s_i^2) + 1/(s^2 + s_j^2)),

which is twice the symmetric Kullback-Leibler divergence between the two Gaussian
predictive distributions (J-divergence); the design value is the sum over points and
over pairs weighted by the candidates' probabilities, D = sum_{i<j} P_i P_j sum_t C_ij.
The predictive moments come from Monte Carlo over posterior draws.

Precision: the D-optimal criterion (A. C. Atkinson, A. N. Donev and R. D. Tobias,
Optimum Experimental Designs, with SAS, Oxford 2007, ch. 10): log det of the Fisher
information J^T W J of the log parameters of one candidate, added to the information the
existing data already hold.

Examples
--------
>>> import numpy as np
>>> a = np.zeros((50, 3)); b = np.ones((50, 3))
>>> round(box_hill([a, b], noise=1.0), 6)     # two sharp candidates one noise unit apart
1.5
>>> box_hill([a, a.copy()], noise=1.0)
0.0
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np


def predictive_moments(draws: np.ndarray, noise: np.ndarray | float) -> tuple[np.ndarray,
                                                                               np.ndarray]:
    """Mean and variance over posterior draws ``(S, n)`` of the noise-free predictions."""
    draws = np.asarray(draws, dtype=float)
    return draws.mean(axis=0), draws.var(axis=0, ddof=1) if draws.shape[0] > 1 else \
        np.zeros(draws.shape[1])


def box_hill(predictions: Sequence[np.ndarray], noise: np.ndarray | float,
             weights: Sequence[float] | None = None) -> float:
    """Box–Hill expected discrimination of a design.

    Parameters
    ----------
    predictions
        One array per candidate: noise-free predictions ``(S, n)`` of the planned
        measurements for ``S`` posterior draws (``S`` may differ between candidates).
    noise
        Measurement standard deviation, a scalar or one per measured point ``(n,)``.
    weights
        Candidate probabilities (default equal); normalised here.

    Returns
    -------
    float
        ``sum_{i<j} P_i P_j sum_points C_ij`` (dimensionless; 0 when the candidates
        predict the same distribution everywhere).
    """
    k = len(predictions)
    if k < 2:
        return 0.0
    p = np.full(k, 1.0 / k) if weights is None else np.asarray(weights, float)
    p = p / p.sum()
    s2 = np.broadcast_to(np.asarray(noise, float) ** 2, np.shape(predictions[0])[1:])
    moments = [predictive_moments(d, noise) for d in predictions]
    total = 0.0
    for i in range(k):
        mi, vi = moments[i]
        for j in range(i + 1, k):
            mj, vj = moments[j]
            ai, aj = s2 + vi, s2 + vj
            c = (vi - vj) ** 2 / (ai * aj) + (mi - mj) ** 2 * (1.0 / ai + 1.0 / aj)
            total += p[i] * p[j] * float(np.sum(c))
    return float(total)


def d_optimal(jacobian: np.ndarray, noise: np.ndarray | float,
              prior_information: np.ndarray | None = None) -> float:
    """log det of the Fisher information of the parameters after the planned run.

    Parameters
    ----------
    jacobian
        ``(n, p)``: derivatives of the planned measurements with respect to the (log)
        parameters at the best estimate.
    noise
        Measurement standard deviation (scalar or ``(n,)``).
    prior_information
        ``(p, p)`` information the existing data already hold (e.g. the inverse
        posterior covariance); without it a tiny ridge keeps the determinant defined.
    """
    j = np.asarray(jacobian, float)
    w = 1.0 / np.broadcast_to(np.asarray(noise, float) ** 2, (j.shape[0],))
    info = j.T @ (w[:, None] * j)
    if prior_information is not None:
        info = info + np.asarray(prior_information, float)
    else:
        info = info + 1e-12 * np.eye(info.shape[0]) * max(1.0, float(np.trace(info)))
    sign, logdet = np.linalg.slogdet(info)
    return float(logdet) if sign > 0 else -np.inf
