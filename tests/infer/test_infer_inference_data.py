"""InferenceData groups, run-level log-likelihood, and the netCDF round trip."""

import numpy as np
import pytest

from mechfit.infer import (
    ErrorModel,
    Fixed,
    Likelihood,
    LogUniform,
    ModelFunction,
    Observations,
    Parameter,
    Parameters,
    ResultExistsError,
    SamplingSettings,
    inference_data,
    maximum_likelihood,
    read_inference_data,
    sample_posterior,
    write_inference_data,
)
from mechfit.infer.diagnostics import arviz

T = np.linspace(0.0, 4.0, 8)


@pytest.fixture(scope="module")
def fitted():
    rng = np.random.default_rng(5)
    n = T.size
    y = np.tile(2.0 * np.exp(-0.7 * T), 3) + 0.03 * rng.standard_normal(3 * n)
    obs = Observations(y, np.zeros(3 * n, int), np.repeat([0, 1, 2], n), np.tile(T, 3),
                       ("A410",), ("r1", "r2", "r3"),
                       conditions={"temperature": np.array([298.15, 303.15, 308.15]),
                                   "A0": np.array([1.0, 2.0, 3.0])},
                       units={"time": "s"})
    model = ModelFunction(("A", "k"), lambda x: np.tile(x[:, :1] * np.exp(-x[:, 1:2] * T), 3))
    pars = Parameters((Parameter("A", 1.0, LogUniform(0.01, 100.0), "log"),
                       Parameter("k", 1.0, LogUniform(1e-3, 1e3), "log"),
                       Parameter("base", 0.0, Fixed(0.0))))
    lik = Likelihood(model, obs, pars, ErrorModel())
    fit = maximum_likelihood(lik, starts=8, local=2)
    post = sample_posterior(lik, fit.u, fit.covariance_free,
                            SamplingSettings(walkers=12, min_steps=800, max_steps=800))
    return lik, fit, post, inference_data(post, fit=fit)


def test_groups_and_shapes(fitted):
    lik, fit, post, idata = fitted
    for group in ("posterior", "sample_stats", "log_likelihood", "posterior_predictive",
                  "observed_data", "constant_data"):
        assert hasattr(idata, group), group
    chains, draws = post.draws.shape[:2]
    assert set(idata.posterior.data_vars) == {"A", "k", "sigma_A410"}
    assert idata.log_likelihood["y"].shape == (chains, draws, lik.n_data)
    assert idata.log_likelihood["y_by_run"].shape == (chains, draws, 3)
    assert np.allclose(idata.log_likelihood["y_by_run"].sum("run"),
                       idata.log_likelihood["y"].sum("point"))
    assert np.allclose(idata.sample_stats["total_log_likelihood"],
                       idata.log_likelihood["y"].sum("point"))
    assert list(idata.observed_data["run_name"].values[:2]) == ["r1", "r1"]
    assert np.allclose(idata.constant_data["condition_A0"], [1.0, 2.0, 3.0])
    assert idata.constant_data["fixed_base"].values.ravel()[0] == 0.0
    # the pointwise values agree with the likelihood evaluated directly
    u = post.draws[0, :3]
    assert np.allclose(idata.log_likelihood["y"].values[0, :3], lik.pointwise(u))
    # arviz can use both groupings (PSIS-LOO over points and over runs)
    az = arviz()
    assert np.isfinite(az.loo(idata, var_name="y").elpd_loo)


def test_netcdf_round_trip_and_no_silent_overwrite(fitted, tmp_path):
    _, _, _, idata = fitted
    path = write_inference_data(idata, tmp_path / "posterior.nc")
    back = read_inference_data(path)
    for group in ("posterior", "log_likelihood", "posterior_predictive", "observed_data",
                  "constant_data", "sample_stats"):
        a, b = getattr(idata, group), getattr(back, group)
        for name in a.data_vars:
            assert np.array_equal(a[name].values, b[name].values), (group, name)
    assert back.posterior.attrs["converged"] in (0, 1)
    assert "maximum_likelihood" in back.posterior.attrs
    before = path.read_bytes()
    with pytest.raises(ResultExistsError, match="exists already"):
        write_inference_data(idata, path)
    assert path.read_bytes() == before
    with pytest.raises(Exception, match="no such posterior"):
        read_inference_data(tmp_path / "missing.nc")


def test_short_budget_with_more_walkers_than_draws_is_quiet(fitted):
    # a batch's reduced budget may keep fewer draws per walker than walkers: the layout
    # (walker = chain) is right, so arviz's "More chains than draws" warning is not shown
    import warnings

    lik, fit, _post, _idata = fitted
    short = sample_posterior(lik, fit.u, fit.covariance_free,
                             SamplingSettings(walkers=40, min_steps=20, max_steps=20,
                                              moves="de"))
    assert short.draws.shape[0] > short.draws.shape[1]
    with warnings.catch_warnings():
        warnings.simplefilter("error", UserWarning)
        idata = inference_data(short, fit=fit)
    assert idata.posterior.sizes["chain"] == short.draws.shape[0]
