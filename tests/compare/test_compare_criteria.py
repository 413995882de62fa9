"""AIC, AICc, BIC and Akaike weights, checked against statsmodels (a test-only dependency).

statsmodels is a general-purpose statistics library from PyPI; its OLS results carry
``llf``, ``aic`` and ``bic``, and ``statsmodels.tools.eval_measures`` has ``aic``, ``aicc``
and ``bic`` from a log-likelihood. statsmodels counts the regression coefficients only
(not the noise variance) in OLS results, so the parameter count passed here is theirs.
"""

import math

import numpy as np
import pytest

from mechfit.compare import ComparisonError, akaike_weights, information_criteria

sm = pytest.importorskip("statsmodels.api")
eval_measures = pytest.importorskip("statsmodels.tools.eval_measures")


def _ols_fit(seed: int, n: int, columns: int):
    rng = np.random.default_rng(seed)
    x = rng.uniform(0.0, 10.0, (n, columns))
    y = 1.5 + x @ rng.normal(0.0, 1.0, columns) + rng.normal(0.0, 0.7, n)
    return sm.OLS(y, sm.add_constant(x)).fit()


@pytest.mark.parametrize(("seed", "n", "columns"), [(0, 25, 1), (1, 40, 3), (2, 12, 2)])
def test_aic_and_bic_match_statsmodels_ols(seed, n, columns):
    fit = _ols_fit(seed, n, columns)
    k = int(fit.df_model + fit.k_constant)
    ic = information_criteria(fit.llf, k, n)
    assert ic.aic == pytest.approx(fit.aic, rel=1e-12)
    assert ic.bic == pytest.approx(fit.bic, rel=1e-12)


@pytest.mark.parametrize(("llf", "n", "k"), [(-52.3, 30, 3), (12.0, 8, 4), (-1000.5, 500, 12)])
def test_aicc_matches_statsmodels_eval_measures(llf, n, k):
    ic = information_criteria(llf, k, n)
    assert ic.aic == pytest.approx(eval_measures.aic(llf, n, k), rel=1e-12)
    assert ic.aicc == pytest.approx(eval_measures.aicc(llf, n, k), rel=1e-12)
    assert ic.bic == pytest.approx(eval_measures.bic(llf, n, k), rel=1e-12)


def test_aicc_correction_vanishes_for_many_points():
    # Burnham & Anderson 2002, sec. 2.4 (recalled from memory): AICc -> AIC as n/K grows
    small = information_criteria(-10.0, 3, 10)
    large = information_criteria(-10.0, 3, 100000)
    assert small.aicc - small.aic == pytest.approx(2 * 3 * 4 / 6)
    assert large.aicc - large.aic < 1e-3


def test_gaussian_least_squares_log_likelihood_gives_the_textbook_aic():
    # For least squares with the variance estimated, ln L = -n/2 (ln(2 pi RSS/n) + 1) and K
    # counts the variance too (Burnham & Anderson 2002, sec. 2.2, recalled from memory).
    fit = _ols_fit(3, 30, 2)
    n = 30
    loglik = -n / 2 * (math.log(2 * math.pi * fit.ssr / n) + 1)
    assert loglik == pytest.approx(fit.llf, rel=1e-12)
    ic = information_criteria(loglik, 3 + 1, n)
    assert ic.aic == pytest.approx(n * math.log(fit.ssr / n) + n * (math.log(2 * math.pi) + 1)
                                   + 2 * 4)


@pytest.mark.parametrize(("args", "field"), [((-1.0, 3, 4), "n_data"),
                                             ((math.nan, 1, 10), "log_likelihood_max"),
                                             ((-1.0, 1.5, 10), "n_parameters"),
                                             ((-1.0, -1, 10), "n_parameters"),
                                             ((-1.0, True, 10), "n_parameters")])
def test_bad_inputs_raise_a_named_error(args, field):
    with pytest.raises(ComparisonError) as info:
        information_criteria(*args)
    assert field in info.value.names


def test_akaike_weights_follow_evidence_ratios():
    # evidence ratio w_i / w_j = exp((AIC_j - AIC_i) / 2) (Burnham & Anderson 2002, sec. 2.9,
    # recalled from memory)
    values = [231.4, 229.0, 240.2, 229.9]
    w = akaike_weights(values)
    assert sum(w) == pytest.approx(1.0)
    for i in range(4):
        for j in range(4):
            assert w[i] / w[j] == pytest.approx(math.exp((values[j] - values[i]) / 2))
    assert akaike_weights([1e6, 1e6 + 2]) == pytest.approx(akaike_weights([0.0, 2.0]))
    with pytest.raises(ComparisonError):
        akaike_weights([1.0, math.inf])
