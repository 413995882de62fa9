"""Ranking first-order against second-order decay on simulated runs, sampled with emcee.

Closed-form rate laws (Atkins & de Paula, Physical Chemistry, integrated rate laws,
common practice): first order [A] = [A]0 exp(-k t); second order [A] = [A]0 / (1 + [A]0 k t).
Runs at different [A]0 tell them apart because only the second-order half-life depends on
[A]0. Data are simulated here with a known truth; nothing is hard-coded.
"""

import dataclasses
import json
import math

import arviz as az
import emcee
import numpy as np
import pytest
from scipy.optimize import minimize

from mechfit.compare import (
    BEST,
    CLEARLY_WORSE,
    FAILS,
    NOT_DISTINGUISHABLE,
    Candidate,
    ComparisonError,
    log_predictive_density,
    rank_candidates,
)

A0 = {"r1": 1.0, "r2": 0.5, "r3": 2.0}
TIMES = np.linspace(0.0, 6.0, 25)
SIGMA = 0.01
CONTRACT = {"name", "variant", "n_parameters", "log_likelihood_max", "aicc", "bic",
            "elpd_loo", "elpd_loo_se", "weight", "verdict"}


def first_order(theta, a0, t):
    return a0 * np.exp(-theta[:, :1] * t)


def second_order(theta, a0, t):
    return a0 / (1.0 + a0 * theta[:, :1] * t)


def first_order_with_offset(theta, a0, t):
    return a0 * np.exp(-theta[:, :1] * t) + theta[:, 1:2]


def zero_order(theta, a0, t):
    return np.maximum(a0 - theta[:, :1] * t, 0.0)


class Study:
    def __init__(self, truth, seed):
        rng = np.random.default_rng(seed)
        self.runs = np.repeat(list(A0), TIMES.size)
        self.a0 = np.repeat(list(A0.values()), TIMES.size)
        self.t = np.tile(TIMES, len(A0))
        self.y = truth(np.array([[0.6, 0.0]]), self.a0, self.t)[0] + \
            rng.normal(0.0, SIGMA, self.t.size)

    def subset(self, keep):
        out = object.__new__(Study)
        out.runs, out.a0, out.t, out.y = (self.runs[keep], self.a0[keep], self.t[keep],
                                         self.y[keep])
        return out


def pointwise(law, study, u):
    """u: (m, q) with log rate constant, [offset], log sigma last."""
    theta = np.column_stack([np.exp(u[:, :1]), u[:, 1:-1]])
    sigma = np.exp(u[:, -1:])
    r = (study.y - law(theta, study.a0, study.t)) / sigma
    return -0.5 * r**2 - np.log(sigma) - 0.5 * math.log(2 * math.pi)


def log_posterior(law, study):
    def function(u):
        u = np.atleast_2d(u)
        inside = np.all(np.abs(u) < 12.0, axis=1)
        out = np.where(inside, pointwise(law, study, u).sum(axis=1), -np.inf)
        return out
    return function


def fit(law, study, q, seed):
    start = np.zeros(q)
    start[-1] = math.log(0.05)
    best = minimize(lambda u: -log_posterior(law, study)(u)[0], start, method="Nelder-Mead",
                    options={"xatol": 1e-8, "fatol": 1e-10, "maxiter": 20000})
    rng = np.random.default_rng(seed)
    walkers = 4 * q + 4
    p0 = best.x + 1e-4 * rng.normal(size=(walkers, q))
    sampler = emcee.EnsembleSampler(walkers, q, log_posterior(law, study), vectorize=True)
    sampler.random_state = np.random.RandomState(seed).get_state()
    sampler.run_mcmc(p0, 900)
    chain = sampler.get_chain(discard=400, thin=2)  # (draws, walkers, q)
    return best, np.swapaxes(chain, 0, 1)


def candidate(name, law, q, study, seed, variant="full", refit=True, **extra):
    best, draws = fit(law, study, q, seed)
    flat = draws.reshape(-1, q)
    loglik = pointwise(law, study, flat).reshape(*draws.shape[:2], -1)
    idata = az.from_dict(posterior={f"u{i}": draws[..., i] for i in range(q)},
                         log_likelihood={"y": loglik})
    u = best.x[None, :]
    residual = (study.y - law(np.column_stack([np.exp(u[:, :1]), u[:, 1:-1]]), study.a0,
                              study.t)[0]) / math.exp(best.x[-1])
    calls = []

    def exact_refit(run):
        # refit without the run, then log-mean-exp of the held-out run's likelihood
        calls.append(run)
        _, kept = fit(law, study.subset(study.runs != run), q, seed + 1)
        held = study.subset(study.runs == run)
        return log_predictive_density(pointwise(law, held, kept.reshape(-1, q)).sum(axis=1))

    c = Candidate(name, variant, idata, "y", list(study.runs),
                  log_likelihood_max=float(-best.fun), n_parameters=q, n_data=study.y.size,
                  residuals={r: residual[study.runs == r] for r in A0},
                  refit=exact_refit if refit else None, **extra)
    return c, calls


@pytest.fixture(scope="module")
def first_order_study():
    study = Study(first_order, seed=7)
    made = [candidate("first order", first_order, 2, study, 1),
            candidate("second order", second_order, 2, study, 2),
            candidate("first order + offset", first_order_with_offset, 3, study, 3)]
    candidates, calls = [m[0] for m in made], [m[1] for m in made]
    return study, candidates, calls, rank_candidates(candidates)


def test_truth_first_order_leads_and_second_order_fails(first_order_study):
    *_, ranking = first_order_study
    first, others = ranking.candidates[0], {c.name: c for c in ranking.candidates}
    # the truth and the truth plus a useless offset (nested) share the lead; the offset
    # wins on elpd_loo only by chance, within one standard error, so the one-standard-error
    # rule puts the truth (fewer parameters) first
    offset = others["first order + offset"]
    assert abs(offset.elpd_loo_diff) <= offset.elpd_loo_diff_se + 1e-12
    assert first.name == "first order"
    assert first.verdict == BEST and ranking.best is first
    second = others["second order"]
    assert second.verdict == FAILS and second.residuals.structured
    assert second.elpd_loo_diff > 4 and second.elpd_loo_diff > 2 * second.elpd_loo_diff_se
    assert second.delta_aicc > 10 and second.aicc_support == "essentially no support"
    runner_up = ranking.candidates[1]
    assert runner_up.name in ("first order", "first order + offset")
    assert runner_up.verdict == NOT_DISTINGUISHABLE
    assert {c.name for c in ranking.leading_set} == {"first order", "first order + offset"}
    assert ranking.candidates[2] is second
    elpds = [c.loo.elpd for c in ranking.candidates]
    assert elpds[1:] == sorted(elpds[1:], reverse=True)
    if elpds[0] < max(elpds):
        assert any("one-standard-error rule" in r for r in first.reasons)
        assert any("highest elpd_loo" in r for r in offset.reasons)
    assert sum(c.weight for c in ranking.candidates) == pytest.approx(1.0, abs=1e-6)
    assert sum(c.akaike_weight for c in ranking.candidates) == pytest.approx(1.0)
    assert sum(c.weight_pseudo_bma for c in ranking.candidates) == pytest.approx(1.0)
    assert sum(c.weight_run_stacking for c in ranking.candidates) == pytest.approx(1.0, abs=1e-6)
    assert second.weight < 0.01 and second.akaike_weight < 1e-6
    # run LOO prefers the truth too, and its difference carries a standard error
    assert second.elpd_run_loo_diff > 0 and second.elpd_run_loo_diff_se > 0


def test_summary_is_json_safe_and_keeps_the_rank_contract(first_order_study):
    *_, ranking = first_order_study
    summary = ranking.summary()
    text = json.dumps(summary, allow_nan=False)
    back = json.loads(text)
    rows = back["candidates"]
    assert all(CONTRACT <= set(row) for row in rows)
    assert [row["elpd_loo"] for row in rows[1:]] == sorted((r["elpd_loo"] for r in rows[1:]),
                                                           reverse=True)
    assert back["best"] == {"name": rows[0]["name"], "variant": "full"}
    assert rows[0]["verdict"] == BEST and rows[-1]["name"] == "second order"
    assert back["primary_criterion"] == "elpd_loo" and back["cross_check"] == "aicc"
    assert {row["verdict"] for row in rows} <= {BEST, NOT_DISTINGUISHABLE, CLEARLY_WORSE, FAILS}
    for row in rows:
        assert set(row["residuals"]["series"]) == set(A0)
        assert set(row["run_pareto_k"]) == set(A0)
        refitted = {r for r, k in row["run_pareto_k"].items() if k > 0.7}
        assert set(row["runs_refitted"]) == refitted


def test_refits_are_called_only_for_runs_with_high_pareto_k(first_order_study):
    _, candidates, calls, ranking = first_order_study
    by_name = {c.name: c for c in ranking.candidates}
    for c, called in zip(candidates, calls, strict=True):
        result = by_name[c.name]
        high = [run for run, k in zip(result.run_loo.labels, result.run_loo.pareto_k,
                                      strict=True) if k > 0.7]
        assert list(result.run_loo.exact) == high
        assert called == high
        assert result.run_loo.n_high_k == 0


def test_truth_second_order_reverses_the_order():
    study = Study(second_order, seed=8)
    ranking = rank_candidates([candidate("first order", first_order, 2, study, 4,
                                         refit=False)[0],
                               candidate("second order", second_order, 2, study, 5,
                                         refit=False)[0]])
    top, other = ranking.candidates
    assert (top.name, top.verdict) == ("second order", BEST)
    assert other.verdict == FAILS and other.elpd_loo_diff > 4


def test_a_winner_with_structured_residuals_is_not_called_best(first_order_study):
    study, *_ = first_order_study
    ranking = rank_candidates([candidate("second order", second_order, 2, study, 6,
                                         refit=False)[0],
                               candidate("zero order", zero_order, 2, study, 7,
                                         refit=False)[0]])
    assert ranking.candidates[0].verdict == FAILS
    assert ranking.best is None
    assert "none of the candidates both leads and describes the data" in ranking.note()
    assert ranking.summary()["best"] is None


def test_approximation_and_aicc_disagreement_are_reported(first_order_study):
    _, candidates, *_ = first_order_study
    base = dataclasses.replace(candidates[0], refit=None)
    reduced = Candidate("first order", "steady state", base.idata, "y", base.runs,
                        base.log_likelihood_max, base.n_parameters, base.n_data,
                        base.residuals, approximation_deviation=0.2,
                        approximation_threshold=0.05)
    # the same fit claimed with 14 parameters: elpd_loo cannot see the count, AICc can
    padded = Candidate("first order", "padded", base.idata, "y", base.runs,
                       base.log_likelihood_max, 14, base.n_data, base.residuals)
    ranking = rank_candidates([base, reduced, padded])
    rows = {c.variant: c for c in ranking.candidates}
    assert rows["steady state"].approximation.valid is False
    assert any("deviates from the full mechanism by up to 20%" in r
               for r in rows["steady state"].reasons)
    summary = {row["variant"]: row for row in ranking.summary()["candidates"]}
    assert summary["steady state"]["approximation"] == {"deviation": 0.2, "threshold": 0.05,
                                                        "valid": False}
    assert summary["full"]["approximation"] is None
    assert rows["padded"].verdict in (BEST, NOT_DISTINGUISHABLE)
    assert rows["padded"].delta_aicc > 10
    assert any("AICc disagrees" in r for r in rows["padded"].reasons)


def test_report_and_html_show_every_candidate(first_order_study):
    _, candidates, _, ranking = first_order_study
    text = ranking.report()
    for c in ranking.candidates:
        assert c.name in text and c.verdict in text
    assert "Conclusions hold inside the conditions studied" in text
    base = candidates[1]  # second order: no refit callback, so no refits here
    odd = Candidate("<b>x</b> & y", "full", base.idata, "y", base.runs, base.log_likelihood_max,
                    base.n_parameters, base.n_data, base.residuals)
    page = rank_candidates([base, odd])._repr_html_()
    assert "&lt;b&gt;x&lt;/b&gt; &amp; y" in page and "<b>x</b>" not in page


def test_inconsistent_candidates_are_refused(first_order_study):
    _, candidates, *_ = first_order_study
    base = candidates[0]
    with pytest.raises(ComparisonError, match="given twice"):
        rank_candidates([base, base])
    other = Candidate("other", "full", base.idata, "y", base.runs, base.log_likelihood_max,
                      base.n_parameters, base.n_data - 1, base.residuals)
    with pytest.raises(ComparisonError, match="same data"):
        rank_candidates([base, other])
    with pytest.raises(ComparisonError, match="pointwise terms"):
        rank_candidates([other])
    relabelled = Candidate("relabelled", "full", base.idata, "y", ["r9"] * base.n_data,
                           base.log_likelihood_max, base.n_parameters, base.n_data,
                           base.residuals)
    with pytest.raises(ComparisonError, match="other runs"):
        rank_candidates([base, relabelled])
    with pytest.raises(ComparisonError, match="no candidates"):
        rank_candidates([])


def test_a_single_run_study_has_no_run_loo():
    study = Study(first_order, seed=9).subset(np.repeat(list(A0), TIMES.size) == "r2")
    made = [candidate(name, law, 2, study, seed, refit=False)[0]
            for name, law, seed in (("first order", first_order, 11),
                                    ("second order", second_order, 12))]
    made = [dataclasses.replace(c, residuals={"r2": c.residuals["r2"]}) for c in made]
    ranking = rank_candidates(made)
    assert ranking.run_weights is None and ranking.runs == ("r2",)
    row = ranking.summary()["candidates"][0]
    assert row["elpd_run_loo"] is None and row["weight_run_stacking"] is None
    assert row["runs_refitted"] == [] and row["run_pareto_k"] is None
    assert "-" in ranking.report()


def test_bad_residuals_fail_before_any_refit_runs(first_order_study):
    _, candidates, *_ = first_order_study
    calls = []
    broken = dataclasses.replace(candidates[0], residuals={"r1": [0.1, math.nan, 0.2]},
                                 refit=lambda run: calls.append(run) or 0.0)
    with pytest.raises(ComparisonError) as info:
        rank_candidates([broken])
    assert info.value.names == ("r1",) and calls == []


def _evaluated(k, pointwise, structured=False):
    from types import SimpleNamespace as NS
    return {"info": NS(n_parameters=k), "residuals": NS(structured=structured),
            "loo": NS(pointwise=np.asarray(pointwise, dtype=float))}


def test_one_standard_error_rule_prefers_the_simpler_within_one_se():
    from mechfit.compare import parsimonious_choice
    rng = np.random.default_rng(3)
    base = rng.normal(0.0, 1.0, 200)
    # a 3-parameter candidate better by 0.05 per point on average, the differences noisy:
    # Δ = 10 with SE ~ 14, so within one SE the 2-parameter candidate is preferred
    noisy = base + 0.05 + rng.normal(0.0, 1.0, 200)
    high, simple = _evaluated(3, noisy), _evaluated(2, base)
    delta = (noisy - base).sum()
    se = math.sqrt(200 * np.var(noisy - base))
    assert 0 < delta <= se
    assert parsimonious_choice([high, simple], [0, 1]) == 1
    # the same gain with little scatter is many standard errors: the highest stays first
    clear = base + 0.05 + rng.normal(0.0, 0.01, 200)
    assert parsimonious_choice([_evaluated(3, clear), simple], [0, 1]) == 0
    # never prefer a candidate with structured residuals over one without
    assert parsimonious_choice([high, _evaluated(2, base, structured=True)], [0, 1]) == 0
    # the fewest parameters wins among several within one SE
    one = _evaluated(1, base)
    assert parsimonious_choice([high, simple, one], [0, 1, 2]) == 2
