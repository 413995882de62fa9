r"""What the data determine: sloppy directions, correlations, prior-dominated parameters.

Fisher eigen-analysis (local, at the maximum)
    The Fisher information :math:`F` of the free model coordinates (ln k for rate
    constants; other parameters as relative changes, :math:`\delta x / |x|`, so every
    coordinate is dimensionless) is diagonalised. An eigenvector :math:`v` with
    eigenvalue :math:`\lambda` is the combination :math:`\prod_j k_j^{v_j}` whose
    logarithm has asymptotic standard deviation :math:`1/\sqrt\lambda`. A direction is
    *sloppy* when that exceeds 1 (the combination is not known to better than a
    factor e = 2.7 at one standard deviation; a mechfit convention); the others are
    the identifiable combinations. Eigenvalue spectra spanning many decades are the
    hallmark of "sloppy" models (Gutenkunst et al., "Universally sloppy parameter
    sensitivities in systems biology models", PLoS Comput. Biol. 3 (2007) e189).
Posterior correlations
    From the posterior draws in the sampling space; pairs with :math:`|r| \ge 0.95` are
    listed (a mechfit convention).
Prior-dominated parameters
    Posterior contraction :math:`1 - \mathrm{Var}_{post}/\mathrm{Var}_{prior}` in the
    sampling space (Betancourt, "Calibrating model-based inferences and decisions",
    arXiv:1803.08393, 2018; Schad, Betancourt and Vasishth, Psychological Methods 26
    (2021) 103). A parameter whose contraction is below 0.1 is reported as
    indistinguishable from its prior (its posterior keeps more than 95 % of the prior
    standard deviation; the threshold is a mechfit convention).
Posterior combinations
    The same eigen-analysis on the posterior covariance of the sampling coordinates.
Lumped parameters of a reduced variant
    A steady-state or pre-equilibrium rate law depends on the elementary constants
    only through its lumped parameters (:attr:`mechfit.derive.RateLaw.lumped`, such as
    ``k1 k2 / (k_1 + k2)``): these are the identifiable combinations the derivation
    predicts. Each is evaluated on every posterior draw (at the reference temperature
    of the constants) and called *determined* when the posterior standard deviation of
    its logarithm is at most 1, the same rule as for a sloppy direction.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from mechfit.infer.optimize import MaximumLikelihood
from mechfit.infer.sampling import Posterior

SLOPPY_SD = 1.0
CORRELATION_LIMIT = 0.95
CONTRACTION_MIN = 0.1


@dataclass
class LumpedSummary:
    """A lumped parameter of the rate law with its posterior."""

    name: str
    expression: str
    median: float
    hdi_low: float
    hdi_high: float
    sd_log: float

    @property
    def determined(self) -> bool:
        return bool(self.sd_log <= SLOPPY_SD)

    def summary(self) -> dict:
        return {"name": self.name, "expression": self.expression, "median": self.median,
                "hdi_low": self.hdi_low, "hdi_high": self.hdi_high, "sd_log": self.sd_log,
                "determined": self.determined}

    def text(self) -> str:
        verdict = "determined" if self.determined else "NOT determined"
        return (f"lumped {self.name} = {self.expression}: median {self.median:.4g} "
                f"(95 % HDI {self.hdi_low:.4g} to {self.hdi_high:.4g}), sd of its log "
                f"{self.sd_log:.3g}: {verdict}")


def lumped_parameters(law, values: dict[str, np.ndarray]) -> list[LumpedSummary]:
    """Posterior of each lumped parameter of ``law`` from the draws ``values`` (by name).

    Lumped parameters that involve anything but the sampled constants (a conserved
    total, for instance) are left out.

    Examples
    --------
    >>> from mechfit import parse_mechanism
    >>> from mechfit.derive import derive_rate_law
    >>> from mechfit.derive.steady_state import steady_state_model
    >>> law = derive_rate_law(steady_state_model(
    ...     parse_mechanism("E + S <=> ES @ k1, k_1\\nES -> E + P @ k2")))
    >>> rng = np.random.default_rng(0)
    >>> draws = {"k1": np.exp(rng.normal(0, 0.01, 500)), "k_1": np.full(500, 2.0),
    ...          "k2": np.full(500, 3.0)}
    >>> [(x.name, round(x.median, 2), x.determined) for x in lumped_parameters(law, draws)]
    [('a1', 0.6, True), ('b1', 0.2, True)]
    """
    import sympy

    from mechfit.derive.printing import plain_text
    from mechfit.infer.diagnostics import arviz

    az = arviz()

    out = []
    for p in law.parameters:
        expr = p.expression
        free = sorted(expr.free_symbols, key=lambda x: x.name)
        if not free or any(x.name not in values for x in free):
            continue
        function = sympy.lambdify(free, expr, modules="numpy")
        with np.errstate(all="ignore"):
            draws = np.asarray(function(*[np.asarray(values[x.name], float).reshape(-1)
                                          for x in free]), float)
        draws = np.broadcast_to(draws, np.asarray(values[free[0].name]).reshape(-1).shape)
        draws = draws[np.isfinite(draws) & (draws > 0)]
        if draws.size < 10:
            continue
        low, high = az.hdi(draws, hdi_prob=0.95)
        out.append(LumpedSummary(p.name, plain_text(expr), float(np.median(draws)),
                                 float(low), float(high), float(np.std(np.log(draws)))))
    return out


@dataclass
class Direction:
    """An eigen-direction: the combination, its standard deviation in log units, and the verdict."""

    eigenvalue: float
    weights: dict[str, float]
    sd: float
    sloppy: bool

    def text(self) -> str:
        """The combination as ``k1^1 * k_1^-0.98`` (weights below 0.1 left out)."""
        parts = [f"{n}^{w:.3g}" for n, w in self.weights.items() if abs(w) >= 0.1]
        return " * ".join(parts) if parts else "(none)"

    def summary(self) -> dict:
        return {"combination": self.text(), "weights": self.weights,
                "eigenvalue": self.eigenvalue, "sd_log": self.sd, "sloppy": self.sloppy}


def directions(matrix: np.ndarray, names: tuple[str, ...], *, information: bool = True
               ) -> list[Direction]:
    """Eigen-directions of an information (or, with ``information=False``, covariance) matrix.

    Sorted from best to worst determined. Weights are scaled so the largest is +1.

    Examples
    --------
    >>> f = np.array([[1.0, 1.0], [1.0, 1.0]]) * 100     # only k1*k2 is seen
    >>> [d.text() for d in directions(f, ("k1", "k2"))]
    ['k1^1 * k2^1', 'k1^1 * k2^-1']
    >>> [d.sloppy for d in directions(f, ("k1", "k2"))]
    [False, True]
    """
    if matrix.size == 0:
        return []
    value, vector = np.linalg.eigh(matrix)
    out = []
    for lam, v in zip(value, vector.T, strict=True):
        big = v[np.argmax(np.abs(v))]
        w = v / big
        if information:
            sd = 1.0 / np.sqrt(lam) if lam > 0 else np.inf
        else:
            sd = np.sqrt(max(lam, 0.0))
        # sd of ln(prod k^w) with w scaled so max |w| = 1:
        sd = float(sd / abs(big))
        out.append(Direction(float(lam), {n: float(x) for n, x in zip(names, w, strict=True)},
                             sd, bool(not sd <= SLOPPY_SD)))
    out.sort(key=lambda d: d.sd)
    return out


def _relative_scale(fit_or_values, lik, columns) -> np.ndarray:
    p = lik.parameters
    free = p.free_parameters
    scale = np.ones(columns.size)
    for k, j in enumerate(columns):
        par = free[j]
        if par.transform != "log":
            value = abs(fit_or_values[par.name])
            scale[k] = value if value > 0 else 1.0
    return scale


@dataclass
class Identifiability:
    """The identifiability analysis of one fit (see the module docs)."""

    names: tuple[str, ...]
    fisher_directions: list[Direction]
    posterior_directions: list[Direction] = field(default_factory=list)
    correlation: np.ndarray | None = None
    correlated_pairs: list[tuple[str, str, float]] = field(default_factory=list)
    contraction: dict[str, float] = field(default_factory=dict)
    lumped: list[LumpedSummary] = field(default_factory=list)

    @property
    def sloppy(self) -> list[Direction]:
        return [d for d in self.fisher_directions if d.sloppy]

    @property
    def identifiable_combinations(self) -> list[str]:
        source = self.posterior_directions or self.fisher_directions
        return [d.text() for d in source if not d.sloppy]

    @property
    def prior_dominated(self) -> list[str]:
        return [n for n, c in self.contraction.items() if not c >= CONTRACTION_MIN]

    def summary(self) -> dict:
        """JSON-safe summary (the ``identifiability`` key of ``mechfit fit --json``)."""
        return {
            "identifiable": not self.sloppy and not self.prior_dominated,
            "sloppy_directions": [d.summary() for d in self.sloppy],
            "identifiable_combinations": self.identifiable_combinations,
            "fisher_eigenvalues": [d.eigenvalue for d in self.fisher_directions],
            "correlated_pairs": [{"a": a, "b": b, "r": r} for a, b, r in self.correlated_pairs],
            "prior_dominated": self.prior_dominated,
            "contraction": self.contraction,
            "lumped_parameters": [x.summary() for x in self.lumped],
            "rules": {"sloppy_sd_log": SLOPPY_SD, "correlation": CORRELATION_LIMIT,
                      "contraction_min": CONTRACTION_MIN},
        }

    def report(self) -> str:
        lines = []
        if not self.sloppy and not self.prior_dominated:
            lines.append("every parameter combination is determined by the data")
        for d in self.sloppy:
            lines.append(f"sloppy: {d.text()} (sd of its log {d.sd:.3g})")
        for a, b, r in self.correlated_pairs:
            lines.append(f"posterior correlation {a} ~ {b}: {r:+.3f}")
        for n in self.prior_dominated:
            lines.append(f"{n}: posterior indistinguishable from the prior "
                         f"(contraction {self.contraction[n]:.3f})")
        if self.identifiable_combinations:
            lines.append("identifiable: " + "; ".join(self.identifiable_combinations))
        lines += [x.text() for x in self.lumped]
        return "\n".join(lines)


def posterior_contraction(posterior: Posterior, *, prior_draws: int = 20000,
                          seed: int | None = 0) -> dict[str, float]:
    """1 - posterior variance / prior variance of each free coordinate (sampling space)."""
    pars = posterior.likelihood.parameters
    rng = np.random.default_rng(seed)
    prior = pars.sample_prior(rng, prior_draws)
    post = posterior.flat()
    out = {}
    for j, n in enumerate(pars.free_names):
        vp = np.var(prior[:, j])
        out[n] = float(1.0 - np.var(post[:, j]) / vp) if vp > 0 else 0.0
    return out


def analyse_identifiability(fit: MaximumLikelihood, posterior: Posterior | None = None
                            ) -> Identifiability:
    """Identifiability of the model parameters from a fit and, if given, its posterior."""
    lik = fit.likelihood
    cols = lik.model_free
    names = tuple(lik.parameters.free_names[j] for j in cols)
    scale = _relative_scale(fit.values, lik, cols)
    fisher = fit.fisher_free * np.outer(scale, scale) if cols.size else fit.fisher_free
    result = Identifiability(names, directions(fisher, names))
    if posterior is not None and cols.size:
        flat = posterior.flat()[:, cols]
        if flat.shape[0] > cols.size + 1:
            cov = np.atleast_2d(np.cov(flat, rowvar=False))
            cov = cov / np.outer(scale, scale)
            result.posterior_directions = directions(cov, names, information=False)
            sd = np.sqrt(np.diag(cov))
            with np.errstate(divide="ignore", invalid="ignore"):
                corr = cov / np.outer(sd, sd)
            result.correlation = corr
            for a in range(len(names)):
                for b in range(a + 1, len(names)):
                    if abs(corr[a, b]) >= CORRELATION_LIMIT:
                        result.correlated_pairs.append((names[a], names[b], float(corr[a, b])))
        result.contraction = {n: c for n, c in posterior_contraction(posterior).items()
                              if n in names}
    return result
