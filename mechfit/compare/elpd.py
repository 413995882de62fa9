r"""Expected log predictive density from posterior draws: PSIS-LOO and WAIC on data points.

Both estimate :math:`\mathrm{elpd}=\sum_i \log p(\tilde y_i\mid y)`, how well the fitted
candidate predicts a new measurement, from the pointwise log-likelihood
:math:`\log p(y_i\mid\theta^{(s)})` at every posterior draw *s* (larger is better). The
standard error is :math:`\sqrt{n\,\mathrm{Var}_i(\widehat{\mathrm{elpd}}_i)}` and the
difference of two candidates has standard error
:math:`\sqrt{n\,\mathrm{Var}_i(\widehat{\mathrm{elpd}}_{A,i}-\widehat{\mathrm{elpd}}_{B,i})}`
(Vehtari, Gelman & Gabry, "Practical Bayesian model evaluation using leave-one-out
cross-validation and WAIC", Stat. Comput. 27 (2017) 1413, eqs. 22-24). PSIS-LOO and WAIC
are computed by :func:`arviz.loo` and :func:`arviz.waic`; the Pareto shape *k* of every
point says whether its importance-sampling estimate can be trusted (same paper, section
2.1, recalled from memory: k < 0.5 good, 0.5-0.7 usable, k > 0.7 unreliable; the 2024
revision, Vehtari et al., J. Mach. Learn. Res. 25, caps the threshold at 0.7 and lowers
it for fewer than about 2200 draws).

Examples
--------
>>> import numpy as np, arviz as az
>>> rng = np.random.default_rng(1)
>>> y = rng.normal(0.0, 1.0, 20)
>>> mu = rng.normal(y.mean(), 1 / np.sqrt(20), (4, 250))
>>> loglik = -0.5 * (y - mu[..., None]) ** 2 - 0.5 * np.log(2 * np.pi)
>>> idata = az.from_dict(posterior={"mu": mu}, log_likelihood={"y": loglik})
>>> loo = psis_loo(idata, "y")
>>> loo.method, loo.n_points, bool(loo.se > 0), loo.n_high_k
('psis-loo', 20, True, 0)
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np

from mechfit.compare.errors import ComparisonError

#: Pareto k above which a PSIS estimate is unreliable (Vehtari, Gelman & Gabry 2017, sec. 2.1)
PARETO_K_UNRELIABLE = 0.7


@dataclass(frozen=True)
class PredictiveDensity:
    """An elpd estimate with its standard error and pointwise terms.

    Attributes
    ----------
    method
        ``"psis-loo"``, ``"waic"`` or ``"run-loo"`` (leave one run out).
    elpd, se
        The estimate (log scale, larger is better) and its standard error.
    p_effective
        Effective number of parameters (lppd minus elpd).
    pointwise
        One elpd term per point (or per run), in the order of ``labels``.
    labels
        Point indices as strings, or run names.
    pareto_k
        Pareto shape per term (PSIS only, else ``None``).
    k_threshold
        Pareto k above which a PSIS term is unreliable.
    exact
        Labels whose term came from an exact refit instead of PSIS.
    elpd_data
        The :class:`arviz.ELPDData` to hand to :func:`arviz.compare`.
    """

    method: str
    elpd: float
    se: float
    p_effective: float
    pointwise: np.ndarray
    labels: tuple[str, ...]
    pareto_k: np.ndarray | None = None
    exact: tuple[str, ...] = ()
    elpd_data: object = field(default=None, repr=False, compare=False)
    k_threshold: float = PARETO_K_UNRELIABLE

    @property
    def n_points(self) -> int:
        """Number of pointwise terms."""
        return len(self.pointwise)

    @property
    def n_high_k(self) -> int:
        """Terms whose Pareto k exceeds ``k_threshold`` (0.7) and were not refitted exactly."""
        if self.pareto_k is None:
            return 0
        refitted = set(self.exact)
        return int(sum(1 for k, label in zip(self.pareto_k, self.labels, strict=True)
                       if k > self.k_threshold and label not in refitted))

    @property
    def pareto_k_max(self) -> float | None:
        """The largest Pareto k (``None`` without PSIS)."""
        return None if self.pareto_k is None else float(np.max(self.pareto_k))


def log_likelihood_array(idata, var_name: str) -> np.ndarray:
    """The pointwise log-likelihood as an array (chain, draw, point), points flattened in C order.

    Raises
    ------
    ComparisonError
        When the ``log_likelihood`` group or the variable is missing, or values are not finite.
    """
    group = getattr(idata, "log_likelihood", None)
    if group is None:
        raise ComparisonError("the InferenceData has no log_likelihood group; compute the "
                              "pointwise log-likelihood on the posterior draws first",
                              names=("log_likelihood",))
    if var_name not in group.data_vars:
        raise ComparisonError(f"no variable {var_name!r} in the log_likelihood group (it has "
                              f"{', '.join(map(str, group.data_vars)) or 'nothing'})",
                              names=(var_name,))
    values = group[var_name].transpose("chain", "draw", ...).values
    values = values.reshape(values.shape[0], values.shape[1], -1)
    if not np.all(np.isfinite(values)):
        raise ComparisonError(f"the pointwise log-likelihood {var_name!r} has non-finite values",
                              names=(var_name,))
    return values


def require_posterior(idata) -> None:
    """Raise :class:`ComparisonError` unless ``idata`` has a ``posterior`` group."""
    if getattr(idata, "posterior", None) is None:
        raise ComparisonError("the InferenceData has no posterior group; PSIS needs the "
                              "posterior draws (for their effective sample size)",
                              names=("posterior",))


def without_warnings(function, *args, **kwargs):
    """Call ``function`` with warnings silenced (mechfit reports Pareto k itself)."""
    # arviz warns about high Pareto k; mechfit reports those in its own fields instead
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return function(*args, **kwargs)


def _from_elpd_data(method: str, data, key: str) -> PredictiveDensity:
    pointwise = np.asarray(data[f"{key}_i"].values, dtype=float).ravel()
    k = data.get("pareto_k")
    return PredictiveDensity(
        method=method, elpd=float(data[f"elpd_{key}"]), se=float(data["se"]),
        p_effective=float(data[f"p_{key}"]), pointwise=pointwise,
        labels=tuple(str(i) for i in range(pointwise.size)),
        pareto_k=None if k is None else np.asarray(k.values, dtype=float).ravel(),
        elpd_data=data)


def psis_loo(idata, var_name: str) -> PredictiveDensity:
    """Pareto-smoothed importance-sampling leave-one-out elpd over data points.

    Parameters
    ----------
    idata
        :class:`arviz.InferenceData` with a ``posterior`` and a ``log_likelihood`` group.
    var_name
        The pointwise log-likelihood variable in ``log_likelihood``.

    Returns
    -------
    PredictiveDensity
        ``method="psis-loo"``, with Pareto k per point.

    Examples
    --------
    See the module docstring.
    """
    import arviz as az

    log_likelihood_array(idata, var_name)
    require_posterior(idata)
    return _from_elpd_data("psis-loo", without_warnings(az.loo, idata, var_name=var_name,
                                              pointwise=True, scale="log"), "loo")


def waic(idata, var_name: str) -> PredictiveDensity:
    """Widely applicable information criterion (Watanabe 2010) on the elpd scale.

    Watanabe, "Asymptotic equivalence of Bayes cross validation and widely applicable
    information criterion in singular learning theory", J. Mach. Learn. Res. 11 (2010) 3571.

    Examples
    --------
    >>> import numpy as np, arviz as az
    >>> rng = np.random.default_rng(2)
    >>> ll = rng.normal(-1.0, 0.1, (2, 100, 8))
    >>> round(waic(az.from_dict(posterior={"a": ll[..., 0]}, log_likelihood={"y": ll}),
    ...            "y").elpd, 1)
    -8.1
    """
    import arviz as az

    log_likelihood_array(idata, var_name)
    return _from_elpd_data("waic", without_warnings(az.waic, idata, var_name=var_name,
                                          pointwise=True, scale="log"), "waic")


def difference(best: Sequence[float] | np.ndarray,
               other: Sequence[float] | np.ndarray) -> tuple[float, float]:
    """Difference of two elpd estimates from their pointwise terms, with its standard error.

    Returns ``(sum(best_i - other_i), sqrt(n * var(best_i - other_i)))``, Vehtari, Gelman &
    Gabry 2017, eq. 24. Positive when ``best`` predicts better.

    Examples
    --------
    >>> d, se = difference([-1.0, -1.0, -2.0], [-1.5, -1.2, -2.4])
    >>> round(d, 6), round(se, 6)
    (1.1, 0.216025)
    """
    a = np.asarray(best, dtype=float)
    b = np.asarray(other, dtype=float)
    if a.shape != b.shape:
        raise ComparisonError(f"cannot compare elpd terms of different lengths ({a.size} and "
                              f"{b.size}): the candidates must be fitted to the same data")
    d = a - b
    return float(d.sum()), float(math.sqrt(d.size * np.var(d)))
