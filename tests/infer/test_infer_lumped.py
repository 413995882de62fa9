"""Identifiable combinations of a reduced variant: the lumped parameters of its rate law.

Invented study: Michaelis–Menten kinetics at one temperature, three substrate levels,
the product followed; the data are the steady-state solution plus seeded noise.
Under the steady-state approximation the rate k2 [E]0 [S] / (K_M + [S]) depends on
k1, k_1 and k2 only through k2 / K_M and 1 / K_M, K_M = (k_1 + k2) / k1 (Michaelis and
Menten 1913; Briggs and Haldane 1925; e.g. Atkins' Physical Chemistry, 11th ed.,
2018, topic 19D): these two must come out determined, the elementary constants not.
"""

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from mechfit import parse_mechanism
from mechfit.derive import derive_variant
from mechfit.infer import SamplingSettings
from mechfit.infer.fit import fit_study
from mechfit.study import load_study

TEXT = "E + S <=> ES @ k1, k_1\nES -> E + P @ k2\n"
K1, K_1, K2 = 1e6, 1999.0, 1.0          # M^-1 s^-1, s^-1, s^-1 (invented)
KM = (K_1 + K2) / K1                      # 2 mM
E0 = 1e-5                                 # M


def write_study(folder):
    rng = np.random.default_rng(5)
    runs = []
    minutes = np.linspace(1, 30, 15)
    for name, s0 in (("r1", 0.5e-3), ("r2", 2e-3), ("r3", 8e-3)):
        sol = solve_ivp(lambda _t, y: [-K2 * E0 * y[0] / (KM + y[0])], (0, 1800), [s0],
                        t_eval=60 * minutes, rtol=1e-10, atol=1e-14)
        p = 1e3 * (s0 - sol.y[0]) + 0.01 * rng.standard_normal(minutes.size)
        rows = "\n".join(f"{t:.3f}, {v:.5f}" for t, v in zip(minutes, p, strict=True))
        (folder / f"{name}.csv").write_text("time / min, P / mM\n" + rows + "\n")
        runs.append(f'[[run]]\nname = "{name}"\ntemperature = 25\n'
                    f'initial = {{ E = {E0 * 1e3}, S = {s0 * 1e3} }}\ntable = "{name}.csv"\n')
    (folder / "study.toml").write_text(
        'title = "Michaelis-Menten at three substrate levels (invented data)"\n'
        'units = { concentration = "mM", time = "min", temperature = "degC" }\n'
        '[observable.P]\nkind = "concentration"\nunit = "mM"\nsigma = "fit"\n'
        + "\n".join(runs))
    return folder / "study.toml"


@pytest.fixture(scope="module")
def fitted(tmp_path_factory):
    study = load_study(write_study(tmp_path_factory.mktemp("mm")))
    model = derive_variant(parse_mechanism(TEXT), "qssa:ES")
    return fit_study(study, model, starts=8, local=2,
                     settings=SamplingSettings(walkers=12, min_steps=2000, max_steps=2000))


def test_the_lumped_parameters_are_determined_and_match_the_truth(fitted):
    lumped = {x["name"]: x for x in
              fitted.summary()["identifiability"]["lumped_parameters"]}
    assert set(lumped) == {"a1", "b1"}
    truth = {"a1": K2 / KM, "b1": 1 / KM}  # k1 k2 / (k_1 + k2), k1 / (k_1 + k2)
    for name, value in truth.items():
        x = lumped[name]
        assert x["determined"], x
        assert x["hdi_low"] <= value <= x["hdi_high"], (name, x, value)
    assert "lumped a1 = " in fitted.identifiability.report()


def test_the_elementary_constants_are_not_all_determined(fitted):
    # three constants, two combinations: one direction must be sloppy
    assert fitted.identifiability.sloppy


def test_the_full_model_reports_no_lumped_parameters(tmp_path):
    study = load_study(write_study(tmp_path))
    model = derive_variant(parse_mechanism(TEXT), "full")
    fit = fit_study(study, model, starts=4, local=1,
                    settings=SamplingSettings(walkers=8, min_steps=200, max_steps=200))
    assert fit.summary()["identifiability"]["lumped_parameters"] == []


def test_half_lives_follow_the_integrated_michaelis_menten_equation(fitted):
    # integrated rate law k2 [E]0 t = K_M ln([S]0/[S]) + [S]0 - [S]; at [S] = [S]0 / 2:
    # t1/2 = (K_M ln 2 + [S]0 / 2) / (k2 [E]0)  (e.g. Atkins' Physical Chemistry, 11th
    # ed., 2018, topic 19D, problem on the integrated Michaelis-Menten equation;
    # recalled from memory)
    found = {h.run: h for h in fitted.half_conversion}
    assert set(found) == {"r1", "r2", "r3"}
    for run, s0 in (("r1", 0.5e-3), ("r2", 2e-3), ("r3", 8e-3)):
        h = found[run]
        assert h.species == "S" and h.reached == 1.0
        expected = (KM * np.log(2) + s0 / 2) / (K2 * E0)
        assert h.hdi_low <= expected <= h.hdi_high, (run, h, expected)
        assert h.median == pytest.approx(expected, rel=0.05)
    assert "t1/2 of S in run r2" in fitted.report()
