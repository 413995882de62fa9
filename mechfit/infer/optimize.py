r"""Maximum likelihood: multi-start least squares, covariance at the optimum, profiles.

Procedure
---------
1. **Starts.** A scrambled Sobol design (or a Latin hypercube) of ``starts`` points in
   the free space, within the central 99.9 % of each prior (uniform in log k for the
   default log-uniform priors), plus the collection's current values. All are
   evaluated in one batched call; local searches run from the ``local`` best.
2. **Local search.** Alternating blocks until the log-likelihood changes by less than
   1e-10 (relative): the model parameters by :func:`scipy.optimize.least_squares`
   (trust-region reflective, bounds from the priors) on the residuals
   :math:`(y_i-\mu_i)/s_i` with the noise held fixed, Student-t points through an exact
   robust loss :math:`\rho(z) = (\nu+1)\log(1+z/\nu)`; the Jacobian is the model's
   sensitivities chained through the parameter transforms, or central differences
   computed in one batched model call. A model with cheaper search sensitivities
   (a simulator's at a looser tolerance) gives the directions until the
   log-likelihood is stationary; one more round on the full sensitivities must then
   find it stationary too (an inexact Jacobian changes only the path, since the
   residuals are exact; the confirming round makes the stopping test exact as well).
   Then the fitted noise levels given the predictions (L-BFGS-B). With the proportional
   error option (noise depends on the prediction) a final joint L-BFGS-B polish on the
   exact likelihood follows.
3. **Covariance.** The expected Fisher information of the model parameters at the
   optimum, :math:`F = J^\top W J` (``W`` from
   :meth:`~mechfit.infer.likelihood.Likelihood.information_weights`), inverted, times
   :math:`n/(n-p)` when a noise level is fitted: the residual variance with
   :math:`n-p` degrees of freedom, the convention of the NIST StRD certified standard
   errors and of Bates and Watts, *Nonlinear Regression Analysis and Its
   Applications* (Wiley, 1988), section 2.3. Noise parameters get the inverse of the
   numerical Hessian of their block (treated as orthogonal to the model block, exact
   for the Gaussian with constant noise). Natural-unit covariances follow by the delta
   method :math:`D C D^\top`, :math:`D = \partial x/\partial u`.
4. **Convergence report.** A start "agrees" when it ends within 0.01 log-likelihood
   units of the best (a mechfit convention); the fit converged when the best local
   search reported success, at least two starts agree (or only one was run), and
   the Fisher information is positive definite.

Profile likelihood (Venzon and Moolgavkar, Appl. Stat. 37 (1988) 87; Raue et al.,
Bioinformatics 25 (2009) 1923): the parameter is fixed on a grid, the others
re-optimised; the 95 % interval is where the profile lies within
:math:`\chi^2_{1,0.95}/2 = 1.92` of the maximum.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np
from scipy import optimize, stats

from mechfit.infer.errors import FitFailure
from mechfit.infer.likelihood import Likelihood
from mechfit.infer.priors import Fixed

#: two starts agree when their log-likelihoods differ by less than this (mechfit convention)
AGREEMENT = 0.01
PENALTY = 1e8  # residual put in place of a failed prediction during a search
#: scaled Fisher information with an eigenvalue below this is singular (numerical rank)
SINGULAR = 1e-12


@dataclass
class StartResult:
    """The outcome of one local search."""

    start: np.ndarray
    u: np.ndarray
    log_likelihood: float
    success: bool
    message: str
    evaluations: int


@dataclass
class MaximumLikelihood:
    """The maximum-likelihood estimate and its statistics.

    Attributes
    ----------
    likelihood
        The likelihood that was maximised.
    u
        Best free vector.
    values
        Natural values of every parameter at the optimum, by name.
    log_likelihood_max
        The maximum.
    covariance, correlation
        Natural-unit matrices over ``names`` (every parameter; fixed ones have zero variance).
    covariance_free
        Covariance of the free vector ``u`` (log units for rate constants).
    fisher_free
        Fisher information of the free model coordinates (q_model x q_model).
    standard_errors
        Square roots of the covariance diagonal, by name.
    starts
        Every local search, best first.
    converged
        See the module docs; ``messages`` says why not.
    """

    likelihood: Likelihood
    u: np.ndarray
    values: dict[str, float]
    log_likelihood_max: float
    covariance: np.ndarray
    covariance_free: np.ndarray
    fisher_free: np.ndarray
    starts: list[StartResult]
    converged: bool
    messages: list[str] = field(default_factory=list)
    evaluations: int = 0

    @property
    def names(self) -> tuple[str, ...]:
        return self.likelihood.parameters.names

    @property
    def standard_errors(self) -> dict[str, float]:
        se = np.sqrt(np.clip(np.diag(self.covariance), 0, None))
        return {n: float(v) for n, v in zip(self.names, se, strict=True)}

    @property
    def correlation(self) -> np.ndarray:
        return correlation_matrix(self.covariance)

    @property
    def agreeing_starts(self) -> int:
        return sum(1 for s in self.starts
                   if s.log_likelihood >= self.log_likelihood_max - AGREEMENT)

    def summary(self) -> dict:
        """JSON-safe summary."""
        se = self.standard_errors
        return {
            "log_likelihood_max": float(self.log_likelihood_max),
            "converged": bool(self.converged),
            "messages": list(self.messages),
            "starts": len(self.starts),
            "agreeing_starts": self.agreeing_starts,
            "evaluations": int(self.evaluations),
            "parameters": {n: {"mle": self.values[n], "se": se[n]} for n in self.names},
        }

    def report(self) -> str:
        """A plain-text convergence report and parameter table."""
        lines = [f"maximum log-likelihood {self.log_likelihood_max:.6g} "
                 f"({self.agreeing_starts} of {len(self.starts)} local searches agree "
                 f"within {AGREEMENT})",
                 "converged" if self.converged else "NOT converged: " + "; ".join(self.messages)]
        se = self.standard_errors
        lines.append(f"{'name':<14} {'estimate':>14} {'std. error':>12}")
        for n in self.names:
            lines.append(f"{n:<14} {self.values[n]:>14.8g} {se[n]:>12.5g}")
        return "\n".join(lines)


def correlation_matrix(covariance: np.ndarray) -> np.ndarray:
    """Correlation from covariance (zero rows for zero variance).

    >>> correlation_matrix(np.array([[4.0, 2.0], [2.0, 9.0]])).round(3).tolist()
    [[1.0, 0.333], [0.333, 1.0]]
    """
    sd = np.sqrt(np.clip(np.diag(covariance), 0, None))
    with np.errstate(divide="ignore", invalid="ignore"):
        corr = covariance / np.outer(sd, sd)
    corr[~np.isfinite(corr)] = 0.0
    np.fill_diagonal(corr, np.where(sd > 0, 1.0, 0.0))
    return corr


# ---- local search ------------------------------------------------------------------
def _interior(u: np.ndarray, low: np.ndarray, high: np.ndarray) -> np.ndarray:
    span = np.where(np.isfinite(high - low), high - low, 1.0)
    eps = 1e-9 * np.maximum(span, 1.0)
    return np.clip(u, low + eps, high - eps)


def finite_difference_jacobian(lik: Likelihood, u: np.ndarray, columns: np.ndarray) -> np.ndarray:
    """Central-difference d prediction / d u[columns] (n, len(columns)), one batched call."""
    steps = 1e-6 * np.maximum(1.0, np.abs(u[columns]))
    batch = np.repeat(u[None, :], 2 * len(columns), axis=0)
    for k, (j, h) in enumerate(zip(columns, steps, strict=True)):
        batch[2 * k, j] += h
        batch[2 * k + 1, j] -= h
    mu = lik.predict(lik.parameters.natural(batch))
    return ((mu[0::2] - mu[1::2]) / (2 * steps[:, None])).T


def _robust_loss(student: np.ndarray, nu: np.ndarray):
    """rho(z) for least_squares: z for Gaussian points, (nu+1) log(1+z/nu) for Student-t."""
    def loss(z):
        out = np.empty((3, z.size))
        out[0] = np.where(student, (nu + 1) * np.log1p(z / nu), z)
        out[1] = np.where(student, (nu + 1) / (nu + z), 1.0)
        out[2] = np.where(student, -(nu + 1) / (nu + z) ** 2, 0.0)
        return out
    return loss


def _model_step(lik: Likelihood, u: np.ndarray, max_evaluations: int,
                tolerance: float = 1e-14, search: bool = False) -> tuple[np.ndarray, int]:
    cols = lik.model_free
    if cols.size == 0:
        return u, 0
    p = lik.parameters
    low, high = (b[cols] for b in p.free_bounds())
    x = p.natural(u)
    s = lik.standard_deviation(x, lik.predict(x))[0]
    y = lik.observations.values
    count = [0]

    def full(theta):
        v = u.copy()
        v[cols] = theta
        return v

    def fun(theta):
        count[0] += 1
        mu = lik.predict(p.natural(full(theta)))[0]
        r = (y - mu) / s
        r[~np.isfinite(r)] = PENALTY
        return r

    def jac(theta):
        v = full(theta)
        mu, d = lik.prediction_and_jacobian(v[None, :], search=search)
        if d is None:
            count[0] += 1
            dm = finite_difference_jacobian(lik, v, cols)
        else:
            dm = d[0][:, cols]
        out = -dm / s[:, None]
        out[~np.isfinite(out)] = 0.0
        return out

    loss = _robust_loss(lik._student, lik._nu) if lik._student.any() else "linear"
    theta0 = _interior(u[cols], low, high)
    res = optimize.least_squares(fun, theta0, jac=jac, bounds=(low, high), method="trf",
                                 loss=loss, x_scale="jac", ftol=tolerance, xtol=tolerance,
                                 gtol=tolerance, max_nfev=max_evaluations)
    return full(res.x), count[0]


def _noise_step(lik: Likelihood, u: np.ndarray) -> np.ndarray:
    cols = lik.noise_free
    if cols.size == 0:
        return u
    p = lik.parameters
    low, high = (b[cols] for b in p.free_bounds())
    mu = lik.predict(p.natural(u))

    def negative(theta):
        v = u.copy()
        v[cols] = theta
        value = -lik.pointwise_from_prediction(p.natural(v), mu).sum()
        return value if np.isfinite(value) else 1e300

    res = optimize.minimize(negative, _interior(u[cols], low, high), method="L-BFGS-B",
                            bounds=list(zip(low, high, strict=True)),
                            options={"ftol": 1e-15, "gtol": 1e-12, "maxiter": 500})
    v = u.copy()
    v[cols] = res.x
    return v


def _polish(lik: Likelihood, u: np.ndarray) -> tuple[np.ndarray, int]:
    """Joint L-BFGS-B on the exact likelihood, gradient by batched central differences."""
    low, high = lik.parameters.free_bounds()
    q = u.size
    count = [0]

    def value_and_gradient(v):
        h = 1e-6 * np.maximum(1.0, np.abs(v))
        batch = np.repeat(v[None, :], 2 * q + 1, axis=0)
        for j in range(q):
            batch[1 + 2 * j, j] += h[j]
            batch[2 + 2 * j, j] -= h[j]
        count[0] += 1
        ll = lik.log_likelihood(batch)
        if not np.all(np.isfinite(ll)):
            return 1e300, np.zeros(q)
        grad = -(ll[1::2] - ll[2::2]) / (2 * h)
        return -ll[0], grad

    res = optimize.minimize(value_and_gradient, _interior(u, low, high), jac=True,
                            method="L-BFGS-B", bounds=list(zip(low, high, strict=True)),
                            options={"ftol": 1e-15, "gtol": 1e-10, "maxiter": 2000})
    return res.x, count[0]


def local_search(lik: Likelihood, start: np.ndarray, *, max_rounds: int = 50,
                 max_evaluations: int = 2000, tolerance: float = 1e-14) -> StartResult:
    """One local maximisation from ``start`` (see the module docs, step 2)."""
    u = np.asarray(start, dtype=float).copy()
    low, high = lik.parameters.free_bounds()
    u = _interior(u, low, high)
    evaluations = 0
    ll = float(lik.log_likelihood(u)[0])
    if not np.isfinite(ll):
        return StartResult(start, u, -math.inf, False, "the model failed at the start", 1)
    message, success = "block search reached the round limit", False
    search = lik.model.search_sensitivities is not None
    for _ in range(max_rounds):
        if evaluations >= max_evaluations:
            message = (f"stopped after {evaluations} evaluations (the budget of a local "
                       "search) before the log-likelihood settled")
            break
        u, n = _model_step(lik, u, max_evaluations - evaluations, tolerance, search)
        evaluations += n
        u = _noise_step(lik, u)
        new = float(lik.log_likelihood(u)[0])
        evaluations += 2
        stationary = abs(new - ll) <= max(1e-10, tolerance) * (1.0 + abs(new))
        ll = new
        if stationary and search:
            search = False  # confirm with a round on the full-tolerance Jacobian
        elif stationary:
            message, success = "log-likelihood stationary", True
            break
    if lik.proportional:
        v, n = _polish(lik, u)
        evaluations += n
        new = float(lik.log_likelihood(v)[0])
        if new >= ll:
            u, ll = v, new
    success = success and np.isfinite(ll)
    return StartResult(np.asarray(start), u, ll, bool(success), message, evaluations)


# ---- covariance -------------------------------------------------------------------
def fisher_information(lik: Likelihood, u: np.ndarray) -> np.ndarray:
    """Expected Fisher information of the free model coordinates at ``u`` (q_m x q_m)."""
    cols = lik.model_free
    x = lik.parameters.natural(u)
    mu, d = lik.prediction_and_jacobian(u[None, :])
    jm = finite_difference_jacobian(lik, u, cols) if d is None else d[0][:, cols]
    w = lik.information_weights(x, mu)[0]
    return jm.T @ (w[:, None] * jm)


def _noise_hessian(lik: Likelihood, u: np.ndarray) -> np.ndarray:
    cols = lik.noise_free
    p = lik.parameters
    mu = lik.predict(p.natural(u))
    h = 1e-4

    def f(v):
        return lik.pointwise_from_prediction(p.natural(v), np.repeat(mu, len(v), 0)).sum(-1)

    k = cols.size
    hess = np.zeros((k, k))
    for a in range(k):
        for b in range(a, k):
            pts = []
            for sa, sb in ((1, 1), (1, -1), (-1, 1), (-1, -1)):
                v = u.copy()
                v[cols[a]] += sa * h
                v[cols[b]] += sb * h
                pts.append(v)
            fa = f(np.array(pts))
            hess[a, b] = hess[b, a] = (fa[0] - fa[1] - fa[2] + fa[3]) / (4 * h * h)
    return hess


def covariance_at(lik: Likelihood, u: np.ndarray) -> tuple[np.ndarray, np.ndarray, list[str]]:
    """(covariance of u, Fisher information of the model block, problems found)."""
    problems = []
    q = u.size
    cov = np.full((q, q), np.nan)
    cols, ncols = lik.model_free, lik.noise_free
    fisher = fisher_information(lik, u) if cols.size else np.zeros((0, 0))
    if cols.size:
        # judge and invert the information scaled to unit diagonal, so that coordinates
        # in different units (ln k, J/mol) do not look singular
        d = np.sqrt(np.clip(np.diag(fisher), 0, None))
        scale = np.where(d > 0, 1.0 / np.where(d > 0, d, 1.0), 0.0)
        scaled = fisher * np.outer(scale, scale)
        eigval, eigvec = np.linalg.eigh(scaled)
        if np.any(d <= 0) or eigval.min() <= SINGULAR * max(eigval.max(), 1.0):
            problems.append("the Fisher information is singular: some parameter combination "
                            "is not determined by the data (see identifiability)")
            block = np.linalg.pinv(fisher)
        else:
            block = ((eigvec / eigval) @ eigvec.T) * np.outer(scale, scale)
        n, p = lik.n_data, cols.size
        if ncols.size and n > p:
            block = block * n / (n - p)
        cov[np.ix_(cols, cols)] = block
        if ncols.size:
            cov[np.ix_(cols, ncols)] = 0.0
            cov[np.ix_(ncols, cols)] = 0.0
    if ncols.size:
        hess = _noise_hessian(lik, u)
        try:
            cov[np.ix_(ncols, ncols)] = np.linalg.inv(-hess)
        except np.linalg.LinAlgError:
            problems.append("the noise levels are not determined")
    return cov, fisher, problems


# ---- the public searches ------------------------------------------------------------
def maximum_likelihood(
    likelihood: Likelihood,
    *,
    starts: int = 32,
    local: int = 8,
    method: str = "sobol",
    seed: int | None = 0,
    extra_starts: Sequence[np.ndarray] = (),
    max_evaluations: int = 2000,
    tolerance: float = 1e-14,
    current: bool = True,
) -> MaximumLikelihood:
    """Multi-start maximum likelihood (see the module docs).

    Parameters
    ----------
    likelihood
        What to maximise.
    starts
        Size of the space-filling design.
    local
        Local searches run from the best design points (plus the current values and
        ``extra_starts``).
    method
        ``"sobol"`` or ``"lhs"``.
    seed
        Seed of the scrambled design.
    extra_starts
        Further free vectors to start from (e.g. a previous optimum).
    max_evaluations
        Cap on the model evaluations of each local search (all its rounds together).
    tolerance
        ``ftol``, ``xtol`` and ``gtol`` of :func:`scipy.optimize.least_squares` (relative).
    current
        Also search from the collection's current values (``False`` when a nearby
        optimum is given in ``extra_starts``, e.g. a refit without one run).

    Raises
    ------
    FitFailure
        When no local search reaches a finite log-likelihood.

    Examples
    --------
    >>> import numpy as np
    >>> from mechfit.infer.likelihood import ErrorModel, Likelihood
    >>> from mechfit.infer.observations import ModelFunction, Observations
    >>> from mechfit.infer.parameters import Parameter, Parameters
    >>> from mechfit.infer.priors import LogUniform
    >>> t = np.linspace(0.0, 3.0, 7)
    >>> y = 2.0 * np.exp(-1.5 * t) + 0.01 * np.array([1, -1, 1, -1, 1, -1, 1])
    >>> model = ModelFunction(("A", "k"), lambda x: x[:, :1] * np.exp(-x[:, 1:] * t))
    >>> pars = Parameters((Parameter("A", 1.0, LogUniform(0.1, 10), "log"),
    ...                    Parameter("k", 1.0, LogUniform(0.01, 100), "log")))
    >>> fit = maximum_likelihood(Likelihood(model, Observations.single(t, y), pars))
    >>> fit.converged, round(fit.values["k"], 2)
    (True, 1.51)
    """
    p = likelihood.parameters
    q = len(p.free_names)
    design = p.start_design(starts, method=method, seed=seed) if q else np.empty((0, 0))
    candidates = [p.free_vector()] if current or not extra_starts else []
    candidates += [np.asarray(s, float) for s in extra_starts]
    evaluations = 0
    if q and starts:
        ll = likelihood.log_likelihood(design)
        evaluations += 1
        order = np.argsort(-np.where(np.isfinite(ll), ll, -np.inf))
        candidates += [design[i] for i in order[:local] if np.isfinite(ll[i])]
    results = []
    for start in candidates:
        res = local_search(likelihood, start, max_evaluations=max_evaluations,
                           tolerance=tolerance) if q else \
            StartResult(start, start, float(likelihood.log_likelihood(start)[0]), True,
                        "nothing to fit", 1)
        evaluations += res.evaluations
        results.append(res)
    results.sort(key=lambda r: -r.log_likelihood if np.isfinite(r.log_likelihood) else math.inf)
    best = results[0]
    if not np.isfinite(best.log_likelihood):
        raise FitFailure(f"no maximum-likelihood search reached a finite optimum from "
                         f"{len(results)} starts; check the model, the data units and the priors")
    return _result(likelihood, best.u, results, evaluations)


def _result(lik: Likelihood, u: np.ndarray, results: list[StartResult],
            evaluations: int) -> MaximumLikelihood:
    p = lik.parameters
    best = results[0]
    messages = []
    cov_u, fisher, problems = covariance_at(lik, u) if u.size else \
        (np.zeros((0, 0)), np.zeros((0, 0)), [])
    messages += problems
    if not best.success:
        messages.append(f"the best local search did not settle ({best.message})")
    agreeing = sum(1 for r in results if r.log_likelihood >= best.log_likelihood - AGREEMENT)
    if len(results) > 1 and agreeing < 2:
        messages.append("only one local search reached the best optimum; "
                        "try more starts (the surface may be multimodal)")
    low, high = p.free_bounds()
    at_bound = [n for n, v, a, b in zip(p.free_names, u, low, high, strict=True)
                if np.isfinite(a) and abs(v - a) < 1e-6 * max(1.0, abs(a))
                or np.isfinite(b) and abs(v - b) < 1e-6 * max(1.0, abs(b))]
    if at_bound:
        messages.append("at a prior bound: " + ", ".join(at_bound))
    d = p.natural_jacobian(u)[0]
    cov_x = d @ np.nan_to_num(cov_u) @ d.T if u.size else np.zeros((len(p), len(p)))
    values = p.values(u)
    converged = not messages or (messages == [m for m in messages if m.startswith("at a prior")])
    return MaximumLikelihood(lik, u, values, float(best.log_likelihood), cov_x, cov_u, fisher,
                             results, bool(converged), messages, evaluations)


@dataclass
class ProfileLikelihood:
    """A profile: parameter values (natural) and the maximised log-likelihood at each."""

    name: str
    values: np.ndarray
    log_likelihood: np.ndarray
    log_likelihood_max: float
    level: float = 0.95

    @property
    def threshold(self) -> float:
        """The log-likelihood at the edge of the interval (max - chi2_1(level)/2)."""
        return self.log_likelihood_max - stats.chi2.ppf(self.level, 1) / 2

    def interval(self) -> tuple[float, float]:
        """The profile interval; an end is ``nan`` when the profile does not cross the threshold
        on that side of the grid (the parameter is not bounded there by the data)."""
        inside = self.log_likelihood >= self.threshold
        best = int(np.argmax(self.log_likelihood))
        ends = []
        for step in (-1, 1):
            i = best
            while 0 <= i + step < len(self.values) and inside[i + step]:
                i += step
            j = i + step
            if not 0 <= j < len(self.values):
                ends.append(math.nan)
                continue
            a, b = self.log_likelihood[i], self.log_likelihood[j]
            frac = (a - self.threshold) / (a - b) if a != b else 0.0
            ends.append(float(self.values[i] + frac * (self.values[j] - self.values[i])))
        return ends[0], ends[1]

    def summary(self) -> dict:
        low, high = self.interval()
        return {"name": self.name, "values": self.values.tolist(),
                "log_likelihood": self.log_likelihood.tolist(),
                "interval": [low, high], "level": self.level}


def profile_likelihood(fit: MaximumLikelihood, name: str, values: Sequence[float] | None = None,
                       *, points: int = 21, width: float = 4.0) -> ProfileLikelihood:
    """Profile log-likelihood of one free parameter.

    ``values`` defaults to ``points`` values spanning ``width`` standard errors either side
    of the estimate (in the sampling space: log for rate constants).
    """
    lik = fit.likelihood
    p = lik.parameters
    if name not in p.free_names:
        raise FitFailure(f"cannot profile {name!r}: it is not a free parameter "
                         f"(free: {', '.join(p.free_names)})")
    j = p.free_names.index(name)
    param = p[name]
    if values is None:
        sd = math.sqrt(fit.covariance_free[j, j]) if np.isfinite(fit.covariance_free[j, j]) \
            else 1.0
        low, high = p.free_bounds()
        grid = np.clip(fit.u[j] + np.linspace(-width, width, points) * sd, low[j], high[j])
        values = np.exp(grid) if param.transform == "log" else grid
    values = np.asarray(values, dtype=float)
    centre = int(np.argmin(np.abs(values - fit.values[name])))
    out = np.full(values.size, -np.inf)
    others = [n for n in p.free_names if n != name]
    for direction in (range(centre, values.size), range(centre - 1, -1, -1)):
        start = {n: fit.values[n] for n in others}
        for i in direction:
            fixed = lik.with_parameters(p.set(name, prior=Fixed(float(values[i]))))
            u0 = fixed.parameters.free_vector(start)
            res = local_search(fixed, u0) if others else StartResult(
                u0, u0, float(fixed.log_likelihood(u0)[0]), True, "", 1)
            out[i] = res.log_likelihood
            if np.isfinite(res.log_likelihood):
                start = fixed.parameters.values(res.u)
    return ProfileLikelihood(name, values, out, fit.log_likelihood_max)
