"""PSIS-LOO on points, WAIC and leave-one-run-out, checked against exact leave-one-out
predictive densities of a conjugate Gaussian model.

Model: y = b x + e, e ~ N(0, sigma^2) with sigma known, prior b ~ N(0, tau^2). The
posterior of b and the predictive density of held-out data given the rest are Gaussian in
closed form (Gelman et al., Bayesian Data Analysis, 3rd ed. 2013, sec. 2.5 and 14.2,
recalled from memory), so every leave-one-out value is known exactly. Posterior draws
are generated from the exact posterior.
"""

import math

import arviz as az
import numpy as np
import pytest
from scipy.stats import multivariate_normal, norm

from mechfit.compare import (
    ComparisonError,
    difference,
    leave_one_run_out,
    log_predictive_density,
    predictive_weights,
    psis_loo,
    run_log_likelihood,
    waic,
)

SIGMA = 0.3
TAU = 10.0


class ConjugateLine:
    """Data, exact posterior draws and exact leave-out predictive densities."""

    def __init__(self, x, runs, seed, slope=1.3):
        rng = np.random.default_rng(seed)
        self.x = np.asarray(x, dtype=float)
        self.runs = np.asarray(runs)
        self.y = slope * self.x + rng.normal(0.0, SIGMA, self.x.size)
        precision, mean = self.posterior(np.ones(self.x.size, bool))
        b = rng.normal(mean, 1 / math.sqrt(precision), (4, 1000))
        self.draws = b
        loglik = norm.logpdf(self.y, b[..., None] * self.x, SIGMA)
        self.idata = az.from_dict(posterior={"b": b}, log_likelihood={"y": loglik})

    def posterior(self, keep):
        x, y = self.x[keep], self.y[keep]
        precision = 1 / TAU**2 + x @ x / SIGMA**2
        return precision, (x @ y / SIGMA**2) / precision

    def exact_point(self, i):
        keep = np.ones(self.x.size, bool)
        keep[i] = False
        precision, mean = self.posterior(keep)
        return norm.logpdf(self.y[i], mean * self.x[i],
                           math.sqrt(SIGMA**2 + self.x[i] ** 2 / precision))

    def exact_run(self, name):
        held = self.runs == name
        precision, mean = self.posterior(~held)
        x = self.x[held]
        cov = SIGMA**2 * np.eye(x.size) + np.outer(x, x) / precision
        return float(multivariate_normal(mean * x, cov).logpdf(self.y[held]))


def _balanced(seed=0):
    x = np.tile(np.linspace(0.2, 2.0, 8), 5)
    runs = np.repeat([f"r{i}" for i in range(1, 6)], 8)
    return ConjugateLine(x, runs, seed)


def test_psis_loo_and_waic_agree_with_exact_leave_one_out():
    model = _balanced()
    exact = np.array([model.exact_point(i) for i in range(model.x.size)])
    loo = psis_loo(model.idata, "y")
    assert loo.n_points == 40 and loo.n_high_k == 0
    assert np.max(np.abs(loo.pointwise - exact)) < 0.02
    assert loo.elpd == pytest.approx(exact.sum(), abs=0.15)
    assert loo.se == pytest.approx(math.sqrt(40 * np.var(exact)), rel=0.02)
    precision, mean = model.posterior(np.ones(40, bool))
    lppd = norm.logpdf(model.y, mean * model.x,
                       np.sqrt(SIGMA**2 + model.x**2 / precision)).sum()
    assert loo.p_effective == pytest.approx(lppd - exact.sum(), abs=0.1)
    w = waic(model.idata, "y")
    assert w.elpd == pytest.approx(exact.sum(), abs=0.2) and w.pareto_k is None


def test_leave_one_run_out_agrees_with_exact_values_and_needs_no_refit():
    model = _balanced(1)
    calls = []

    def refit(name):
        calls.append(name)
        return model.exact_run(name)

    result = leave_one_run_out(model.idata, "y", model.runs, refit)
    exact = np.array([model.exact_run(n) for n in result.labels])
    assert result.labels == ("r1", "r2", "r3", "r4", "r5")
    assert calls == [] and result.exact == ()
    assert np.all(result.pareto_k < 0.7)
    assert np.max(np.abs(result.pointwise - exact)) < 0.1
    assert result.se == pytest.approx(math.sqrt(5 * np.var(result.pointwise)))


def _leveraged(seed=2):
    # four runs at small x and one run far out that pins the slope: leaving that run out
    # moves the posterior far, so PSIS fails for it (Pareto k > 0.7)
    x = np.concatenate([np.tile(np.linspace(0.1, 0.5, 6), 4), np.linspace(8.0, 12.0, 12)])
    runs = np.array(["a"] * 6 + ["b"] * 6 + ["c"] * 6 + ["d"] * 6 + ["far"] * 12)
    return ConjugateLine(x, runs, seed)


def test_runs_with_high_pareto_k_are_refitted_exactly():
    model = _leveraged()
    calls = []

    def refit(name):
        calls.append(name)
        return model.exact_run(name)

    plain = leave_one_run_out(model.idata, "y", model.runs)
    far = plain.labels.index("far")
    assert plain.pareto_k[far] > 0.7 and plain.n_high_k >= 1
    assert plain.elpd_data["warning"]
    refitted = leave_one_run_out(model.idata, "y", model.runs, refit)
    assert "far" in refitted.exact and calls == list(refitted.exact)
    assert refitted.n_high_k == 0 and not refitted.elpd_data["warning"]
    exact = np.array([model.exact_run(n) for n in refitted.labels])
    # the refitted run is exact; the others come from PSIS and stay close
    assert refitted.pointwise[far] == pytest.approx(exact[far], rel=1e-12)
    assert abs(plain.pointwise[far] - exact[far]) > abs(refitted.pointwise[far] - exact[far])
    assert refitted.elpd == pytest.approx(exact.sum(), abs=0.3)
    assert float(refitted.elpd_data["elpd_loo"]) == pytest.approx(refitted.elpd)
    flat = run_log_likelihood(model.idata, "y", model.runs)[0].reshape(-1, 5)
    lppd = np.log(np.mean(np.exp(flat), axis=0)).sum()
    assert refitted.p_effective == pytest.approx(lppd - refitted.elpd)


def test_refit_that_returns_no_number_is_a_clear_error():
    model = _leveraged()
    with pytest.raises(ComparisonError) as info:
        leave_one_run_out(model.idata, "y", model.runs, lambda name: math.nan)
    assert info.value.names == ("far",)
    with pytest.raises(ComparisonError):
        leave_one_run_out(model.idata, "y", model.runs, lambda name: "not a number")


def test_run_labels_and_variables_are_checked():
    model = _balanced()
    with pytest.raises(ComparisonError, match="40 points"):
        leave_one_run_out(model.idata, "y", model.runs[:-1])
    with pytest.raises(ComparisonError, match="at least two runs"):
        leave_one_run_out(model.idata, "y", ["only"] * 40)
    with pytest.raises(ComparisonError, match="no variable 'z'"):
        psis_loo(model.idata, "z")
    with pytest.raises(ComparisonError, match="no log_likelihood group"):
        psis_loo(az.from_dict(posterior={"b": model.draws}), "y")


@pytest.mark.filterwarnings("ignore:The inplace keyword")
def test_difference_standard_error_matches_arviz_compare_and_weights_are_stable():
    model = _balanced(3)
    good = psis_loo(model.idata, "y")
    # a worse candidate: the same draws with a slope biased by 5 %
    loglik = norm.logpdf(model.y, 1.05 * model.draws[..., None] * model.x, SIGMA)
    worse = psis_loo(az.from_dict(posterior={"b": model.draws}, log_likelihood={"y": loglik}),
                     "y")
    d, se = difference(good.pointwise, worse.pointwise)
    table = az.compare({"good": good.elpd_data, "worse": worse.elpd_data}, ic="loo")
    assert d == pytest.approx(table.loc["worse", "elpd_diff"])
    assert se == pytest.approx(table.loc["worse", "dse"])
    weights = predictive_weights({"good": good, "worse": worse})
    assert weights.stacking["good"] == pytest.approx(table.loc["good", "weight"], abs=1e-4)
    assert sum(weights.pseudo_bma.values()) == pytest.approx(1.0)
    assert weights.difference["worse"] == pytest.approx(d)
    # a sharp likelihood (every term shifted by +900) must not overflow the stacking weights
    sharp = {}
    for key, estimate in (("good", good), ("worse", worse)):
        data = estimate.elpd_data.copy()
        data["loo_i"] = data["loo_i"] + 900.0
        sharp[key] = type(estimate)(estimate.method, estimate.elpd + 900 * 40, estimate.se,
                                    estimate.p_effective, estimate.pointwise + 900.0,
                                    estimate.labels, estimate.pareto_k, (), data)
    sharp_weights = predictive_weights(sharp)
    assert sharp_weights.stacking["good"] == pytest.approx(weights.stacking["good"], abs=1e-6)
    assert np.isfinite(list(sharp_weights.stacking.values())).all()


def test_psis_needs_the_posterior_group():
    model = _balanced()
    bare = az.from_dict(log_likelihood={"y": model.idata.log_likelihood["y"].values})
    with pytest.raises(ComparisonError, match="no posterior group"):
        psis_loo(bare, "y")
    with pytest.raises(ComparisonError, match="no posterior group"):
        leave_one_run_out(bare, "y", model.runs)
    assert waic(bare, "y").n_points == 40  # WAIC needs the log-likelihood only


def test_log_predictive_density_from_refit_draws_matches_the_closed_form():
    model = _leveraged(4)
    rng = np.random.default_rng(4)
    for name in ("a", "far"):
        held = model.runs == name
        precision, mean = model.posterior(~held)
        b = rng.normal(mean, 1 / math.sqrt(precision), 40000)
        sums = norm.logpdf(model.y[held], b[:, None] * model.x[held], SIGMA).sum(axis=1)
        assert log_predictive_density(sums) == pytest.approx(model.exact_run(name), abs=0.05)
    with pytest.raises(ComparisonError):
        log_predictive_density([0.0, -np.inf])
