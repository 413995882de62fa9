"""Design answers known from theory, through the real path: study -> planned run ->
study model function -> batched simulator -> Box–Hill / D-optimal -> search.

Posterior draws are constructed directly (no fits), around invented parameter values.
Criterion: G. E. P. Box and W. J. Hill, Technometrics 9 (1967) 57-71. Expected answers:
a saturating and a linear rate law agree at low substrate and differ only where
saturation shows, at high substrate (A. Cornish-Bowden, Fundamentals of Enzyme Kinetics,
4th ed. 2012, ch. 2; common practice); first- and second-order decays with equal
half-lives at the studied initial concentration are told apart far from it, since only
the second-order half-life, 1/(k [A]0), depends on it (P. Atkins and J. de Paula,
Physical Chemistry, 9th ed. 2010, table 21.3; recalled from memory).
"""

import numpy as np
import pytest

from mechfit import parse_mechanism
from mechfit.derive import derive_variant
from mechfit.design.predict import FittedCandidate, PlannedRun, predict_runs
from mechfit.design.proposal import DesignProblem, DesignSettings, propose
from mechfit.design.space import DesignSpace
from mechfit.infer.likelihood import Likelihood
from mechfit.infer.study_model import study_problem
from mechfit.study import load_study

RNG = np.random.default_rng(11)
FAST = DesignSettings(n_initial=16, n_refine=1, max_evaluations=15)


def write_study(folder, species, a0_mM, times, values_M, sigma_mM):
    """A one-run invented study of one concentration observable (units mM, s)."""
    (folder / "r1.csv").write_text(f"time,{species}\n" + "".join(
        f"{t:.6g},{v * 1e3:.6g}\n" for t, v in zip(times, values_M, strict=True)))
    (folder / "study.toml").write_text(
        'title = "invented data for a design test"\n'
        'units = { concentration = "mM", time = "s", temperature = "degC" }\n'
        f'temperature = 25\n\n[observable.{species}]\nkind = "concentration"\n'
        f"sigma = {sigma_mM}\n\n[[run]]\nname = \"r1\"\ninitial = {{ {species} = {a0_mM} }}\n"
        'table = "r1.csv"\n')
    return load_study(folder / "study.toml")


def candidate(text, name, draws, weight=0.5):
    model = derive_variant(parse_mechanism(text, file=f"{name}.mech"), "full")
    return FittedCandidate(name, "full", f"{name}__full", weight, model, draws)


@pytest.fixture(scope="module")
def decay(tmp_path_factory):
    """First order k1 = 0.02 1/s against second order with the same half-life at
    [A]0 = 1 mM: 2 k2 [A]0 = k1 / ln 2 for d[A]/dt = -2 k2 [A]^2 (invented values)."""
    t = np.linspace(0.0, 150.0, 16)
    study = write_study(tmp_path_factory.mktemp("decay"), "A", 1.0, t,
                        1e-3 * np.exp(-0.02 * t), 0.01)
    first = candidate("decay: A -> P @ k\n", "first", {"k": RNG.normal(0.02, 2e-4, 100)})
    k2 = 0.02 / np.log(2.0) / (2 * 1e-3)
    second = candidate("decay: 2 A -> P @ k\n", "second",
                       {"k": k2 * RNG.normal(1.0, 0.01, 100)})
    return study, first, second


def test_predictions_follow_the_closed_form_and_the_fit_model(decay):
    """[A] = [A]0 exp(-k t) for first order (Atkins and de Paula 2010, table 21.3), and the
    planned-run path agrees with the fit's own model function on the studied run."""
    study, first, _ = decay
    run = study.runs[0]
    plan = PlannedRun(dict(run.initial), run.temperature, tuple(run.times), ("A",))
    curves = predict_runs(study, first, [plan])[0]["A"]
    expected = 1e-3 * np.exp(-first.draws["k"][:, None] * run.times[None, :])
    assert np.allclose(curves, expected, rtol=1e-5, atol=1e-10)
    problem = study_problem(study, first.model)
    lik = Likelihood(problem.model, problem.observations, problem.parameters, problem.errors)
    x = np.array([[first.draws["k"][0] if n == "k" else lik.parameters.values[n]
                   for n in lik.parameters.names]])
    assert np.allclose(lik.predict(x)[0], curves[0], rtol=1e-6)


def test_first_against_second_order_leads_far_from_the_studied_concentration(decay):
    study, first, second = decay
    problem = DesignProblem(study, [first, second], DesignSpace.parse(["A=0.01:100"]))
    result = propose(problem, FAST)
    best = result.proposals[0]
    assert not 0.1 < best.values["A"] < 10.0       # studied at 1 mM
    assert best.score > 10 * problem.discrimination([{"A": 1.0}])


def test_identical_candidates_give_about_zero(decay):
    study, first, second = decay
    twin = candidate("decay: A -> P @ k\n", "twin", {"k": RNG.normal(0.02, 2e-4, 100)})
    same = DesignProblem(study, [first, twin], DesignSpace.parse(["A=0.01:100"]))
    different = DesignProblem(study, [first, second], DesignSpace.parse(["A=0.01:100"]))
    for a in (0.1, 1.0, 30.0):
        value = same.discrimination([{"A": a}])
        assert 0.0 <= value < 1e-2 * different.discrimination([{"A": a}])
        assert value < 2.0  # sampling noise of 100 draws only (16 points)


def test_saturation_is_discriminated_at_high_substrate(tmp_path):
    """V [S]/(K + [S]) against k [S] with k = V/K: equal below K, apart above it."""
    v, km = 1e-5, 5e-3                      # M/s and M (invented)
    t = np.linspace(0.0, 300.0, 16)
    study = write_study(tmp_path, "S", 0.1, t, 1e-4 * np.exp(-v / km * t), 0.002)
    saturating = candidate("use: S -> P @ rate = V*[S]/(K + [S])\n", "saturating",
                           {"V": v * RNG.normal(1, 0.01, 100), "K": km * RNG.normal(1, 0.01,
                                                                                     100)})
    linear = candidate("use: S -> P @ rate = k*[S]\n", "linear",
                       {"k": v / km * RNG.normal(1, 0.01, 100)})
    problem = DesignProblem(study, [saturating, linear], DesignSpace.parse(["S=0.05:100"]))
    result = propose(problem, FAST)
    assert result.proposals[0].values["S"] > 20.0        # far above K = 5 mM
    assert problem.discrimination([{"S": 0.1}]) < 0.01 * result.proposals[0].score


def test_precision_prefers_a_run_that_sees_the_decay(decay):
    """Information on ln k of exp(-k t) vanishes for t << 1/k (Atkinson, Donev and Tobias,
    Optimum Experimental Designs, 2007, ch. 17; recalled from memory)."""
    study, first, second = decay
    problem = DesignProblem(study, [first, second], DesignSpace.parse(["duration=1:500"]))
    short = problem.precision([{"duration": 1.0}])
    long = problem.precision([{"duration": 100.0}])
    assert 0.0 <= short < 0.05 < 0.5 < long      # log det gains (posterior sd of ln k 1 %)
    result = propose(problem, DesignSettings(mode="precision", n_initial=8, n_refine=0,
                                             runs=2))
    assert len(result.proposals) == 2
    assert result.proposals[0].values["duration"] > 20.0
    assert result.proposals[1].score >= result.proposals[0].score


def test_batched_designs_match_one_at_a_time(decay):
    study, first, second = decay
    problem = DesignProblem(study, [first, second],
                            DesignSpace.parse(["A=0.01:100", "points=6,16"]))
    designs = [{"A": 0.05, "points": 6}, {"A": 3.0, "points": 16}, {"A": 80.0, "points": 6}]
    each = problem.discrimination_each(designs)
    single = [problem.discrimination([d]) for d in designs]
    assert np.allclose(each, single, rtol=1e-8)
    assert np.isclose(problem.discrimination(designs), sum(single))
