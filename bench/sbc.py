"""Simulation-based calibration of mechfit's inference, side by side with a grid baseline.

Talts, Betancourt, Simpson, Vehtari and Gelman, "Validating Bayesian inference
algorithms with simulation-based calibration", arXiv:1804.06788 (2018).

Model (closed form, no simulator): first-order decay y = A exp(-k t) + noise, 15 times
from 0 to 5, known sigma 0.05, priors A ~ LogNormal(1, 0.3), k ~ LogNormal(0.5, 0.5).
Each replicate draws (A, k) from the prior, simulates data and:

* mechfit: multi-start maximum likelihood, then emcee (``sample_posterior``) with a
  fixed budget, ranks of the truth among ``--draws`` posterior draws;
* baseline: the exact posterior on a 160 x 160 grid in (ln A, ln k) (quadrature of the
  same prior and likelihood written out with numpy), ranks among as many draws.

Prints, for both, the rank histograms, the chi-square p-value of uniform ranks per
parameter, and the median wall time per replicate with the ratio.

Usage: ``python bench/sbc.py [--replicates 100] [--draws 99] [--bins 10] [--seed 1]``
"""

from __future__ import annotations

import argparse
import math
import time
from dataclasses import replace

import numpy as np
from scipy import stats

from mechfit.infer import (
    ErrorModel,
    Likelihood,
    LogNormal,
    ModelFunction,
    Observations,
    Parameter,
    Parameters,
    SamplingSettings,
    maximum_likelihood,
    sample_posterior,
)
from mechfit.infer.calibration import Calibration

T = np.linspace(0.0, 5.0, 15)
SIGMA = 0.05
PRIORS = {"A": LogNormal(1.0, 0.3), "k": LogNormal(0.5, 0.5)}


def likelihood(y: np.ndarray) -> Likelihood:
    model = ModelFunction(("A", "k"), lambda x: x[:, :1] * np.exp(-x[:, 1:2] * T))
    pars = Parameters(tuple(Parameter(n, p.median, p, "log") for n, p in PRIORS.items()))
    return Likelihood(model, Observations.single(T, y), pars, ErrorModel(sigma=SIGMA))


def grid_posterior_draws(y: np.ndarray, draws: int, rng: np.random.Generator) -> np.ndarray:
    """Baseline: draws of (ln A, ln k) from the posterior tabulated on a grid."""
    axes = []
    for p in PRIORS.values():
        centre, width = math.log(p.median), p.sigma
        axes.append(np.linspace(centre - 5 * width, centre + 5 * width, 160))
    la, lk = np.meshgrid(*axes, indexing="ij")
    mu = np.exp(la)[..., None] * np.exp(-np.exp(lk)[..., None] * T)
    log_post = (stats.norm.logpdf(la, math.log(PRIORS["A"].median), PRIORS["A"].sigma)
                + stats.norm.logpdf(lk, math.log(PRIORS["k"].median), PRIORS["k"].sigma)
                - 0.5 * np.sum(((y - mu) / SIGMA) ** 2, axis=-1))
    w = np.exp(log_post - log_post.max()).ravel()
    pick = rng.choice(w.size, size=draws, p=w / w.sum())
    steps = [a[1] - a[0] for a in axes]
    out = np.column_stack([la.ravel()[pick], lk.ravel()[pick]])
    return out + (rng.random(out.shape) - 0.5) * np.array(steps)   # spread within the cell


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--replicates", type=int, default=100)
    ap.add_argument("--draws", type=int, default=99)
    ap.add_argument("--bins", type=int, default=10)
    ap.add_argument("--seed", type=int, default=1)
    args = ap.parse_args()
    rng = np.random.default_rng(args.seed)
    template = likelihood(np.zeros(T.size))
    settings = SamplingSettings(walkers=16, min_steps=1500, max_steps=1500)
    ranks = {"mechfit": [], "grid": []}
    seconds = {"mechfit": [], "grid": []}
    converged = []
    for r in range(args.replicates):
        truth = template.parameters.sample_prior(rng, 1)
        y = template.simulate(truth, rng)[0]
        began = time.perf_counter()
        lik = likelihood(y)
        fit = maximum_likelihood(lik, starts=8, local=2, seed=int(rng.integers(2**31)))
        post = sample_posterior(lik, fit.u, fit.covariance_free,
                                replace(settings, seed=int(rng.integers(2**31))))
        flat = post.flat()
        chosen = flat[rng.choice(flat.shape[0], size=args.draws, replace=False)]
        seconds["mechfit"].append(time.perf_counter() - began)
        ranks["mechfit"].append(np.sum(chosen < truth, axis=0))
        converged.append(post.converged)
        began = time.perf_counter()
        grid = grid_posterior_draws(y, args.draws, rng)
        seconds["grid"].append(time.perf_counter() - began)
        ranks["grid"].append(np.sum(grid < truth, axis=0))
        if (r + 1) % 10 == 0:
            print(f"  {r + 1}/{args.replicates} replicates", flush=True)
    print(f"\nsimulation-based calibration: {args.replicates} replicates, {args.draws} draws, "
          f"{args.bins} bins (expected {args.replicates / args.bins:.1f} per bin)")
    print(f"mechfit runs meeting every convergence rule: {sum(converged)}/{len(converged)} "
          "(fixed budget of 1500 steps x 16 walkers)")
    results = {}
    for method in ("mechfit", "grid"):
        cal = Calibration(("A", "k"), np.array(ranks[method]), args.draws,
                          np.array(converged))
        results[method] = cal
        label = "mechfit (MLE + emcee)" if method == "mechfit" else "baseline (exact grid)"
        print(f"\n== {label} ==")
        print(cal.report(args.bins))
    print("\n                     mechfit    baseline(grid)")
    for j, name in enumerate(("A", "k")):
        print(f"p-value {name:<12} {results['mechfit'].p_values(args.bins)[j]:>8.3f}"
              f"    {results['grid'].p_values(args.bins)[j]:>8.3f}")
    tm, tg = np.median(seconds["mechfit"]), np.median(seconds["grid"])
    print(f"median s/replicate   {tm:>8.3f}    {tg:>8.3f}    ratio mechfit/grid {tm / tg:.1f}")


if __name__ == "__main__":
    main()
