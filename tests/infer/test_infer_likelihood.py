"""Likelihoods against scipy.stats densities, vectorisation, error models, robust fits."""

import math

import numpy as np
import pytest
from scipy import optimize, stats

from mechfit.errors import IntegrationFailure
from mechfit.infer import (
    ErrorModel,
    Likelihood,
    LikelihoodError,
    LogUniform,
    ModelFunction,
    Observations,
    Parameter,
    Parameters,
    Uniform,
    maximum_likelihood,
)

T = np.linspace(0.0, 4.0, 9)


def decay_model(times=T, observables=1):
    def predict(x):
        one = x[:, :1] * np.exp(-x[:, 1:2] * times)
        return np.tile(one, observables)

    def sensitivities(x):
        e = np.exp(-x[:, 1:2] * times)
        mu = x[:, :1] * e
        jac = np.stack([e, -x[:, :1] * times * e], axis=-1)
        return np.tile(mu, observables), np.tile(jac, (1, observables, 1))

    return ModelFunction(("A", "k"), predict, sensitivities)


def decay_parameters():
    return Parameters((Parameter("A", 1.0, LogUniform(0.01, 100.0), "log"),
                       Parameter("k", 1.0, LogUniform(1e-3, 1e3), "log")))


def two_runs(values):
    n = T.size
    return Observations(values, np.zeros(2 * n, int), np.repeat([0, 1], n), np.tile(T, 2),
                        ("y",), ("r1", "r2"), conditions={"T": np.array([300.0, 310.0])})


def test_gaussian_and_student_t_pointwise_match_scipy():
    rng = np.random.default_rng(0)
    y = 2.0 * np.exp(-0.7 * T) + 0.05 * rng.standard_normal(T.size)
    obs = Observations.single(T, y)
    u = np.log([[2.1, 0.65], [1.9, 0.8]])
    mu = 2.1 * np.exp(-0.65 * T)
    gauss = Likelihood(decay_model(), obs, decay_parameters(), ErrorModel(sigma=0.05))
    assert np.allclose(gauss.pointwise(u)[0], stats.norm(mu, 0.05).logpdf(y))
    student = Likelihood(decay_model(), obs, decay_parameters(),
                         ErrorModel("student_t", sigma=0.05, nu=3.0))
    assert np.allclose(student.pointwise(u)[0], stats.t(3.0, mu, 0.05).logpdf(y))
    prop = Likelihood(decay_model(), obs, decay_parameters(),
                      ErrorModel(sigma=0.01, proportional=True, relative=0.1))
    sd = np.sqrt(0.01**2 + (0.1 * mu) ** 2)
    assert np.allclose(prop.pointwise(u)[0], stats.norm(mu, sd).logpdf(y))


def test_batch_equals_row_by_row_and_runs_sum_to_the_total():
    rng = np.random.default_rng(1)
    y = np.concatenate([2 * np.exp(-0.7 * T), 2 * np.exp(-0.7 * T)]) + 0.02 * rng.standard_normal(
        2 * T.size)
    calls = []

    def predict(x):
        calls.append(x.shape[0])
        return np.tile(x[:, :1] * np.exp(-x[:, 1:2] * T), 2)

    lik = Likelihood(ModelFunction(("A", "k"), predict), two_runs(y), decay_parameters(),
                     ErrorModel(sigma=0.02))
    u = np.log(rng.uniform(0.5, 3.0, size=(7, 2)))
    batch = lik.pointwise(u)
    assert calls == [7]
    rows = np.vstack([lik.pointwise(u[i:i + 1]) for i in range(7)])
    assert np.allclose(batch, rows)
    per_run = lik.by_run(batch)
    assert per_run.shape == (7, 2)
    assert np.allclose(per_run.sum(axis=1), lik.log_likelihood(u))
    assert np.allclose(per_run[:, 0], batch[:, :T.size].sum(axis=1))


def test_log_posterior_skips_the_model_outside_the_prior_and_survives_failures():
    calls = []

    def predict(x):
        calls.append(x.shape[0])
        if np.any(x[:, 1] > 50):
            raise IntegrationFailure("step cap reached")
        return x[:, :1] * np.exp(-x[:, 1:2] * T)

    lik = Likelihood(ModelFunction(("A", "k"), predict), Observations.single(T, np.exp(-T)),
                     decay_parameters(), ErrorModel(sigma=0.1))
    u = np.log([[1.0, 1.0], [1.0, 1e6], [1.0, 60.0]])  # in, outside the prior, failing
    lp = lik.log_posterior(u)
    assert np.isfinite(lp[0]) and lp[1] == -np.inf and lp[2] == -np.inf
    assert calls[0] == 2   # the out-of-prior row never reached the model


def test_error_model_validation():
    obs = Observations.single(T, np.exp(-T))
    with pytest.raises(LikelihoodError, match="distribution"):
        ErrorModel("cauchy")
    with pytest.raises(LikelihoodError, match="missing y"):
        Likelihood(decay_model(), obs, decay_parameters(), {"z": ErrorModel()})
    with pytest.raises(LikelihoodError, match="lacks"):
        Likelihood(decay_model(), obs, Parameters((Parameter("A", 1, Uniform(0, 2)),)))
    bad = ModelFunction(("A", "k"), lambda x: np.zeros((x.shape[0], 3)))
    with pytest.raises(LikelihoodError, match="shape"):
        Likelihood(bad, obs, decay_parameters(), ErrorModel(sigma=1.0)).pointwise(np.zeros(2))
    with pytest.raises(LikelihoodError, match="finite"):
        Observations.single([0, 1], [1.0, np.nan])


def test_fitted_noise_per_observable():
    rng = np.random.default_rng(2)
    mu = 2.0 * np.exp(-0.7 * T)
    y = np.concatenate([mu + 0.01 * rng.standard_normal(T.size),
                        mu + 0.2 * rng.standard_normal(T.size)])
    n = T.size
    obs = Observations(y, np.repeat([0, 1], n), np.zeros(2 * n, int), np.tile(T, 2),
                       ("uv", "nmr"), ("r1",))
    lik = Likelihood(decay_model(observables=2), obs, decay_parameters(), ErrorModel())
    assert set(lik.parameters.free_names) == {"A", "k", "sigma_uv", "sigma_nmr"}
    fit = maximum_likelihood(lik, starts=8, local=3)
    assert fit.converged
    mu_hat = lik.predict(lik.parameters.natural(fit.u))[0]
    for o, name in enumerate(("uv", "nmr")):
        rss = np.sum((y - mu_hat)[obs.observable == o] ** 2)
        assert fit.values[f"sigma_{name}"] == pytest.approx(math.sqrt(rss / n), rel=1e-6)
    assert fit.values["sigma_nmr"] > 5 * fit.values["sigma_uv"]


def test_proportional_noise_maximum_matches_a_direct_optimisation():
    rng = np.random.default_rng(3)
    mu = 5.0 * np.exp(-0.5 * T)
    y = mu * (1 + 0.05 * rng.standard_normal(T.size)) + 0.01 * rng.standard_normal(T.size)
    lik = Likelihood(decay_model(), Observations.single(T, y), decay_parameters(),
                     ErrorModel(sigma=0.01, proportional=True))
    fit = maximum_likelihood(lik, starts=8, local=3)

    def negative(v):   # the same likelihood written out with scipy.stats
        a, k, rel = np.exp(v)
        m = a * np.exp(-k * T)
        return -stats.norm(m, np.sqrt(0.01**2 + (rel * m) ** 2)).logpdf(y).sum()

    ref = optimize.minimize(negative, np.log([4.0, 0.4, 0.1]), method="Nelder-Mead",
                            options={"xatol": 1e-10, "fatol": 1e-12, "maxiter": 20000})
    assert fit.log_likelihood_max == pytest.approx(-ref.fun, abs=1e-6)
    assert fit.values["k"] == pytest.approx(math.exp(ref.x[1]), rel=1e-4)


def test_student_t_resists_an_outlier():
    rng = np.random.default_rng(4)
    y = 2.0 * np.exp(-0.7 * T) + 0.01 * rng.standard_normal(T.size)
    y[3] += 1.0
    obs = Observations.single(T, y)
    robust = maximum_likelihood(Likelihood(decay_model(), obs, decay_parameters(),
                                           ErrorModel("student_t", nu=2.0)), starts=8)
    plain = maximum_likelihood(Likelihood(decay_model(), obs, decay_parameters(),
                                          ErrorModel()), starts=8)
    assert abs(robust.values["k"] - 0.7) < 0.02 < abs(plain.values["k"] - 0.7)
