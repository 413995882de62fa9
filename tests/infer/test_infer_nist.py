"""NIST StRD nonlinear-regression checks of the maximum-likelihood code.

Source: NIST Statistical Reference Datasets, Nonlinear Regression, datasets Misra1a
(lower difficulty) and BoxBOD (higher difficulty), model y = b1*(1-exp(-b2*x)): certified
estimates, certified standard errors, residual sum of squares and residual standard
deviation. Data and certified values are recalled from memory (see
``data/nist_strd_exponential.json``); the fit of the recalled data reproducing the
recalled certificate to 10 digits cross-checks the two.

The model is the first-order rise A -> P with [A]0 = 1 observed through a scale factor:
[P](t) = 1 - exp(-k t), y = b1*[P], k = b2. The certified standard errors use the
residual variance with n - p degrees of freedom, which is what mechfit reports when the
noise level is fitted.
"""

import json
from pathlib import Path

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
    maximum_likelihood,
)

DATA = json.loads((Path(__file__).parent / "data" / "nist_strd_exponential.json").read_text())
DIGITS = 1e-6  # at least 6 significant digits


def rise_model(x, analytic):
    def predict(p):
        return p[:, :1] * (1.0 - np.exp(-p[:, 1:] * x))

    def sensitivities(p):
        e = np.exp(-p[:, 1:] * x)
        return p[:, :1] * (1 - e), np.stack([1 - e, p[:, :1] * x * e], axis=-1)

    return ModelFunction(("b1", "b2"), predict, sensitivities if analytic else None)


def build(name, start, analytic):
    d = DATA["datasets"][name]
    x, y = np.array(d["x"], float), np.array(d["y"], float)
    pars = Parameters((Parameter("b1", start[0], LogUniform(1e-3, 1e6), "log"),
                       Parameter("b2", start[1], LogUniform(1e-8, 1e3), "log")))
    return Likelihood(rise_model(x, analytic), Observations.single(x, y), pars, ErrorModel()), d


@pytest.mark.parametrize("analytic", [True, False], ids=["sensitivities", "differences"])
@pytest.mark.parametrize("start", ["start1", "start2"])
@pytest.mark.parametrize("name", ["Misra1a", "BoxBOD"])
def test_certified_values_from_the_certified_starts(name, start, analytic):
    d = DATA["datasets"][name]
    lik, d = build(name, d[start], analytic)
    fit = maximum_likelihood(lik, starts=0)            # the certified start only
    assert len(fit.starts) == 1
    assert fit.converged, fit.messages
    for par, value, se in zip(("b1", "b2"), d["certified"], d["certified_se"], strict=True):
        assert fit.values[par] == pytest.approx(value, rel=DIGITS)
        assert fit.standard_errors[par] == pytest.approx(se, rel=DIGITS)
    mu = lik.predict(lik.parameters.natural(fit.u))[0]
    rss = float(np.sum((lik.observations.values - mu) ** 2))
    assert rss == pytest.approx(d["residual_sum_of_squares"], rel=DIGITS)
    dof = d["degrees_of_freedom"]
    assert lik.n_data - 2 == dof
    assert np.sqrt(rss / dof) == pytest.approx(d["residual_sd"], rel=DIGITS)
    # the fitted noise level is the maximum-likelihood one, sqrt(RSS / n)
    assert fit.values["sigma_y"] == pytest.approx(np.sqrt(rss / lik.n_data), rel=1e-6)


@pytest.mark.parametrize("name", ["Misra1a", "BoxBOD"])
def test_multistart_from_the_prior_finds_the_certified_optimum(name):
    lik, d = build(name, (1.0, 1.0), analytic=True)
    fit = maximum_likelihood(lik, starts=32, local=6, seed=3)
    assert fit.converged and fit.agreeing_starts >= 2
    assert fit.values["b1"] == pytest.approx(d["certified"][0], rel=DIGITS)
    assert fit.values["b2"] == pytest.approx(d["certified"][1], rel=DIGITS)
    corr = fit.correlation[:2, :2]
    assert np.allclose(np.diag(corr), 1.0) and abs(corr[0, 1]) < 1.0
