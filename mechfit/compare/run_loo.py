r"""Leave-one-run-out cross-validation: how well a candidate predicts a whole new run.

The unit a chemist repeats is the run (one flask, one set of initial concentrations and
temperature), and points within a run share its preparation errors. Leaving out one run
at a time asks the question "would this mechanism have predicted that experiment from the
others?". The log-likelihood of each run is the sum over its points,
:math:`\log p(y_r\mid\theta)=\sum_{i\in r}\log p(y_i\mid\theta)`, and

.. math:: \mathrm{elpd}_{\text{run-loo}} = \sum_r \log p(y_r \mid y_{-r})

is estimated by Pareto-smoothed importance sampling (PSIS) of these run sums (Vehtari,
Gelman & Gabry, Stat. Comput. 27 (2017) 1413, sections 2.1 and 4 on leaving out groups).
Leaving out a whole run moves the posterior more than leaving out a point, so PSIS fails
more often; for every run whose Pareto k exceeds 0.7 the caller's ``refit(run_name)``
supplies the exact value :math:`\log p(y_r\mid y_{-r})`, obtained by fitting the candidate
without that run (the same paper, section 2.1: refit the model for the problematic folds).

Examples
--------
>>> import numpy as np, arviz as az
>>> rng = np.random.default_rng(0)
>>> ll = rng.normal(-1.0, 0.05, (4, 200, 6))
>>> idata = az.from_dict(posterior={"a": ll[..., 0]}, log_likelihood={"y": ll})
>>> result = leave_one_run_out(idata, "y", ["r1", "r1", "r1", "r2", "r2", "r2"])
>>> result.labels, result.n_points
(('r1', 'r2'), 2)
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Callable, Sequence

import numpy as np
from scipy.special import logsumexp

from mechfit.compare.elpd import (
    PARETO_K_UNRELIABLE,
    PredictiveDensity,
    log_likelihood_array,
    require_posterior,
)
from mechfit.compare.errors import ComparisonError

#: signature of the exact-refit callback: run name -> log p(y_run | all other runs)
Refit = Callable[[str], float]


def log_predictive_density(run_log_likelihood_draws: Sequence[float] | np.ndarray) -> float:
    """log of the mean of exp(sums): log p(y_r | other runs) from a held-out run's summed
    log-likelihood at *S* posterior draws of a fit made without that run.

    This is what a ``refit`` callback returns: fit the candidate to the other runs, sum the
    held-out run's pointwise log-likelihood at each new draw, and pass those sums here.

    Examples
    --------
    >>> round(log_predictive_density([-10.0, -10.0, -10.0]), 6)
    -10.0
    >>> round(log_predictive_density([0.0, -1000.0]), 6)  # log((1 + 0) / 2)
    -0.693147
    """
    values = np.asarray(run_log_likelihood_draws, dtype=float).ravel()
    if values.size == 0 or not np.all(np.isfinite(values)):
        raise ComparisonError("the held-out run's log-likelihood must be finite at every draw",
                              names=("refit",))
    return float(logsumexp(values) - math.log(values.size))


def run_names(runs: Sequence[str]) -> tuple[str, ...]:
    """The distinct run labels in order of first appearance.

    Examples
    --------
    >>> run_names(["b", "a", "b", "c"])
    ('b', 'a', 'c')
    """
    return tuple(dict.fromkeys(str(r) for r in runs))


def run_log_likelihood(idata, var_name: str, runs: Sequence[str]) -> tuple[np.ndarray,
                                                                             tuple[str, ...]]:
    """Sum the pointwise log-likelihood over the points of each run.

    Parameters
    ----------
    idata
        :class:`arviz.InferenceData` with the pointwise variable in ``log_likelihood``.
    var_name
        Name of that variable; its point dimensions are flattened in C order.
    runs
        The run label of every point, in the same order.

    Returns
    -------
    (array (chain, draw, run), run names in order of first appearance)

    Examples
    --------
    >>> import numpy as np, arviz as az
    >>> ll = np.ones((1, 3, 4))
    >>> idata = az.from_dict(log_likelihood={"y": ll})
    >>> summed, names = run_log_likelihood(idata, "y", ["a", "b", "a", "a"])
    >>> summed[0, 0].tolist(), names
    ([3.0, 1.0], ('a', 'b'))
    """
    values = log_likelihood_array(idata, var_name)
    labels = np.asarray([str(r) for r in runs])
    if labels.size != values.shape[2]:
        raise ComparisonError(
            f"got {labels.size} run labels for {values.shape[2]} points of {var_name!r}; give "
            "the run of every point in the order of the log-likelihood's point dimension",
            names=("runs",))
    names = run_names(labels)
    summed = np.stack([values[:, :, labels == name].sum(axis=2) for name in names], axis=2)
    return summed, names


def leave_one_run_out(idata, var_name: str, runs: Sequence[str], refit: Refit | None = None,
                      k_threshold: float = PARETO_K_UNRELIABLE) -> PredictiveDensity:
    """Leave-one-run-out elpd by PSIS on run sums, with exact refits for unreliable runs.

    Parameters
    ----------
    idata
        :class:`arviz.InferenceData` with ``posterior`` and ``log_likelihood`` groups.
    var_name
        The pointwise log-likelihood variable.
    runs
        The run label of every point.
    refit
        ``refit(run_name) -> float``: the exact log predictive density of that run given
        all other runs. Called only for runs whose Pareto k exceeds ``k_threshold``;
        without it those runs keep their PSIS value and count in ``n_high_k``.
    k_threshold
        Pareto k above which a run is refitted (0.7, Vehtari, Gelman & Gabry 2017).

    Returns
    -------
    PredictiveDensity
        ``method="run-loo"``, one term per run (``labels`` are the run names), ``exact``
        naming the refitted runs.

    Raises
    ------
    ComparisonError
        Fewer than two runs, labels that do not match the points, or a refit that does
        not return a finite number.
    """
    import arviz as az
    import xarray as xr

    summed, names = run_log_likelihood(idata, var_name, runs)
    require_posterior(idata)
    if len(names) < 2:
        raise ComparisonError("leaving one run out needs at least two runs; this study has "
                              f"{len(names)}", names=("runs",))
    source = idata.log_likelihood[var_name]
    coords = {"chain": source["chain"].values, "draw": source["draw"].values,
              "run": list(names)}
    dataset = xr.Dataset({var_name: xr.DataArray(summed, dims=("chain", "draw", "run"),
                                                 coords=coords)})
    grouped = az.InferenceData(log_likelihood=dataset, posterior=idata.posterior)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        data = az.loo(grouped, var_name=var_name, pointwise=True, scale="log")
    pointwise = np.asarray(data["loo_i"].values, dtype=float).copy()
    pareto_k = np.asarray(data["pareto_k"].values, dtype=float)
    exact = []
    if refit is not None:
        for index, name in enumerate(names):
            if pareto_k[index] > k_threshold:
                value = refit(name)
                try:
                    value = float(value)
                except (TypeError, ValueError):
                    value = math.nan
                if not math.isfinite(value):
                    raise ComparisonError(
                        f"the refit for run {name!r} returned {value!r}; it must return the "
                        "finite log predictive density of that run given the other runs",
                        names=(name,))
                pointwise[index] = value
                exact.append(name)
    flat = summed.reshape(-1, len(names))
    lppd = logsumexp(flat, axis=0) - math.log(flat.shape[0])
    elpd = float(pointwise.sum())
    se = float(math.sqrt(len(names) * np.var(pointwise)))
    p_effective = float(lppd.sum() - elpd)
    updated = data.copy()
    updated["loo_i"] = xr.DataArray(pointwise, dims=("run",), coords={"run": list(names)},
                                    name="loo_i")
    updated["elpd_loo"] = elpd
    updated["se"] = se
    updated["p_loo"] = p_effective
    unreliable = [k > k_threshold and n not in exact for k, n in zip(pareto_k, names,
                                                                       strict=True)]
    updated["warning"] = bool(any(unreliable))
    return PredictiveDensity(method="run-loo", elpd=elpd, se=se, p_effective=p_effective,
                             pointwise=pointwise, labels=names, pareto_k=pareto_k,
                             exact=tuple(exact), elpd_data=updated,
                             k_threshold=float(k_threshold))
