"""Simulation-based calibration, small version (the full one is bench/sbc.py).

Talts, Betancourt, Simpson, Vehtari and Gelman, "Validating Bayesian inference algorithms
with simulation-based calibration", arXiv:1804.06788 (2018): ranks of prior draws among
posterior draws are uniform when the inference is right. Model: first-order decay
y = A exp(-k t) with Gaussian noise of known sigma (closed form, no simulator needed).
The second test shows that the check can fail: an inference that assumes a quarter of
the true noise is overconfident and piles the ranks up at both ends.
"""

import numpy as np

from mechfit.infer import (
    ErrorModel,
    Likelihood,
    LogNormal,
    ModelFunction,
    Observations,
    Parameter,
    Parameters,
    SamplingSettings,
)
from mechfit.infer.calibration import simulation_based_calibration

T = np.linspace(0.0, 5.0, 12)
SETTINGS = SamplingSettings(walkers=10, min_steps=400, max_steps=400)


def decay(sigma):
    model = ModelFunction(("A", "k"), lambda x: x[:, :1] * np.exp(-x[:, 1:2] * T))
    pars = Parameters((Parameter("A", 1.0, LogNormal(1.0, 0.3), "log"),
                       Parameter("k", 0.5, LogNormal(0.5, 0.5), "log")))
    return Likelihood(model, Observations.single(T, np.zeros(T.size)), pars,
                      ErrorModel(sigma=sigma))


def test_ranks_are_uniform_for_the_right_model():
    cal = simulation_based_calibration(decay(0.05), 20, draws=19, settings=SETTINGS, seed=11)
    assert cal.ranks.shape == (20, 2)
    assert cal.histogram(4).sum(axis=0).tolist() == [20, 20]
    assert np.all(cal.p_values(4) > 0.001), cal.report(4)


def test_ranks_expose_an_inference_with_the_wrong_noise():
    right = decay(0.2)
    wrong = decay(0.05)

    class Misspecified(Likelihood):
        """Simulates with sigma 0.2, infers with sigma 0.05."""

        def simulate(self, u, rng):
            return right.simulate(u, rng)

    lik = Misspecified(wrong.model, wrong.observations, wrong.parameters, wrong.errors)
    cal = simulation_based_calibration(lik, 16, draws=19, settings=SETTINGS, seed=11)
    assert np.min(cal.p_values(4)) < 0.01, cal.report(4)
