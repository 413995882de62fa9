"""Simulation-based calibration of the whole inference procedure.

Talts, Betancourt, Simpson, Vehtari and Gelman, "Validating Bayesian inference
algorithms with simulation-based calibration", arXiv:1804.06788 (2018). For each
replicate a parameter vector is drawn from the prior, data are simulated from the
observation model, the posterior is sampled by mechfit's own procedure (maximum
likelihood, then emcee from a ball around it), and the rank of the true value among
``draws`` posterior draws is recorded. If prior, likelihood and sampler agree, each
rank is uniform on 0..draws; a chi-square test on a histogram of the ranks checks
that (Talts et al., section 4, with bins chosen so that each expects at least five
counts).
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
from dataclasses import dataclass, replace

import numpy as np
from scipy import stats

from mechfit.infer.likelihood import Likelihood
from mechfit.infer.observations import Observations
from mechfit.infer.optimize import maximum_likelihood
from mechfit.infer.sampling import SamplingSettings, sample_posterior


@dataclass
class Calibration:
    """Ranks of the true values, (replicates, q), among ``draws`` posterior draws each."""

    names: tuple[str, ...]
    ranks: np.ndarray
    draws: int
    converged: np.ndarray

    def histogram(self, bins: int) -> np.ndarray:
        """Counts of the ranks in ``bins`` equal bins over 0..draws, (bins, q)."""
        edges = np.linspace(0, self.draws + 1, bins + 1)
        return np.stack([np.histogram(self.ranks[:, j], edges)[0]
                         for j in range(self.ranks.shape[1])], axis=1)

    def p_values(self, bins: int) -> np.ndarray:
        """Chi-square goodness-of-fit p-value of uniform ranks, per parameter."""
        counts = self.histogram(bins)
        return np.array([stats.chisquare(counts[:, j]).pvalue for j in range(counts.shape[1])])

    def report(self, bins: int) -> str:
        """Text histograms and p-values."""
        counts = self.histogram(bins)
        lines = []
        for j, name in enumerate(self.names):
            lines.append(f"{name}: chi-square p = {self.p_values(bins)[j]:.3f} "
                         f"({self.ranks.shape[0]} replicates, {bins} bins)")
            top = max(int(counts[:, j].max()), 1)
            for b in range(bins):
                lines.append(f"  {b:>2} {'#' * int(round(40 * counts[b, j] / top)):<40} "
                             f"{counts[b, j]}")
        return "\n".join(lines)


def calibration_steps(
    likelihood: Likelihood,
    replicates: int,
    *,
    draws: int = 99,
    settings: SamplingSettings | None = None,
    seed: int = 0,
    starts: int = 4,
) -> Iterator[tuple[int, np.ndarray, bool]]:
    """Yield (replicate, ranks (q,), converged) one replicate at a time (see the module docs).

    ``likelihood`` fixes model, design, error model and priors; its data are replaced
    by simulated data in each replicate.
    """
    rng = np.random.default_rng(seed)
    settings = settings or SamplingSettings(walkers=16, min_steps=1500, max_steps=1500)
    obs = likelihood.observations
    pars = likelihood.parameters
    for r in range(replicates):
        truth = pars.sample_prior(rng, 1)
        data = likelihood.simulate(truth, rng)[0]
        replicate_obs = Observations(data, obs.observable, obs.run, obs.time,
                                     obs.observable_names, obs.run_names, obs.conditions,
                                     obs.units, obs.sigma)
        lik = Likelihood(likelihood.model, replicate_obs, pars, likelihood.errors)
        fit = maximum_likelihood(lik, starts=starts, local=2, seed=int(rng.integers(2**31)))
        run_settings = replace(settings, seed=int(rng.integers(2**31)))
        post = sample_posterior(lik, fit.u, fit.covariance_free, run_settings)
        flat = post.flat()
        pick = rng.choice(flat.shape[0], size=draws, replace=flat.shape[0] < draws)
        ranks = np.sum(flat[pick] < truth, axis=0)
        yield r, ranks, post.converged


def simulation_based_calibration(
    likelihood: Likelihood,
    replicates: int,
    *,
    draws: int = 99,
    settings: SamplingSettings | None = None,
    seed: int = 0,
    progress: Callable[[int, int], None] | None = None,
) -> Calibration:
    """Run :func:`calibration_steps` to the end and collect a :class:`Calibration`."""
    ranks, converged = [], []
    for r, rank, ok in calibration_steps(likelihood, replicates, draws=draws,
                                         settings=settings, seed=seed):
        ranks.append(rank)
        converged.append(ok)
        if progress is not None:
            progress(r + 1, replicates)
    return Calibration(likelihood.parameters.free_names, np.array(ranks), draws,
                       np.array(converged))
