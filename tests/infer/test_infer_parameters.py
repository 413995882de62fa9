"""Parameters, priors, default bounds, ties and the maps between spaces."""

import math

import numpy as np
import pytest
from scipy import constants, integrate, stats

from mechfit import parse_mechanism
from mechfit.infer import (
    Fixed,
    LogNormal,
    LogUniform,
    Normal,
    Parameter,
    ParameterError,
    Parameters,
    Uniform,
    prior_from_spec,
    rate_constant_bounds,
)


def test_default_bounds_follow_the_diffusion_limit_and_the_eyring_frequency():
    # diffusion limit in water ~1e10 M^-1 s^-1 (common practice); k_B T / h at 298.15 K
    assert rate_constant_bounds(2)[1] == 1e10
    assert rate_constant_bounds(1)[1] == pytest.approx(constants.k * 298.15 / constants.h)
    assert rate_constant_bounds(1, temperature=350.0)[1] == pytest.approx(
        constants.k * 350.0 / constants.h)
    # units: mM and min
    low, high = rate_constant_bounds(2, concentration_unit=1e-3, time_unit=60.0)
    assert high == pytest.approx(1e10 * 1e-3 * 60.0)
    assert rate_constant_bounds(1, time_unit=60.0)[1] == pytest.approx(
        60 * constants.k * 298.15 / constants.h)


def test_smoluchowski_rate_in_water_is_of_the_order_of_the_bound():
    # k_D = 8RT/(3 eta) (Smoluchowski, Z. phys. Chem. 92 (1917) 129), water at 298.15 K
    # eta = 0.890 mPa s (recalled from memory; CRC Handbook value)
    kd = 8 * constants.R * 298.15 / (3 * 0.890e-3) * 1e3  # m^3/(mol s) -> L/(mol s)
    assert 5e9 < kd < 1e10 == rate_constant_bounds(2)[1]


def test_from_mechanism_orders_priors_fixed_values_and_wegscheider_tie():
    m = parse_mechanism("A <=> B @ k1, k_1\nB <=> C @ k2, k_2\nC <=> A @ k3, k_3\n"
                        "A + B -> D @ k4\nD -> E @ k5 = 2.5")
    p = Parameters.from_mechanism(m, priors={"k2": LogNormal(1.0, 0.5)})
    assert p["k4"].order == 2 and p["k1"].order == 1
    assert p["k4"].prior == LogUniform(*rate_constant_bounds(2))
    assert p["k2"].prior == LogNormal(1.0, 0.5)
    assert p["k5"].fixed and p["k5"].value == 2.5
    assert p["k_3"].tie is not None and not p["k_3"].free
    assert set(p.free_names) == {"k1", "k_1", "k2", "k_2", "k3", "k4"}
    assert all(q.transform == "log" for q in p.free_parameters)
    values = {"k1": 2.0, "k_1": 3.0, "k2": 5.0, "k_2": 7.0, "k3": 11.0, "k4": 1.0}
    x = p.natural(p.free_vector(values))[0]
    assert x[p.index("k_3")] == pytest.approx(2.0 * 5.0 * 11.0 / (3.0 * 7.0))
    assert x[p.index("k5")] == 2.5
    # detailed balance holds: K1 K2 K3 = 1
    k = dict(zip(p.names, x, strict=True))
    assert k["k1"] / k["k_1"] * k["k2"] / k["k_2"] * k["k3"] / k["k_3"] == pytest.approx(1.0)


def test_natural_jacobian_matches_differences_through_a_tie():
    m = parse_mechanism("A <=> B @ k1, k_1\nB <=> C @ k2, k_2\nC <=> A @ k3, k_3")
    p = Parameters.from_mechanism(m)
    u = np.log(np.array([[2.0, 3.0, 5.0, 7.0, 11.0]]))
    jac = p.natural_jacobian(u)[0]
    h = 1e-6
    for j in range(u.shape[1]):
        up, dn = u.copy(), u.copy()
        up[0, j] += h
        dn[0, j] -= h
        fd = (p.natural(up)[0] - p.natural(dn)[0]) / (2 * h)
        assert np.allclose(jac[:, j], fd, rtol=1e-6)


def test_ties_from_text_and_errors():
    base = Parameters((Parameter("a", 1.0, Uniform(0, 2)), Parameter("b", 1.0, Uniform(0, 2))))
    tied = base.set("b", tie="2*a")
    assert tied.free_names == ("a",)
    assert tied.natural(np.array([[0.7]]))[0, 1] == pytest.approx(1.4)
    with pytest.raises(ParameterError, match="not a parameter"):
        base.set("b", tie="2*c")
    with pytest.raises(ParameterError, match="loop"):
        base.set("a", tie="b").set("b", tie="a")
    with pytest.raises(ParameterError, match="twice"):
        Parameters((Parameter("a", 1.0, Uniform(0, 2)), Parameter("a", 1.0, Uniform(0, 2))))
    with pytest.raises(ParameterError, match="negative"):
        Parameter("k", 1.0, Uniform(-1, 1), "log")
    with pytest.raises(ParameterError, match="unknown parameters"):
        Parameters.from_mechanism(parse_mechanism("A -> B @ k1"), priors={"k9": Fixed(1.0)})


def test_log_prior_is_a_normalised_density_in_the_sampling_space():
    for prior in (LogNormal(2.0, 0.7), LogUniform(0.1, 50.0), Normal(3.0, 1.0, positive=True),
                  Uniform(0.5, 4.0)):
        p = Parameters((Parameter("k", 1.0, prior, "log"),))
        edges = [math.log(v) for v in prior.support if 0 < v < math.inf]
        total, _ = integrate.quad(lambda u, p=p: math.exp(p.log_prior(np.array([[u]]))[0]),
                                  -12, 8, limit=400, points=[0.0, *edges])
        assert total == pytest.approx(1.0, abs=1e-6), prior
    # a log-normal prior is a normal density of ln k (scipy.stats reference)
    p = Parameters((Parameter("k", 1.0, LogNormal(2.0, 0.7), "log"),))
    u = np.array([[0.1], [0.9], [1.7]])
    assert np.allclose(p.log_prior(u), stats.norm(math.log(2.0), 0.7).logpdf(u[:, 0]))


def test_start_design_fills_the_prior_interval():
    p = Parameters((Parameter("k1", 1.0, LogUniform(1e-4, 1e4), "log"),
                    Parameter("a", 0.0, Uniform(-1, 1))))
    for method in ("sobol", "lhs"):
        u = p.start_design(64, method=method, seed=1)
        assert u.shape == (64, 2)
        assert np.all(u[:, 0] > math.log(1e-4)) and np.all(u[:, 0] < math.log(1e4))
        # space filling: every decade of k1 gets starts
        decades = np.floor(u[:, 0] / math.log(10)).astype(int)
        assert set(decades) == set(range(-4, 4))
    with pytest.raises(ParameterError):
        p.start_design(4, method="grid")


def test_prior_from_spec_and_describe():
    assert prior_from_spec({"kind": "uniform", "low": 0, "high": 2}) == Uniform(0.0, 2.0)
    assert prior_from_spec({"kind": "normal", "mean": 1, "sd": 2}, positive=True).positive
    with pytest.raises(ParameterError, match="unknown prior kind"):
        prior_from_spec({"kind": "gamma"})
    with pytest.raises(ParameterError, match="missing sd"):
        prior_from_spec({"kind": "normal", "mean": 1})
    with pytest.raises(ParameterError):
        LogUniform(0.0, 1.0)
    m = parse_mechanism("A -> B @ k1")
    d = Parameters.from_mechanism(m).describe()
    assert d["k1"]["prior"]["kind"] == "LogUniform" and d["k1"]["free"]
    assert "k1" in Parameters.from_mechanism(m).report()
