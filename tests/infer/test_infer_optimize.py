"""Maximum likelihood on a linear model (exact answers), profiles, convergence reports."""

import numpy as np
import pytest
from scipy import stats

from mechfit.infer import (
    ErrorModel,
    FitFailure,
    Likelihood,
    ModelFunction,
    Observations,
    Parameter,
    Parameters,
    Uniform,
    maximum_likelihood,
    profile_likelihood,
)

T = np.linspace(0.0, 10.0, 12)
Y = 1.5 + 0.8 * T + np.array([0.3, -0.2, 0.1, 0.4, -0.5, 0.2, -0.1, 0.0, 0.3, -0.3, 0.1, -0.2])
SIGMA = 0.3


def line_likelihood(sigma=SIGMA):
    model = ModelFunction(("a", "b"), lambda x: x[:, :1] + x[:, 1:2] * T,
                          lambda x: (x[:, :1] + x[:, 1:2] * T,
                                     np.stack([np.ones((x.shape[0], T.size)),
                                               np.broadcast_to(T, (x.shape[0], T.size))], -1)))
    pars = Parameters((Parameter("a", 0.0, Uniform(-50, 50)),
                       Parameter("b", 0.0, Uniform(-50, 50))))
    return Likelihood(model, Observations.single(T, Y), pars, ErrorModel(sigma=sigma))


def test_linear_least_squares_matches_numpy_polyfit():
    # reference: ordinary least squares by numpy.polyfit (covariance sigma^2 (X'X)^-1)
    fit = maximum_likelihood(line_likelihood(), starts=4, local=2)
    coef, cov = np.polyfit(T, Y, 1, cov="unscaled")
    assert fit.values["b"] == pytest.approx(coef[0], rel=1e-9)
    assert fit.values["a"] == pytest.approx(coef[1], rel=1e-9)
    assert np.allclose(fit.covariance, SIGMA**2 * cov[::-1, ::-1], rtol=1e-8)
    assert fit.converged and fit.agreeing_starts == len(fit.starts)
    s = fit.summary()
    assert s["parameters"]["b"]["se"] == pytest.approx(SIGMA * np.sqrt(cov[0, 0]))
    assert "converged" in fit.report()


def test_profile_interval_of_a_linear_model_is_the_wald_interval():
    fit = maximum_likelihood(line_likelihood(), starts=4, local=1)
    prof = profile_likelihood(fit, "b", points=81, width=3.0)
    se = fit.standard_errors["b"]
    half = np.sqrt(stats.chi2.ppf(0.95, 1)) * se
    low, high = prof.interval()
    assert low == pytest.approx(fit.values["b"] - half, rel=1e-4)
    assert high == pytest.approx(fit.values["b"] + half, rel=1e-4)
    assert np.max(prof.log_likelihood) == pytest.approx(fit.log_likelihood_max, abs=1e-9)
    # a grid that does not reach the threshold on one side says so
    short = profile_likelihood(fit, "b", values=np.linspace(fit.values["b"],
                                                            fit.values["b"] + 3 * se, 7))
    assert np.isnan(short.interval()[0]) and np.isfinite(short.interval()[1])
    with pytest.raises(FitFailure):
        profile_likelihood(fit, "c")


def test_a_model_that_always_fails_raises_fit_failure():
    model = ModelFunction(("a", "b"), lambda x: np.full((x.shape[0], T.size), np.nan))
    pars = Parameters((Parameter("a", 0.0, Uniform(-5, 5)), Parameter("b", 0.0, Uniform(-5, 5))))
    lik = Likelihood(model, Observations.single(T, Y), pars, ErrorModel(sigma=1.0))
    with pytest.raises(FitFailure, match="no maximum-likelihood search"):
        maximum_likelihood(lik, starts=4)


def test_an_unidentified_combination_is_reported():
    model = ModelFunction(("a", "b"), lambda x: np.broadcast_to(
        (x[:, :1] + x[:, 1:2]), (x.shape[0], T.size)).copy())
    pars = Parameters((Parameter("a", 0.5, Uniform(-5, 5)), Parameter("b", 0.5, Uniform(-5, 5))))
    lik = Likelihood(model, Observations.single(T, np.full(T.size, 2.0) + 0.01 * np.sin(T)),
                     pars, ErrorModel(sigma=0.1))
    fit = maximum_likelihood(lik, starts=4, local=2)
    assert not fit.converged
    assert any("singular" in m for m in fit.messages)


def _decay_likelihood(search_error: float | None):
    """y = A exp(-k t) with exact sensitivities; the search sensitivities, when asked for,
    are off by a fixed matrix (not a re-parametrisation of the exact ones, so a search
    that trusted them would stop where their gradient, not the true one, vanishes)."""
    t = np.linspace(0.0, 4.0, 15)
    noise = 0.02 * np.sin(7.0 * t + 1.0)
    y = 2.0 * np.exp(-0.9 * t) + noise
    calls = {"search": 0, "exact": 0}

    def exact(x):
        calls["exact"] += 1
        a, k = x[:, :1], x[:, 1:2]
        e = np.exp(-k * t)
        return a * e, np.stack([e, -a * t * e], -1)

    def rough(x):
        calls["search"] += 1
        mu, d = exact(x)
        calls["exact"] -= 1
        wrong = search_error * np.stack([np.cos(t), t**2 / 16.0], -1)
        return mu, d + wrong

    model = ModelFunction(("A", "k"), lambda x: exact(x)[0], exact,
                          rough if search_error is not None else None)
    pars = Parameters((Parameter("A", 1.0, Uniform(0.01, 10)),
                       Parameter("k", 0.5, Uniform(0.01, 10))))
    return Likelihood(model, Observations.single(t, y), pars, ErrorModel(sigma=0.02)), calls


def test_cheap_search_sensitivities_reach_the_exact_optimum_and_covariance():
    exact_lik, _ = _decay_likelihood(None)
    reference = maximum_likelihood(exact_lik, starts=4, local=2)
    lik, calls = _decay_likelihood(0.3)
    fit = maximum_likelihood(lik, starts=4, local=2)
    assert calls["search"] > 0 and calls["exact"] > 0
    assert fit.converged
    assert fit.log_likelihood_max == pytest.approx(reference.log_likelihood_max, abs=1e-9)
    assert np.allclose(fit.u, reference.u, rtol=1e-7)
    # the covariance comes from the exact sensitivities, never the search ones
    assert np.allclose(fit.covariance, reference.covariance, rtol=1e-6)
