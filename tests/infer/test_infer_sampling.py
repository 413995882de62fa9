"""Posterior sampling: a conjugate model with a closed-form posterior, convergence rules."""

import numpy as np
import pytest

from mechfit.infer import (
    ErrorModel,
    Likelihood,
    ModelFunction,
    Normal,
    Observations,
    Parameter,
    Parameters,
    SamplingSettings,
    judge,
    sample_posterior,
    sample_steps,
)

Y = np.array([4.1, 3.7, 4.6, 4.3, 3.9, 4.4, 4.0, 4.8])
S, M0, S0 = 0.5, 3.0, 1.0


def conjugate():
    model = ModelFunction(("m",), lambda x: np.repeat(x[:, :1], Y.size, axis=1))
    pars = Parameters((Parameter("m", 3.0, Normal(M0, S0)),))
    return Likelihood(model, Observations.single(np.arange(Y.size), Y), pars,
                      ErrorModel(sigma=S))


def test_normal_mean_with_known_variance_matches_the_conjugate_posterior():
    # Gelman et al., Bayesian Data Analysis, 3rd ed. (2013), section 2.5:
    # precision 1/s0^2 + n/s^2, mean (m0/s0^2 + sum(y)/s^2) / precision
    precision = 1 / S0**2 + Y.size / S**2
    mean = (M0 / S0**2 + Y.sum() / S**2) / precision
    sd = precision**-0.5
    lik = conjugate()
    post = sample_posterior(lik, np.array([mean]), np.array([[sd**2]]),
                            SamplingSettings(walkers=16, max_steps=6000, seed=2))
    assert post.converged, post.statement()
    draws = post.natural()[..., 0].ravel()
    se = sd / np.sqrt(post.convergence.ess_min)
    assert abs(draws.mean() - mean) < 4 * se
    assert draws.std() == pytest.approx(sd, rel=0.08)
    assert post.convergence.rhat_max <= 1.01 and post.convergence.ess_min >= 400
    assert 0.3 < post.acceptance.mean() < 0.9


def test_a_short_budget_is_reported_as_not_converged():
    post = sample_posterior(conjugate(), np.array([4.0]), None,
                            SamplingSettings(walkers=8, min_steps=60, max_steps=60))
    assert not post.converged
    assert post.steps == 60
    assert "DID NOT CONVERGE" in post.statement() and post.convergence.reasons


def test_the_generator_reports_progress_and_ends_with_the_posterior():
    events = list(sample_steps(conjugate(), np.array([4.0]), None,
                               SamplingSettings(walkers=8, moves="de", min_steps=200,
                                                max_steps=400, chunk=200, report_every=50)))
    steps = [e.step for e in events if e.verdict is None]
    assert steps[:4] == [50, 100, 150, 200]
    assert events[-1].posterior is not None
    assert [e for e in events if e.verdict is not None][0].step == 200
    # with the independence moves the first check comes min_steps after the burn-in
    # (adapt steps of differential evolution, then adapt / 2 with a first proposal)
    events = list(sample_steps(conjugate(), np.array([4.0]), None,
                               SamplingSettings(walkers=8, adapt=100, min_steps=200,
                                                max_steps=1000, report_every=50)))
    assert [e for e in events if e.verdict is not None][0].step == 100 + 50 + 200
    post = events[-1].posterior
    assert post.adapted == 150 and "Independence proposals" in post.statement()
    seen = []
    sample_posterior(conjugate(), np.array([4.0]), None,
                     SamplingSettings(walkers=8, min_steps=100, max_steps=100),
                     progress=seen.append)
    assert seen and seen[-1].posterior is not None


def test_judge_flags_stuck_chains():
    rng = np.random.default_rng(0)
    chain = rng.standard_normal((3000, 8, 1))
    chain[:, :4, 0] += 5.0          # half the walkers sit elsewhere
    verdict, _, _ = judge(("m",), chain)
    assert not verdict.converged and any("R-hat" in r for r in verdict.reasons)


class _Trapped:
    """The conjugate posterior plus a flat plateau 200 nats below it beyond m = 10.

    A walker on the plateau moves by the ensemble's small difference vectors and
    random-walks there (as a walker does where a rate constant is so large that the
    prediction no longer depends on it)."""

    def __init__(self):
        self.base = conjugate()
        self.parameters = self.base.parameters

    def log_posterior(self, u):
        u = np.atleast_2d(u)
        return np.where(u[:, 0] > 10.0, -200.0, self.base.log_posterior(u))


def test_a_walker_stuck_in_a_far_local_mode_is_restarted_and_said(monkeypatch):
    import mechfit.infer.sampling as sampling

    real = sampling.starting_ball

    def one_walker_in_the_trap(*args, **kwargs):
        pos = real(*args, **kwargs)
        pos[0] = 30.0
        return pos

    monkeypatch.setattr(sampling, "starting_ball", one_walker_in_the_trap)
    lik = _Trapped()
    events = list(sampling.sample_steps(lik, np.array([4.0]), np.array([[0.03]]),
                                        SamplingSettings(walkers=16, min_steps=300,
                                                         max_steps=6000, seed=3)))
    post = events[-1].posterior
    assert post.restarts and post.restarts[0][1] == 1
    assert "stuck walker" in post.statement()
    # nothing of the trap is left in the kept draws
    assert np.all(np.abs(post.flat()[:, 0] - 4.0) < 2.0)


def test_stuck_walkers_are_not_confused_with_tail_draws():
    from mechfit.infer.sampling import stuck_walkers

    rng = np.random.default_rng(0)
    q = 9
    # around a mode 2 (lp_max - lp) is chi-square(q) (common practice)
    lp = -0.5 * rng.chisquare(q, size=(2000, 40))
    assert stuck_walkers(lp, q).size == 0
    lp[:, 7] -= 60.0
    assert stuck_walkers(lp, q).tolist() == [7]


def test_next_check_extrapolates_rhat_but_grows_the_chain_at_most_by_half():
    from mechfit.infer.sampling import _steps_for_rhat

    assert _steps_for_rhat(1.005, 1.01, 1000) == 1000          # already fine
    n = _steps_for_rhat(1.012, 1.01, 3000)                      # R^2 - 1 ~ 1/n
    assert 3000 < n < 4500 and n == pytest.approx(1.1 * 3000 * (1.012**2 - 1) / 0.0201, abs=1)
    assert _steps_for_rhat(1.3, 1.01, 1000) == 1500


def test_the_start_ball_never_collapses_a_coordinate():
    # z is untouched by the data: a singular information matrix gives it a variance of
    # ~1e-36, and its optimum may sit on its prior's lower bound. Neither may put every
    # walker at one value of z, which no move could ever leave (emcee refuses such an
    # ensemble as linearly dependent walkers)
    from mechfit.infer import Uniform
    from mechfit.infer.sampling import starting_ball

    model = ModelFunction(("m", "z"), lambda x: np.repeat(x[:, :1], Y.size, axis=1))
    pars = Parameters((Parameter("m", 3.0, Normal(M0, S0)),
                       Parameter("z", 1.0, Uniform(0, 10))))
    lik = Likelihood(model, Observations.single(np.arange(Y.size), Y), pars,
                     ErrorModel(sigma=S))
    rng = np.random.default_rng(0)
    for centre, variance in (([4.2, 5.0], 1e-36), ([4.2, 0.0], 1e6)):
        pos = starting_ball(lik, np.array(centre), np.diag([0.03, variance]), 8, 1e-3, rng)
        assert np.unique(pos[:, 1]).size == 8, (centre, variance, pos[:, 1])
        assert np.all((pos[:, 1] >= 0) & (pos[:, 1] <= 10))
    post = sample_posterior(lik, np.array([4.2, 5.0]), np.diag([0.03, 1e-36]),
                            SamplingSettings(walkers=8, min_steps=300, max_steps=300))
    assert np.ptp(post.natural()[..., 1]) > 1.0


class _LogGamma:
    """A skewed target: u = ln x with x ~ Gamma(shape 2, scale 1), density x^2 e^-x in u."""

    def __init__(self):
        self.parameters = conjugate().parameters

    def log_posterior(self, u):
        u = np.atleast_2d(u)[:, 0]
        return 2.0 * u - np.exp(u)


def test_independence_moves_sample_a_skewed_target_exactly():
    # the Hastings correction log g(x) - log g(x') of an independence sampler (Tierney,
    # Ann. Statist. 22 (1994) 1701): with the wrong sign or without it, the Student-t
    # fitted to the burn-in would pull the draws towards a symmetric shape
    from scipy import stats

    post = sample_posterior(_LogGamma(), np.array([0.7]), np.array([[0.5]]),
                            SamplingSettings(walkers=16, max_steps=20000, seed=5))
    assert post.converged, post.statement()
    assert post.proposal_acceptance > 0.5       # the t fits this near-Gaussian shape well
    assert post.convergence.tau.max() < 5       # nearly independent draws
    x = np.exp(post.flat()[:, 0])
    reference = stats.gamma(2.0)
    probabilities = [0.05, 0.25, 0.5, 0.75, 0.95]
    got = np.quantile(x, probabilities)
    want = reference.ppf(probabilities)
    # quantile standard errors from the ESS (common practice): p(1-p)/(n f(q)^2)
    n = post.convergence.ess_min
    se = np.sqrt(np.array(probabilities) * (1 - np.array(probabilities)) / n) \
        / reference.pdf(want)
    assert np.all(np.abs(got - want) < 4 * se), (got, want, se)


def test_student_t_proposal_density_matches_scipy():
    # scipy.stats.multivariate_t (a general-purpose reference library)
    from scipy import stats

    from mechfit.infer.independence import StudentTProposal

    mean = np.array([0.5, -1.0, 2.0])
    a = np.array([[1.0, 0.3, 0.0], [0.3, 2.0, -0.4], [0.0, -0.4, 0.5]])
    g = StudentTProposal(mean, a, nu=7.0)
    x = np.random.default_rng(0).normal(size=(5, 3))
    want = stats.multivariate_t(mean, a, df=7.0).logpdf(x)
    assert np.allclose(g.log_density(x), want, rtol=1e-12, atol=1e-12)
    draws = g.draw(np.random.RandomState(1), 200000)
    assert np.allclose(np.cov(draws, rowvar=False), a * 7.0 / 5.0, atol=0.05)
