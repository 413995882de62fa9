"""Fit one candidate (mechanism x variant) to a study and keep what ranking and report need.

:func:`evaluate_candidate` runs :func:`mechfit.infer.fit.fit_study` and reduces the fit
to a picklable :class:`CandidateOutcome` (the posterior as InferenceData, the numbers
the criteria need, standardised residuals, predictions for the figures), so candidates
can be fitted in worker processes and ranked in the parent.
"""

from __future__ import annotations

import time
import traceback
from dataclasses import dataclass, field

import numpy as np

from mechfit.derive import derive_variant
from mechfit.errors import MechfitError
from mechfit.infer.fit import StudyFit, fit_study
from mechfit.infer.sampling import SamplingSettings
from mechfit.mechanism import Mechanism, parse_mechanism

#: posterior draws used for the predictive bands of the figures
BAND_DRAWS = 200
#: largest tolerated deviation of a reduced variant from the full mechanism, as a
#: fraction of each species' largest concentration in a run (a mechfit convention: a few
#: per cent is where the steady-state literature calls an approximation good, e.g.
#: Segel and Slemrod, SIAM Rev. 31 (1989) 446)
APPROXIMATION_TOLERANCE = 0.05


@dataclass(frozen=True)
class FitSettings:
    """How hard each candidate is fitted (multi-start search and sampling budget)."""

    starts: int = 16
    local: int = 3
    walkers: int | None = None
    min_steps: int = 300
    chunk: int = 200
    max_steps: int = 10000
    seed: int = 0

    def sampling(self) -> SamplingSettings:
        return SamplingSettings(walkers=self.walkers,
                                min_steps=min(self.min_steps, self.max_steps),
                                chunk=min(self.chunk, self.max_steps),
                                max_steps=self.max_steps, seed=self.seed)

    def as_dict(self) -> dict:
        return dict(self.__dict__)


@dataclass
class SeriesOutcome:
    """Data, best fit and predictive draws of one observable in one run (time order)."""

    run: str
    observable: str
    time: np.ndarray
    observed: np.ndarray
    fitted: np.ndarray
    draws: np.ndarray
    residuals: np.ndarray  # standardised at the maximum-likelihood estimate
    points: np.ndarray  # indices of these points in the study's flat data vector

    def as_dict(self) -> dict:
        """JSON-safe form (stored in ``fit.json`` under ``series``)."""
        return {"run": self.run, "observable": self.observable,
                "time": self.time.tolist(), "observed": self.observed.tolist(),
                "fitted": self.fitted.tolist(), "residuals": self.residuals.tolist(),
                "points": self.points.tolist()}


@dataclass
class CandidateOutcome:
    """Everything kept from fitting one candidate (picklable)."""

    name: str
    variant: str
    mechanism_text: str
    status: str
    reason: str = ""
    seconds: float = 0.0
    idata: object = field(default=None, repr=False)
    summary: dict = field(default_factory=dict, repr=False)
    log_likelihood_max: float = float("nan")
    n_parameters: int = 0
    n_data: int = 0
    point_runs: list[str] = field(default_factory=list, repr=False)
    series: list[SeriesOutcome] = field(default_factory=list, repr=False)
    identifiability: dict = field(default_factory=dict, repr=False)
    assumptions: tuple[str, ...] = ()
    approximation: dict = field(default_factory=dict)

    @property
    def key(self) -> str:
        return f"{self.name} [{self.variant}]"

    @property
    def ok(self) -> bool:
        return self.status == "ok"

    def mechanism(self) -> Mechanism:
        return parse_mechanism(self.mechanism_text, name=self.name)

    def residuals(self) -> dict[str, np.ndarray]:
        """Series label ``run/observable`` -> standardised residuals in time order."""
        return {f"{s.run}/{s.observable}": s.residuals for s in self.series}


def _series(fit: StudyFit) -> list[SeriesOutcome]:
    lik = fit.likelihood
    obs = lik.observations
    x_mle = lik.parameters.natural(np.atleast_2d(fit.maximum.u))
    mu = lik.predict(x_mle)[0]
    sd = lik.standard_deviation(x_mle, mu[None, :])[0]
    draws = fit.posterior.draws.reshape(-1, fit.posterior.draws.shape[-1])
    rng = np.random.default_rng(0)
    pick = rng.choice(draws.shape[0], size=min(BAND_DRAWS, draws.shape[0]), replace=False)
    band = lik.predict(lik.parameters.natural(draws[pick]))
    band = band[np.all(np.isfinite(band), axis=1)]
    out = []
    for r, run in enumerate(obs.run_names):
        for o, observable in enumerate(obs.observable_names):
            mask = (obs.run == r) & (obs.observable == o)
            if not mask.any():
                continue
            idx = np.flatnonzero(mask)
            idx = idx[np.argsort(obs.time[idx], kind="stable")]
            out.append(SeriesOutcome(
                run=run, observable=observable, time=obs.time[idx],
                observed=obs.values[idx], fitted=mu[idx], draws=band[:, idx],
                residuals=(obs.values[idx] - mu[idx]) / sd[idx], points=idx))
    return out


def approximation_deviation(study, fit: StudyFit, model) -> dict:
    """How far a reduced variant strays from its full mechanism at the best fit.

    Every run is simulated with both models from its own initial concentrations, with
    the rate constants at its temperature, up to its last measurement
    (:func:`mechfit.simulate.deviation_from_full`). Returns ``{}`` for ``full``, else
    ``deviation`` (largest over runs), ``run``, ``species`` and ``tolerance``.
    """
    from mechfit.simulate import deviation_from_full

    if model.name == "full":
        return {}
    values = fit.maximum.values
    laws = fit.problem.laws
    worst = {"deviation": 0.0, "run": "", "species": "",
             "tolerance": APPROXIMATION_TOLERANCE}
    for run in study.runs:
        k = dict(model.mechanism.fixed)
        for c in model.mechanism.parameters:
            if c in laws:
                law = laws[c]
                k[c] = float(np.asarray(law.rate_constant(
                    {q: values[q] for q in law.parameter_names}, run.temperature)))
            elif c in values:
                k[c] = float(values[c])
        initial = dict(run.initial)
        if run.initial_scale is not None:
            for sp in run.initial_scale.species:
                initial[sp] = initial.get(sp, 0.0) * values[run.initial_scale.parameter]
        deviation, species = deviation_from_full(model, k, initial, float(run.times.max()))
        if not deviation <= worst["deviation"]:
            worst.update(deviation=float(deviation), run=run.name, species=species)
    return worst


def evaluate_candidate(study, mechanism: Mechanism, variant: str,
                       settings: FitSettings = FitSettings(),  # noqa: B008
                       progress=False) -> CandidateOutcome:
    """Fit ``mechanism`` in ``variant`` to ``study``; failures are returned, not raised.

    Returns
    -------
    CandidateOutcome
        ``status`` ``"ok"``, or ``"failed"`` with the ``reason`` (a candidate that cannot
        be fitted never stops a ranking).
    """
    start = time.perf_counter()
    base = dict(name=mechanism.name, variant=variant, mechanism_text=mechanism.to_text())
    try:
        model = derive_variant(mechanism, variant)
        fit = fit_study(study, model, starts=settings.starts, local=settings.local,
                        settings=settings.sampling(), progress=progress, seed=settings.seed)
        approximation = approximation_deviation(study, fit, model)
    except MechfitError as exc:
        return CandidateOutcome(**base, status="failed", reason=str(exc).splitlines()[0],
                                seconds=time.perf_counter() - start)
    except Exception as exc:  # a numerical breakdown in one candidate must not stop others
        return CandidateOutcome(**base, status="failed",
                                reason=f"{type(exc).__name__}: {exc}; "
                                       + traceback.format_exc(limit=2).splitlines()[-1],
                                seconds=time.perf_counter() - start)
    obs = fit.likelihood.observations
    summary = fit.summary()
    series = _series(fit)
    summary.update({"name": mechanism.name, "variant": variant,
                    "series": [x.as_dict() for x in series]})
    if approximation:
        summary["approximation"] = approximation
    return CandidateOutcome(
        **base, status="ok", seconds=time.perf_counter() - start, idata=fit.idata,
        summary=summary, log_likelihood_max=float(fit.maximum.log_likelihood_max),
        n_parameters=len(fit.likelihood.parameters.free_names), n_data=int(obs.n),
        point_runs=[obs.run_names[i] for i in obs.run], series=series,
        identifiability=summary.get("identifiability", {}),
        assumptions=tuple(model.assumptions), approximation=approximation)


def evaluate_from_text(study_path: str, mechanism_text: str, name: str, variant: str,
                       settings: FitSettings) -> CandidateOutcome:
    """Worker entry point: everything passed as plain, picklable values."""
    from mechfit.study import load_study

    study = load_study(study_path)
    return evaluate_candidate(study, parse_mechanism(mechanism_text, name=name), variant,
                              settings)
