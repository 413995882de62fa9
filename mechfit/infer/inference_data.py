"""The posterior as an :class:`arviz.InferenceData`, written to and read from netCDF.

Groups and variables
--------------------
``posterior``
    Every parameter that is not fixed (free and tied), natural units, dims (chain, draw).
    A chain is one emcee walker.
``sample_stats``
    ``lp`` (log posterior) and ``total_log_likelihood`` per draw.
``log_likelihood``
    ``y``: pointwise, dims (chain, draw, point) (for WAIC/PSIS-LOO over points);
    ``y_by_run``: summed over the points of each run, dims (chain, draw, run) (for
    leave-one-run-out comparisons). Computed after sampling on the kept draws.
``posterior_predictive``
    ``y``: replicate data drawn from the observation model at each kept draw.
``observed_data``
    ``y`` with coordinates ``run_name``, ``observable`` and ``time`` on ``point``.
``constant_data``
    The run conditions (dim ``run``) and the fixed parameter values.

The attributes of the ``posterior`` group carry the convergence verdict, the
sampler settings, the parameter descriptions and the maximum-likelihood result (JSON
text where a value is a mapping).

Examples
--------
>>> import tempfile, pathlib
>>> import numpy as np
>>> from mechfit.infer.likelihood import ErrorModel, Likelihood
>>> from mechfit.infer.observations import ModelFunction, Observations
>>> from mechfit.infer.parameters import Parameter, Parameters
>>> from mechfit.infer.priors import LogNormal
>>> from mechfit.infer.sampling import SamplingSettings, sample_posterior
>>> lik = Likelihood(ModelFunction(("m",), lambda x: np.repeat(x, 3, axis=1)),
...                  Observations.single([0, 1, 2], [0.9, 1.0, 1.1]),
...                  Parameters((Parameter("m", 1.0, LogNormal(1.0, 1.0), "log"),)),
...                  ErrorModel(sigma=0.1))
>>> post = sample_posterior(lik, np.zeros(1), settings=SamplingSettings(max_steps=1000))
>>> idata = inference_data(post)
>>> path = pathlib.Path(tempfile.mkdtemp()) / "posterior.nc"
>>> written = write_inference_data(idata, path)
>>> back = read_inference_data(written)
>>> back.log_likelihood["y"].shape == idata.log_likelihood["y"].shape
True
"""

from __future__ import annotations

import json
import warnings
from pathlib import Path

import numpy as np

from mechfit.errors import MechfitError
from mechfit.infer.diagnostics import arviz
from mechfit.infer.optimize import MaximumLikelihood
from mechfit.infer.sampling import Posterior

BATCH = 2048  # parameter sets per model call when computing pointwise values


class ResultExistsError(MechfitError):
    """A results file exists already and would be overwritten."""


def _batched(function, u: np.ndarray) -> np.ndarray:
    return np.concatenate([function(u[i:i + BATCH]) for i in range(0, u.shape[0], BATCH)])


def inference_data(posterior: Posterior, *, fit: MaximumLikelihood | None = None,
                   predictive: bool = True, seed: int | None = 0):
    """Build the InferenceData of a :class:`~mechfit.infer.sampling.Posterior`."""
    az = arviz()
    lik = posterior.likelihood
    pars = lik.parameters
    obs = lik.observations
    chains, draws, q = posterior.draws.shape
    flat = posterior.flat()
    x = pars.natural(flat)
    pointwise = np.empty((flat.shape[0], obs.n))
    replicate = np.empty((flat.shape[0], obs.n)) if predictive else None
    rng = np.random.default_rng(seed)
    for i in range(0, flat.shape[0], BATCH):
        xi = x[i:i + BATCH]
        mu = lik.predict(xi)
        pointwise[i:i + BATCH] = lik.pointwise_from_prediction(xi, mu)
        if predictive:
            s = lik.standard_deviation(xi, mu)
            z = rng.standard_normal(mu.shape)
            if lik._student.any():
                z = np.where(lik._student, rng.standard_t(np.broadcast_to(lik._nu, mu.shape)), z)
            replicate[i:i + BATCH] = mu + s * z
    shape = (chains, draws)
    kept = [p.name for p in pars if not p.fixed]
    post = {n: x[:, pars.index(n)].reshape(shape) for n in kept}
    total = pointwise.sum(axis=1)
    sample_stats = {"lp": posterior.log_posterior, "total_log_likelihood": total.reshape(shape)}
    log_lik = {"y": pointwise.reshape((*shape, obs.n)),
               "y_by_run": lik.by_run(pointwise).reshape((*shape, len(obs.run_names)))}
    coords = {"point": np.arange(obs.n), "run": list(obs.run_names)}
    dims = {"y": ["point"], "y_by_run": ["run"]}
    constant = {f"condition_{k}": np.asarray(v) for k, v in obs.conditions.items()}
    for k in obs.conditions:
        dims[f"condition_{k}"] = ["run"]
    for p in pars:
        if p.fixed:
            constant[f"fixed_{p.name}"] = np.asarray(p.prior.value)
    constant["point_run"] = obs.run
    dims["point_run"] = ["point"]
    constant["point_observable"] = obs.observable
    dims["point_observable"] = ["point"]
    constant["point_time"] = obs.time
    dims["point_time"] = ["point"]
    with warnings.catch_warnings():
        # each walker is a chain: a short budget may keep fewer draws than walkers, which
        # arviz warns of as a likely transposed array; here the layout is known to be right
        warnings.filterwarnings("ignore", message="More chains", category=UserWarning)
        idata = az.from_dict(
            posterior=post,
            sample_stats=sample_stats,
            log_likelihood=log_lik,
            posterior_predictive={"y": replicate.reshape((*shape, obs.n))} if predictive else None,
            observed_data={"y": obs.values},
            constant_data=constant,
            coords=coords,
            dims=dims,
        )
    od = idata.observed_data
    od.coords["run_name"] = ("point", [obs.run_names[r] for r in obs.run])
    od.coords["observable"] = ("point", [obs.observable_names[o] for o in obs.observable])
    od.coords["time"] = ("point", obs.time)
    idata.constant_data.coords["observable_name"] = list(obs.observable_names)
    v = posterior.convergence
    attrs = {
        "creator": "mechfit",
        "converged": int(v.converged),
        "convergence": json.dumps(v.summary()),
        "statement": posterior.statement(),
        "steps": int(posterior.steps), "burn": int(posterior.burn), "thin": int(posterior.thin),
        "walkers": int(chains),
        "acceptance_mean": float(np.mean(posterior.acceptance)),
        "sampling_seconds": float(posterior.seconds),
        "parameters": json.dumps(pars.describe()),
        "free_parameters": json.dumps(list(pars.free_names)),
        "error_models": json.dumps({o: e.describe() for o, e in lik.errors.items()}),
        "units": json.dumps(dict(obs.units)),
    }
    if fit is not None:
        attrs["maximum_likelihood"] = json.dumps(fit.summary())
    idata.posterior.attrs.update(attrs)
    return idata


def write_inference_data(idata, path: str | Path, *, overwrite: bool = False) -> Path:
    """Write ``idata`` to netCDF at ``path``; returns the path written.

    An existing file is never replaced unless ``overwrite`` is true: then
    :class:`ResultExistsError` is raised naming the file.
    """
    path = Path(path)
    if path.exists() and not overwrite:
        raise ResultExistsError(f"{path}: exists already; choose another output folder or "
                                "remove the old results first")
    path.parent.mkdir(parents=True, exist_ok=True)
    idata.to_netcdf(str(path))
    return path


def read_inference_data(path: str | Path):
    """Read an InferenceData written by :func:`write_inference_data`."""
    path = Path(path)
    if not path.is_file():
        raise MechfitError(f"{path}: no such posterior file")
    az = arviz()
    try:
        return az.from_netcdf(str(path))
    except (OSError, ValueError) as err:
        raise MechfitError(f"{path}: not a readable netCDF posterior ({err})") from None
