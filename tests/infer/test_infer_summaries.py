"""Summaries and derived quantities (Eyring, Arrhenius, equilibrium constants, half-lives)."""

import math

import numpy as np
import pytest
from scipy import constants

from mechfit import parse_mechanism
from mechfit.infer import derived_quantities, half_life, summarise_parameters
from mechfit.infer.diagnostics import arviz
from mechfit.study.temperature import TemperatureLaw


def fake_posterior():
    az = arviz()
    rng = np.random.default_rng(0)
    shape = (4, 2000)
    post = {"k1": np.exp(rng.normal(math.log(2.0), 0.05, shape)),
            "Ea_k1": rng.normal(60e3, 1e3, shape),
            "k_1": np.exp(rng.normal(math.log(0.5), 0.05, shape))}
    idata = az.from_dict(posterior=post, constant_data={"fixed_k2": np.array(3.0)})
    idata.posterior.attrs["maximum_likelihood"] = (
        '{"parameters": {"k1": {"mle": 2.01, "se": 0.1}}}')
    return idata


def test_parameter_summaries_carry_median_hdi_and_mle():
    s = summarise_parameters(fake_posterior())
    assert s["k1"].median == pytest.approx(2.0, rel=0.01)
    assert s["k1"].hdi_low < 2.0 < s["k1"].hdi_high
    # a log-normal's 95 % HDI lies inside exp(ln 2 +- 1.96 * 0.05), shifted slightly low
    assert s["k1"].hdi_high < 2.0 * math.exp(1.96 * 0.05) * 1.01
    assert s["k1"].summary() == {"median": s["k1"].median, "hdi_low": s["k1"].hdi_low,
                                 "hdi_high": s["k1"].hdi_high, "mle": 2.01, "se": 0.1}
    assert s["k_1"].mle is None


def test_eyring_quantities_at_the_standard_temperature():
    # Eyring (1935): k = (k_B T/h) exp(-dG/(R T)), so dG = R T ln(k_B T / (h k)); and for a
    # reaction in solution dH = Ea - R T (Laidler, Chemical Kinetics, 3rd ed., 1987)
    law = TemperatureLaw("k1", "arrhenius", 310.0)
    d = derived_quantities(fake_posterior(), laws={"k1": law}, temperatures=(298.15, 320.0))
    R, T0 = constants.R, 298.15
    k298 = 2.0 * math.exp(-60e3 / R * (1 / T0 - 1 / 310.0))
    assert d["k1@298.15K"].median == pytest.approx(k298, rel=0.01)
    assert d["dG_k1@298.15K"].median == pytest.approx(
        R * T0 * math.log(constants.k * T0 / (constants.h * k298)), rel=1e-3)
    assert d["dH_k1"].median == pytest.approx(60e3 - R * T0, rel=0.01)
    # dS from k = (k_B T/h) exp(dS/R) exp(-dH/(R T)) at T0 (e = exp(1) factor from Ea = dH + RT)
    ds = R * (math.log(k298 * constants.h / (constants.k * T0)) + (60e3 - R * T0) / (R * T0))
    assert d["dS_k1"].median == pytest.approx(ds, abs=0.5)
    assert d["Ea_k1"].hdi_low < 60e3 < d["Ea_k1"].hdi_high


def test_equilibrium_constants_and_half_lives():
    mech = parse_mechanism("A <=> B @ k1, k_1\nB -> C @ k2")
    d = derived_quantities(fake_posterior(), mechanism=mech, half_lives={"k1": (1, None)})
    assert d["K_1"].median == pytest.approx(4.0, rel=0.01)
    assert d["t_half_k1"].median == pytest.approx(math.log(2) / 2.0, rel=0.01)
    assert half_life(2.0, order=2, initial=0.5) == pytest.approx(1.0)
    assert half_life(1.0, order=3, initial=2.0) == pytest.approx(3 / (2 * 4))
    with pytest.raises(Exception, match="initial concentration"):
        half_life(1.0, order=2)
