"""Identifiability: a model that only sees k1*k2 and ignores kx."""

import numpy as np
import pytest

from mechfit.infer import (
    ErrorModel,
    Likelihood,
    LogUniform,
    ModelFunction,
    Observations,
    Parameter,
    Parameters,
    SamplingSettings,
    analyse_identifiability,
    maximum_likelihood,
    sample_posterior,
)
from mechfit.infer.identifiability import directions

T = np.linspace(0.0, 5.0, 15)


@pytest.fixture(scope="module")
def analysis():
    def predict(x):
        return x[:, :1] * np.exp(-(x[:, 1:2] * x[:, 2:3]) * T)

    rng = np.random.default_rng(7)
    y = 3.0 * np.exp(-0.6 * T) + 0.02 * rng.standard_normal(T.size)
    pars = Parameters((Parameter("A", 1.0, LogUniform(0.1, 10.0), "log"),
                       Parameter("k1", 1.0, LogUniform(1e-2, 1e2), "log"),
                       Parameter("k2", 1.0, LogUniform(1e-2, 1e2), "log"),
                       Parameter("kx", 1.0, LogUniform(1e-2, 1e2), "log")))
    lik = Likelihood(ModelFunction(("A", "k1", "k2", "kx"), predict), Observations.single(T, y),
                     pars, ErrorModel(sigma=0.02))
    fit = maximum_likelihood(lik, starts=8, local=2)
    post = sample_posterior(lik, fit.u, fit.covariance_free,
                            SamplingSettings(walkers=16, min_steps=2000, max_steps=2000))
    return fit, post, analyse_identifiability(fit, post)


def test_fisher_directions_name_the_sloppy_combinations(analysis):
    fit, _, ident = analysis
    sloppy = ident.sloppy
    assert len(sloppy) == 2
    texts = [d.text() for d in sloppy]
    assert "kx^1" in texts
    ratio = next(d for d in sloppy if "kx" not in d.text())
    assert ratio.weights["k1"] == pytest.approx(-ratio.weights["k2"], rel=1e-6)
    best = ident.fisher_directions[0]
    assert not best.sloppy
    # the determined subspace is spanned by A and the product k1*k2: equal weights on k1, k2
    determined = [d for d in ident.fisher_directions if not d.sloppy]
    assert len(determined) == 2
    for d in determined:
        assert d.weights["k1"] == pytest.approx(d.weights["k2"], rel=1e-6)
        assert abs(d.weights["kx"]) < 1e-9
    assert len(ident.identifiable_combinations) == 2


def test_posterior_flags_correlation_and_prior_dominated_parameter(analysis):
    _, _, ident = analysis
    # kx never enters the model: its posterior is its prior; A is pinned by the data;
    # k1 and k2 are each only weakly informed (the data fix their product only)
    assert "kx" in ident.prior_dominated and "A" not in ident.prior_dominated
    assert abs(ident.contraction["kx"]) < 0.1
    assert ident.contraction["A"] > 0.9
    assert ident.contraction["k1"] < 0.5 and ident.contraction["k2"] < 0.5
    pairs = {(a, b): r for a, b, r in ident.correlated_pairs}
    assert pairs[("k1", "k2")] < -0.95
    s = ident.summary()
    assert s["identifiable"] is False and "kx" in s["prior_dominated"]
    assert "kx" in ident.report()


def test_directions_of_a_diagonal_information_matrix():
    d = directions(np.diag([400.0, 0.25]), ("a", "b"))
    assert [x.text() for x in d] == ["a^1", "b^1"]
    assert d[0].sd == pytest.approx(0.05) and d[1].sd == pytest.approx(2.0)
    assert [x.sloppy for x in d] == [False, True]
