"""Runs test, lag-1 autocorrelation and Durbin-Watson, checked against statsmodels
(test-only dependency) and against exhaustive enumeration of sign sequences."""

import itertools
import math

import numpy as np
import pytest

from mechfit.compare import (
    ComparisonError,
    durbin_watson,
    lag1_autocorrelation,
    residual_diagnostics,
    runs_test,
)

stattools = pytest.importorskip("statsmodels.stats.stattools")
tsa = pytest.importorskip("statsmodels.tsa.stattools")
runs_module = pytest.importorskip("statsmodels.sandbox.stats.runs")


@pytest.mark.parametrize("seed", range(5))
def test_runs_test_normal_approximation_matches_statsmodels(seed):
    # Wald & Wolfowitz, Ann. Math. Stat. 11 (1940) 147: mean and variance of the number of runs
    e = np.random.default_rng(seed).normal(size=60 + 7 * seed)
    ours = runs_test(e)
    z, p = runs_module.runstest_1samp(e, cutoff=0.0, correction=False)
    assert ours.z == pytest.approx(z, rel=1e-12)
    assert ours.p_two_sided == pytest.approx(p, rel=1e-10)


@pytest.mark.parametrize(("n1", "n2"), [(3, 4), (5, 5), (6, 2), (7, 6)])
def test_exact_runs_distribution_matches_enumeration(n1, n2):
    # Swed & Eisenhart, Ann. Math. Stat. 14 (1943) 66: exact distribution of the number of
    # runs; here against counting every arrangement of n1 plus and n2 minus signs
    sequences = []
    for positive in itertools.combinations(range(n1 + n2), n1):
        sequences.append([1.0 if i in positive else -1.0 for i in range(n1 + n2)])
    runs = np.array([1 + sum(s[i] != s[i + 1] for i in range(len(s) - 1)) for s in sequences])
    for sequence, r in zip(sequences, runs, strict=True):
        result = runs_test(sequence)
        assert (result.n_positive, result.n_negative, result.runs) == (n1, n2, r)
        assert result.p_too_few == pytest.approx(np.mean(runs <= r), rel=1e-12)
    assert runs.mean() == pytest.approx(runs_test(sequences[0]).expected_runs)


def test_runs_test_with_one_sign_uses_the_sign_test():
    result = runs_test(np.linspace(0.1, 1.0, 10))
    assert result.runs == 1 and result.n_negative == 0
    assert result.p_too_few == pytest.approx(2.0 ** -9)
    assert math.isnan(result.z)


@pytest.mark.parametrize("seed", range(4))
def test_lag1_and_durbin_watson_match_statsmodels(seed):
    rng = np.random.default_rng(seed)
    e = np.zeros(50)
    noise = rng.normal(size=50)
    for t in range(1, 50):  # AR(1) with coefficient 0.6
        e[t] = 0.6 * e[t - 1] + noise[t]
    assert lag1_autocorrelation(e) == pytest.approx(tsa.acf(e, nlags=1, fft=False)[1], rel=1e-12)
    assert durbin_watson(e) == pytest.approx(stattools.durbin_watson(e), rel=1e-12)


def test_durbin_watson_is_about_two_minus_twice_r1():
    # Durbin & Watson, Biometrika 37 (1950) 409: d ~ 2 (1 - r1) for long series
    e = np.random.default_rng(9).normal(size=5000)
    assert durbin_watson(e) == pytest.approx(2 * (1 - lag1_autocorrelation(e)), abs=0.01)


def test_false_flag_rate_of_white_noise_stays_below_alpha():
    rng = np.random.default_rng(11)
    flagged = sum(residual_diagnostics({f"r{i}": rng.normal(size=20) for i in range(6)},
                                       alpha=0.05).structured for _ in range(400))
    assert flagged / 400 <= 0.06


def test_curved_residuals_are_flagged_in_the_right_runs():
    t = np.linspace(0.0, 1.0, 25)
    rng = np.random.default_rng(4)
    wrong = 3 * (t - 0.5) ** 2 - 0.25 + rng.normal(0.0, 0.05, t.size)
    d = residual_diagnostics({"r1": rng.normal(size=25), "r2": wrong, "r3": rng.normal(size=25)})
    assert d.structured and d.structured_series == ("r2",)
    assert d.threshold == pytest.approx(0.05 / 6)
    row = d.summary()["series"]["r2"]
    assert row["structured"] and row["durbin_watson"] < 1.0 and row["lag1_autocorrelation"] > 0.5


def test_short_series_get_no_autocorrelation_test_and_bad_input_is_named():
    d = residual_diagnostics({"short": [0.1, -0.2, 0.3, -0.1]})
    assert d.summary()["series"]["short"]["lag1_p"] is None
    assert d.threshold == pytest.approx(0.05)
    with pytest.raises(ComparisonError) as info:
        residual_diagnostics({"r7": [0.1, math.nan, 0.3]})
    assert info.value.names == ("r7",)
    with pytest.raises(ComparisonError):
        residual_diagnostics({})
    with pytest.raises(ComparisonError):
        residual_diagnostics({"r1": [1.0, -1.0]}, alpha=1.5)
