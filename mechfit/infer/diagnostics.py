"""Convergence diagnostics of a posterior sample: autocorrelation, R-hat, effective sizes.

Rules (each threshold with its source)
--------------------------------------
* Run length: at least 50 integrated autocorrelation times tau of the slowest
  parameter, so that tau itself is estimated reliably (emcee documentation,
  "Autocorrelation analysis & convergence"; tau by :func:`emcee.autocorr.integrated_time`
  with Sokal's automatic window, c = 5; Sokal, "Monte Carlo methods in statistical
  mechanics", 1997). Burn-in 2 tau_max, thinning tau_min / 2 (the same page).
* Rank-normalised split R-hat <= 1.01 and bulk and tail effective sample size >= 400
  per parameter (Vehtari, Gelman, Simpson, Carpenter and Bürkner, "Rank-normalization,
  folding, and localization: an improved R-hat for assessing convergence of MCMC",
  Bayesian Analysis 16 (2021) 667), computed with arviz.

Each emcee walker is treated as one chain, as :func:`arviz.from_emcee` does. The
walkers of an ensemble are not independent chains (they move using each other), so
R-hat over walkers is a necessary rather than a sufficient check; the autocorrelation
rule above is the ensemble's own criterion.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass, field

import numpy as np

RHAT_MAX = 1.01
ESS_MIN = 400
TAU_FACTOR = 50


def arviz():
    """Import arviz without its import-time FutureWarning about the 1.x refactor."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", FutureWarning)
        import arviz as az
    return az


@dataclass
class Convergence:
    """Diagnostics of a sample and the verdict of the rules in the module docs.

    Attributes
    ----------
    names
        Parameter names, in the order of the arrays.
    rhat, ess_bulk, ess_tail, tau
        Per parameter.
    steps
        Steps per walker run so far.
    converged
        All rules met; ``reasons`` lists the unmet ones in words.
    """

    names: tuple[str, ...]
    rhat: np.ndarray
    ess_bulk: np.ndarray
    ess_tail: np.ndarray
    tau: np.ndarray
    steps: int
    converged: bool
    reasons: list[str] = field(default_factory=list)

    @property
    def rhat_max(self) -> float:
        return float(np.nanmax(self.rhat)) if self.rhat.size else float("nan")

    @property
    def ess_min(self) -> float:
        if not self.ess_bulk.size:
            return float("nan")
        return float(min(np.nanmin(self.ess_bulk), np.nanmin(self.ess_tail)))

    def summary(self) -> dict:
        return {
            "converged": bool(self.converged), "reasons": list(self.reasons),
            "steps": int(self.steps), "rhat_max": self.rhat_max, "ess_min": self.ess_min,
            "rules": {"rhat_max": RHAT_MAX, "ess_min": ESS_MIN, "tau_factor": TAU_FACTOR},
            "parameters": {n: {"rhat": float(r), "ess_bulk": float(b), "ess_tail": float(t),
                               "tau": float(a)}
                           for n, r, b, t, a in zip(self.names, self.rhat, self.ess_bulk,
                                                    self.ess_tail, self.tau, strict=True)},
        }


def autocorrelation_times(chain: np.ndarray) -> np.ndarray:
    """Integrated autocorrelation time per parameter of an emcee chain (steps, walkers, q)."""
    import emcee

    if chain.shape[0] < 2:
        return np.full(chain.shape[-1], np.nan)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return np.asarray(emcee.autocorr.integrated_time(chain, c=5, tol=0, quiet=True))


def burn_and_thin(tau: np.ndarray, steps: int) -> tuple[int, int]:
    """Burn-in 2 tau_max and thinning tau_min / 2 (at least 1), capped by the chain length."""
    if not np.all(np.isfinite(tau)):
        return steps // 2, 1
    burn = min(int(2 * np.max(tau)), steps // 2)
    thin = max(1, int(0.5 * np.min(tau)))
    return burn, thin


def rank_diagnostics(draws: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Rank-normalised R-hat, bulk and tail ESS per parameter of draws (chains, draws, q)."""
    az = arviz()
    q = draws.shape[-1]
    if draws.shape[1] < 4:
        nan = np.full(q, np.nan)
        return nan, nan.copy(), nan.copy()
    out = np.empty((3, q))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        for j in range(q):   # arviz on plain (chain, draw) arrays: no xarray overhead
            x = np.ascontiguousarray(draws[:, :, j])
            out[0, j] = az.rhat(x, method="rank")
            out[1, j] = az.ess(x, method="bulk")
            out[2, j] = az.ess(x, method="tail")
    return out[0], out[1], out[2]


def judge(names: tuple[str, ...], chain: np.ndarray, *, rhat_max: float = RHAT_MAX,
          ess_min: float = ESS_MIN, tau_factor: float = TAU_FACTOR
          ) -> tuple[Convergence, int, int]:
    """Diagnose a full emcee chain (steps, walkers, q).

    Returns the :class:`Convergence`, the burn-in and the thinning used.

    Examples
    --------
    >>> rng = np.random.default_rng(1)
    >>> chain = rng.standard_normal((2000, 16, 2))       # independent draws: tau = 1
    >>> verdict, burn, thin = judge(("a", "b"), chain)
    >>> verdict.converged, burn, thin
    (True, 1, 1)
    """
    steps = chain.shape[0]
    tau = autocorrelation_times(chain)
    burn, thin = burn_and_thin(tau, steps)
    kept = np.swapaxes(chain[burn::thin], 0, 1)
    rhat, bulk, tail = rank_diagnostics(kept)
    reasons = []
    if not np.all(np.isfinite(tau)):
        reasons.append("the autocorrelation time could not be estimated")
    elif steps < tau_factor * np.max(tau):
        slow = names[int(np.argmax(tau))]
        reasons.append(f"chain of {steps} steps is shorter than {tau_factor:g} autocorrelation "
                       f"times ({tau_factor:g} x {np.max(tau):.1f} for {slow})")
    bad = [n for n, r in zip(names, rhat, strict=True) if not r <= rhat_max]
    if bad:
        reasons.append(f"R-hat above {rhat_max} for " + ", ".join(bad))
    low = [n for n, b, t in zip(names, bulk, tail, strict=True)
           if not (b >= ess_min and t >= ess_min)]
    if low:
        reasons.append(f"bulk or tail ESS below {ess_min:g} for " + ", ".join(low))
    verdict = Convergence(tuple(names), rhat, bulk, tail, tau, steps, not reasons, reasons)
    return verdict, burn, thin
