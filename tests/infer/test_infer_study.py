"""Fitting a study: the study model, its sensitivities, fit_study and the ``fit`` verb.

The small study here is invented (A -> P at two temperatures, Arrhenius), written to
a temporary folder; the data are the exact solution plus seeded noise.
"""

import json
import math

import numpy as np
import pytest

from mechfit import parse_mechanism
from mechfit.cli import main
from mechfit.derive import derive_variant
from mechfit.infer import Likelihood, ResultExistsError, SamplingSettings
from mechfit.infer.fit import fit_study
from mechfit.infer.optimize import finite_difference_jacobian
from mechfit.infer.study_model import SEARCH_RTOL, study_problem
from mechfit.study import load_study

K_REF, EA, T_REF = 2e-3, 60e3, 303.15   # s^-1 at 30 degC, J/mol (invented)
R = 8.314462618


def write_study(folder):
    rng = np.random.default_rng(12)
    runs = []
    for name, t_c, a0 in (("r1", 25.0, 10.0), ("r2", 35.0, 10.0), ("r3", 35.0, 5.0)):
        k = K_REF * math.exp(-EA / R * (1 / (t_c + 273.15) - 1 / T_REF))
        minutes = np.linspace(2, 40, 12)
        p = a0 * (1 - np.exp(-k * 60 * minutes)) + 0.05 * rng.standard_normal(12)
        rows = "\n".join(f"{t:.3f}, {v:.5f}" for t, v in zip(minutes, p, strict=True))
        (folder / f"{name}.csv").write_text("time / min, P / mM\n" + rows + "\n")
        runs.append(f'[[run]]\nname = "{name}"\ntemperature = {t_c}\ninitial = {{ A = {a0} }}\n'
                    f'table = "{name}.csv"\n')
    (folder / "study.toml").write_text(
        'title = "A -> P at two temperatures (invented data)"\n'
        'units = { concentration = "mM", time = "min", temperature = "degC" }\n'
        '[temperature_law]\ndefault = "arrhenius"\nreference = 30\n'
        '[observable.P]\nkind = "concentration"\nunit = "mM"\nsigma = "fit"\n'
        + "\n".join(runs))
    (folder / "first.mech").write_text("A -> P @ k1\n")
    return folder / "study.toml", folder / "first.mech"


@pytest.fixture(scope="module")
def study_files(tmp_path_factory):
    return write_study(tmp_path_factory.mktemp("study"))


def test_study_model_sensitivities_match_differences(study_files):
    study = load_study(study_files[0])
    model = derive_variant(parse_mechanism("A -> P @ k1"), "full")
    problem = study_problem(study, model)
    assert problem.parameters.free_names == ("k1", "Ea_k1")
    lik = Likelihood(problem.model, problem.observations, problem.parameters, problem.errors)
    u = lik.parameters.free_vector({"k1": K_REF, "Ea_k1": EA, "sigma_P": 5e-5})
    mu, jac = lik.prediction_and_jacobian(u[None])
    fd = finite_difference_jacobian(lik, u, lik.model_free)
    assert np.allclose(jac[0][:, lik.model_free], fd, rtol=1e-5, atol=1e-7 * np.abs(fd).max())
    # the prediction is the closed form of A -> P
    t = problem.observations.time
    temps = problem.observations.conditions["temperature"][problem.observations.run]
    k = K_REF * np.exp(-EA / R * (1 / temps - 1 / T_REF))
    a0 = problem.observations.conditions["initial_A"][problem.observations.run]
    assert np.allclose(mu[0], a0 * (1 - np.exp(-k * t)), rtol=1e-6, atol=1e-9)
    # the search sensitivities: the same quantities from a solve at SEARCH_RTOL
    asked = []
    solve = problem.simulator.solve

    def spy(*args, **kwargs):
        asked.append(kwargs.get("rtol"))
        return solve(*args, **kwargs)

    problem.simulator.solve = spy
    _, rough = lik.prediction_and_jacobian(u[None], search=True)
    assert asked == [SEARCH_RTOL]
    assert np.allclose(rough[0][:, lik.model_free], fd, rtol=1e-2,
                       atol=1e-4 * np.abs(fd).max())


def test_fit_study_recovers_the_parameters_and_writes_results(study_files, tmp_path):
    study = load_study(study_files[0])
    model = derive_variant(parse_mechanism("A -> P @ k1"), "full")
    result = fit_study(study, model, starts=8, local=2,
                       settings=SamplingSettings(walkers=12, min_steps=1500, max_steps=1500))
    s = result.summary()
    for key in ("parameters", "log_likelihood_max", "n_data", "n_parameters", "converged",
                "rhat_max", "ess_min", "identifiability"):
        assert key in s
    assert set(s["parameters"]["k1"]) == {"median", "hdi_low", "hdi_high", "mle", "se"}
    assert s["n_data"] == 36 and s["n_parameters"] == 3
    for name, truth in (("k1", K_REF), ("Ea_k1", EA)):
        p = s["parameters"][name]
        assert p["hdi_low"] < truth < p["hdi_high"], (name, p)
        assert abs(p["mle"] - truth) < 4 * p["se"]
    assert "Ea_k1" in result.derived and "dG_k1@298.15K" in result.derived
    written = result.write(tmp_path / "out")
    assert [p.name for p in written] == ["posterior.nc", "fit.json"]
    assert json.loads((tmp_path / "out" / "fit.json").read_text())["n_data"] == 36
    with pytest.raises(ResultExistsError):
        result.write(tmp_path / "out")


def test_fit_verb_json_and_refusal(study_files, tmp_path, capsys):
    study, mech = study_files
    out = tmp_path / "verb"
    code = main(["fit", str(study), "--mechanism", str(mech), "--out", str(out), "--json",
                 "--max-steps", "400", "--starts", "4"])
    printed = json.loads(capsys.readouterr().out)
    assert code in (0, 1) and (code == 0) == printed["converged"]
    assert printed["parameters"]["k1"]["median"] > 0
    assert (out / "posterior.nc").is_file() and (out / "fit.json").is_file()
    before = (out / "fit.json").read_bytes()
    assert main(["fit", str(study), "--mechanism", str(mech), "--out", str(out)]) == 2
    assert "holds results already" in capsys.readouterr().err
    assert (out / "fit.json").read_bytes() == before


@pytest.mark.slow
def test_demo_study_true_mechanism_recovers_the_truth_within_the_hdis(tmp_path):
    """The demo study (INVENTED data) with its true mechanism; truth from demo/truth.toml."""
    import tomllib
    from pathlib import Path

    import mechfit

    demo = Path(mechfit.__file__).parent / "demo"
    truth = tomllib.loads((demo / "truth.toml").read_text())
    study = load_study(demo / "study.toml")
    mech = mechfit.load_mechanism(demo / f"{truth['mechanism']}.mech")
    model = derive_variant(mech, "full")
    result = fit_study(study, model, settings=SamplingSettings(max_steps=8000))
    s = result.summary()
    expected = {}
    for name, v in truth["rate_constants"].items():
        expected[name], expected[f"Ea_{name}"] = v["k_ref"], v["Ea"]
    expected.update({k: v for k, v in truth["observables"].items() if k in s["parameters"]})
    for name, value in expected.items():
        p = s["parameters"][name]
        assert p["hdi_low"] < value < p["hdi_high"], (name, value, p)
    assert s["converged"] == (result.maximum.converged and result.posterior.converged)


def test_half_lives_of_a_first_order_reaction_are_ln2_over_k(study_files):
    # first order: t1/2 = ln 2 / k at the run's temperature, whatever [A]0
    # (Atkins' Physical Chemistry, 11th ed., 2018, topic 17B, eq. 17B.3)
    study = load_study(study_files[0])
    model = derive_variant(parse_mechanism("A -> P @ k1"), "full")
    fit = fit_study(study, model, starts=4, local=1,
                    settings=SamplingSettings(walkers=8, min_steps=800, max_steps=800))
    found = {h["run"]: h for h in fit.summary()["half_conversion"]}
    assert set(found) == {"r1", "r2", "r3"}
    for run, t_c in (("r1", 25.0), ("r2", 35.0), ("r3", 35.0)):
        k = K_REF * math.exp(-EA / R * (1 / (t_c + 273.15) - 1 / T_REF))
        h = found[run]
        assert h["species"] == "A" and h["unit"] == "s"
        assert h["hdi_low"] <= math.log(2) / k <= h["hdi_high"]
        assert h["median"] == pytest.approx(math.log(2) / k, rel=0.05)
