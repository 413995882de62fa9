"""Fit one model variant to every run of a study: maximum likelihood, posterior, diagnostics.

:func:`fit_study` chains the pieces of this package: the study problem
(:mod:`mechfit.infer.study_model`), multi-start maximum likelihood, emcee sampling
from a ball around the optimum, the InferenceData, identifiability and summaries.
The result, :class:`StudyFit`, writes ``posterior.nc`` and ``fit.json`` and never
replaces existing files.
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from mechfit.infer.half_conversion import HalfConversion, half_conversion_times
from mechfit.infer.identifiability import (
    Identifiability,
    analyse_identifiability,
    lumped_parameters,
)
from mechfit.infer.inference_data import (
    ResultExistsError,
    inference_data,
    write_inference_data,
)
from mechfit.infer.likelihood import Likelihood
from mechfit.infer.optimize import MaximumLikelihood, maximum_likelihood
from mechfit.infer.sampling import Posterior, SamplingSettings, sample_posterior
from mechfit.infer.study_model import StudyProblem, study_problem
from mechfit.infer.summaries import (
    Summary,
    derived_quantities,
    posterior_values,
    summarise_parameters,
)

RESULT_FILES = ("posterior.nc", "fit.json")
#: relative tolerance of the least-squares searches of a study fit (the optimum's
#: log-likelihood is then good to about 1e-4, far below what the criteria resolve)
FIT_TOLERANCE = 1e-8
#: model evaluations one local search of a study fit may use (searches that converge
#: take about 100 on the demo study; one crawling along a ridge of a sloppy scheme took
#: 1845 and gained 0.03 log-likelihood units): a mechfit convention
FIT_EVALUATIONS = 500

CAUTIONS = (
    "Rate constants and activation parameters hold within the temperatures and "
    "concentrations studied; extrapolating them (scale-up, thermal-hazard or runaway "
    "assessment) needs independent calorimetric and kinetic validation under local codes "
    "and licensed process-safety practice.",
)


def _json_number(x):
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


@dataclass
class StudyFit:
    """The fit of one variant to a study (see :func:`fit_study`)."""

    problem: StudyProblem
    likelihood: Likelihood
    maximum: MaximumLikelihood
    posterior: Posterior
    idata: object
    identifiability: Identifiability
    parameters: dict[str, Summary]
    derived: dict[str, Summary]
    labels: dict = field(default_factory=dict)
    half_conversion: list[HalfConversion] = field(default_factory=list)

    @property
    def converged(self) -> bool:
        """Both the maximum-likelihood search and the sampler met their rules."""
        return bool(self.maximum.converged and self.posterior.converged)

    def summary(self) -> dict:
        """The JSON object of ``mechfit fit --json`` (and of ``fit.json``)."""
        v = self.posterior.convergence
        return {
            **self.labels,
            "parameters": {n: {k: _json_number(x) for k, x in s.summary().items()}
                           for n, s in self.parameters.items()},
            "log_likelihood_max": _json_number(self.maximum.log_likelihood_max),
            "n_data": int(self.likelihood.n_data),
            "n_parameters": len(self.likelihood.parameters.free_names),
            "converged": self.converged,
            "rhat_max": _json_number(v.rhat_max),
            "ess_min": _json_number(v.ess_min),
            "identifiability": _clean(self.identifiability.summary()),
            "maximum_likelihood": _clean(self.maximum.summary()),
            "sampling": {"statement": self.posterior.statement(),
                         "steps": int(self.posterior.steps),
                         "walkers": int(self.posterior.draws.shape[0]),
                         "kept_draws": int(self.posterior.draws.shape[0]
                                           * self.posterior.draws.shape[1]),
                         "seconds": round(float(self.posterior.seconds), 3),
                         "reasons": list(v.reasons)},
            "derived": {n: {k: _json_number(x) for k, x in s.summary().items()
                            if k in ("median", "hdi_low", "hdi_high")} | {"unit": s.unit}
                        for n, s in self.derived.items()},
            "half_conversion": [_clean(h.summary()) for h in self.half_conversion],
            "units": "canonical: mol/L, s, K, J/mol",
            "cautions": list(CAUTIONS),
        }

    def report(self) -> str:
        """Plain-text report: convergence, parameters, derived quantities, identifiability."""
        lines = [f"fit of {self.labels.get('mechanism', '?')} "
                 f"(variant {self.labels.get('variant', '?')}) to "
                 f"{self.labels.get('study', '?')}: {self.likelihood.n_data} points, "
                 f"{len(self.likelihood.parameters.free_names)} free parameters",
                 self.maximum.report().splitlines()[0],
                 ("maximum likelihood converged" if self.maximum.converged else
                  "maximum likelihood NOT converged: " + "; ".join(self.maximum.messages)),
                 "posterior " + self.posterior.statement(), "",
                 "parameter         median  [95 % HDI]   (canonical units: mol/L, s, K, J/mol)"]
        lines += [s.text() for s in self.parameters.values()]
        if self.derived:
            lines += ["", "derived quantities"] + [s.text() for s in self.derived.values()]
        if self.half_conversion:
            lines += ["", "half-lives under the conditions of each run"]
            lines += [h.text() for h in self.half_conversion]
        lines += ["", "identifiability", self.identifiability.report(), ""]
        lines += ["caution: " + c for c in CAUTIONS]
        return "\n".join(lines)

    def write(self, folder: str | Path) -> list[Path]:
        """Write ``posterior.nc`` and ``fit.json`` into ``folder``; refuses to replace files."""
        folder = Path(folder)
        check_output_folder(folder)
        folder.mkdir(parents=True, exist_ok=True)
        written = [write_inference_data(self.idata, folder / "posterior.nc")]
        target = folder / "fit.json"
        with open(target, "x", encoding="utf-8") as handle:
            json.dump(self.summary(), handle, indent=2)
            handle.write("\n")
        written.append(target)
        return written


def _clean(obj):
    """Replace non-finite floats by None and numpy scalars by Python ones (JSON-safe)."""
    if isinstance(obj, dict):
        return {k: _clean(v) for k, v in obj.items()}
    if isinstance(obj, list | tuple):
        return [_clean(v) for v in obj]
    if isinstance(obj, bool | np.bool_):
        return bool(obj)
    if isinstance(obj, int | np.integer):
        return int(obj)
    if isinstance(obj, float | np.floating):
        return _json_number(obj)
    return obj


def _lumped(model, idata) -> list:
    """Posteriors of the lumped parameters of a reduced variant's rate law (else [])."""
    from mechfit.derive import derive_rate_law
    from mechfit.errors import MechfitError

    if model.name == "full":
        return []
    try:
        law = derive_rate_law(model)
    except MechfitError:  # no closed form (a numerical steady state): nothing lumped
        return []
    return lumped_parameters(law, posterior_values(idata))


def check_output_folder(folder: str | Path) -> None:
    """Raise :class:`ResultExistsError` when ``folder`` already holds fit results."""
    folder = Path(folder)
    if folder.exists() and not folder.is_dir():
        raise ResultExistsError(f"{folder}: exists and is not a folder")
    found = [n for n in RESULT_FILES if (folder / n).exists()]
    if found:
        raise ResultExistsError(f"{folder}: holds results already ({', '.join(found)}); "
                                "choose another --out folder or remove the old results")


def fit_study(
    study,
    model,
    *,
    starts: int = 32,
    local: int = 4,
    settings: SamplingSettings | None = None,
    progress=False,
    seed: int = 0,
    tolerance: float = FIT_TOLERANCE,
) -> StudyFit:
    """Fit a kinetic model variant to all runs of a study.

    Parameters
    ----------
    study
        A :class:`mechfit.study.Study`.
    model
        A :class:`mechfit.derive.model.KineticModel` (e.g. ``derive_variant(mech, "full")``).
    starts, local
        Size of the start design and number of local searches (see
        :func:`~mechfit.infer.optimize.maximum_likelihood`).
    settings
        Sampler settings; the default runs until the convergence rules hold or 20000 steps.
    progress
        ``True`` for a progress bar on standard error, or a callable for the events.
    seed
        Seed of the start design and the sampler.
    tolerance
        Relative tolerance of the least-squares searches (1e-8: the optimum's
        log-likelihood is then good to about 1e-4, far below what the criteria resolve).
    """
    problem = study_problem(study, model)
    lik = Likelihood(problem.model, problem.observations, problem.parameters, problem.errors)
    fit = maximum_likelihood(lik, starts=starts, local=local, seed=seed, tolerance=tolerance,
                             max_evaluations=FIT_EVALUATIONS)
    settings = settings or SamplingSettings(seed=seed)
    post = sample_posterior(lik, fit.u, fit.covariance_free, settings, progress=progress)
    idata = inference_data(post, fit=fit, seed=seed)
    ident = analyse_identifiability(fit, post)
    ident.lumped = _lumped(model, idata)
    summaries = summarise_parameters(idata)
    derived = derived_quantities(idata, mechanism=model.mechanism, laws=problem.laws,
                                 temperatures=study.temperatures)
    labels = {"mechanism": model.mechanism.name, "variant": model.name,
              "study": str(study.path)}
    idata.posterior.attrs.update({"mechanism": model.mechanism.name, "variant": model.name,
                                  "study": str(study.path)})
    half = half_conversion_times(problem, fit.u, post.flat(), mechanism=model.mechanism)
    return StudyFit(problem, lik, fit, post, idata, ident, summaries, derived, labels, half)
