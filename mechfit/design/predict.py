"""Predicted curves of fitted candidates for a planned run, over their posterior draws.

A planned run (:class:`PlannedRun`: initial concentrations, temperature, sample times, the
observables to measure) is turned into a one-run study with the same observables,
temperature laws and priors as the fitted study (placeholder data values, never used), and
each candidate's noise-free predictions come from the study's own model function
(:func:`mechfit.infer.study_model.study_problem`: temperature laws, batched simulator,
observable expressions), evaluated at ``S`` posterior draws mapped by name onto the
parameter vector. Several planned runs are predicted in one batched simulator call.

Examples
--------
>>> run = PlannedRun({"A": 1.0}, 298.15, (0.0, 10.0, 20.0), ("A",))
>>> run.n_points
3
"""

from __future__ import annotations

import dataclasses
import json
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from mechfit.errors import MechfitError
from mechfit.infer.likelihood import Likelihood, noise_parameter_names
from mechfit.infer.study_model import study_problem
from mechfit.infer.summaries import posterior_values
from mechfit.study.study import Run, Series, frozen_array


class DesignInputError(MechfitError):
    """A results folder or a design request that cannot be used."""


@dataclass(frozen=True)
class PlannedRun:
    """One run that could be done next, in canonical units (mol/L, K, s).

    ``initial`` maps species to initial concentrations (others start at 0), ``times``
    are the sample times and ``observables`` the names measured at every time.
    """

    initial: Mapping[str, float]
    temperature: float
    times: tuple[float, ...]
    observables: tuple[str, ...]

    @property
    def n_points(self) -> int:
        """Measured points of the run (times x observables)."""
        return len(self.times) * len(self.observables)


def planned_study(study, runs: Sequence[PlannedRun]):
    """A copy of ``study`` whose runs are the planned ones (placeholder data of zeros)."""
    out = []
    for r, plan in enumerate(runs):
        times = np.asarray(plan.times, dtype=float)
        n = len(times)
        series = {name: Series(name, frozen_array(times), frozen_array(np.zeros(n)), None,
                               frozen_array(np.zeros(n), int),
                               frozen_array(np.arange(n), int),
                               frozen_array(np.zeros(n), int), "planned")
                  for name in plan.observables}
        out.append(Run(f"planned{r + 1}", float(plan.temperature), dict(plan.initial),
                       frozen_array(times), series, source="planned"))
    return dataclasses.replace(study, runs=tuple(out))


@dataclass
class FittedCandidate:
    """A fitted candidate read from a results folder: model, posterior draws, weight."""

    name: str
    variant: str
    folder: str
    weight: float
    model: object
    draws: dict[str, np.ndarray]
    simulator: object = None

    @property
    def key(self) -> str:
        return f"{self.name} [{self.variant}]"

    @property
    def n_draws(self) -> int:
        return next(iter(self.draws.values())).size if self.draws else 1

    def median(self) -> dict[str, float]:
        """Posterior median of every parameter."""
        return {n: float(np.median(v)) for n, v in self.draws.items()}


def thin_draws(values: Mapping[str, np.ndarray], count: int) -> dict[str, np.ndarray]:
    """``count`` evenly spaced draws of every parameter (flattened over chains)."""
    flat = {n: np.asarray(v, dtype=float).reshape(-1) for n, v in values.items()}
    total = next(iter(flat.values())).size
    take = np.linspace(0, total - 1, min(total, max(1, count))).astype(int)
    return {n: v[take] for n, v in flat.items()}


def planned_likelihood(study, candidate: FittedCandidate, runs: Sequence[PlannedRun]):
    """The :class:`~mechfit.infer.likelihood.Likelihood` of the planned runs (data unused)."""
    one = planned_study(study, runs)
    if candidate.simulator is None:
        from mechfit.simulate import Simulator
        candidate.simulator = Simulator(candidate.model, rtol=1e-8)
    problem = study_problem(one, candidate.model, simulator=candidate.simulator,
                            sensitivities=False)
    return Likelihood(problem.model, problem.observations, problem.parameters, problem.errors)


def split_predictions(lik, runs: Sequence[PlannedRun], mu: np.ndarray
                      ) -> list[dict[str, np.ndarray]]:
    """Predictions ``(S, n)`` of :func:`planned_likelihood` as run -> observable -> (S, T)."""
    obs = lik.observations
    out = []
    for r, plan in enumerate(runs):
        out.append({name: mu[:, (obs.run == r)
                             & (obs.observable == obs.observable_names.index(name))]
                    for name in plan.observables})
    return out


def predict_runs(study, candidate: FittedCandidate, runs: Sequence[PlannedRun],
                 draws: Mapping[str, np.ndarray] | None = None) -> list[dict[str, np.ndarray]]:
    """Noise-free predictions of each planned run for every draw of ``candidate``.

    Returns one dict per run: observable -> ``(S, T)`` array (NaN where a solve failed).
    ``draws`` (name -> ``(S,)``) replaces the candidate's posterior draws when given; tied
    parameters are recomputed from the free ones.
    """
    lik = planned_likelihood(study, candidate, runs)
    draws = candidate.draws if draws is None else draws
    mu = lik.predict(lik.parameters.natural(free_coordinates(lik.parameters, draws)))
    return split_predictions(lik, runs, mu)


def free_coordinates(parameters, draws: Mapping[str, np.ndarray]) -> np.ndarray:
    """Draws (name -> ``(S,)``) as free coordinates ``u`` ``(S, q)`` (log for log parameters).

    Tied parameters are recomputed from these by ``parameters.natural(u)``; a free parameter
    without draws keeps its default value.
    """
    count = next(iter(draws.values())).size if draws else 1
    columns = []
    for p in parameters.free_parameters:
        v = np.asarray(draws[p.name], float) if p.name in draws else np.full(count, p.value)
        with np.errstate(divide="ignore", invalid="ignore"):
            columns.append(np.log(v) if p.transform == "log" else v)
    return np.column_stack(columns) if columns else np.zeros((count, 0))


def noise_levels(study, candidate: FittedCandidate, observables: Sequence[str],
                 given: Mapping[str, float] | None = None) -> dict[str, tuple[float, float]]:
    """Absolute and relative measurement noise of each observable (canonical units).

    ``given`` (observable -> absolute standard deviation) wins; then a known noise level of
    the study; then the candidate's posterior median of the fitted level.
    """
    given = dict(given or {})
    out = {}
    for name in observables:
        a_name, r_name = noise_parameter_names(name)
        relative = float(np.median(candidate.draws[r_name])) if r_name in candidate.draws \
            else 0.0
        if name in given:
            out[name] = (float(given[name]), 0.0)
            continue
        o = study.observables[name]
        if o.noise.kind == "known" and o.noise.sigma:
            out[name] = (float(o.noise.sigma), relative)
        elif a_name in candidate.draws:
            out[name] = (float(np.median(candidate.draws[a_name])), relative)
        else:
            raise DesignInputError(f"observable {name}: no noise level is known or fitted; "
                                   f"give one with --measure {name}=SIGMA")
    return out


def load_candidates(results: str | Path, *, count: int | None = None,
                    draws: int = 100, weighting: str = "stacking") -> list[FittedCandidate]:
    """The leading candidates of a results folder written by ``mechfit rank``.

    Parameters
    ----------
    results
        The folder with ``ranking.json`` and ``candidates/<folder>/``.
    count
        Take the first ``count`` candidates that fitted; default: the ranking's leading
        set (the best and those not distinguishable from it), at least two when the
        ranking has two.
    draws
        Posterior draws kept per candidate.

    Weights are the stacking weights renormalised over the chosen candidates; equal
    weights when fewer than two of them have a positive stacking weight (a design must
    have at least two candidates to tell apart), or with ``weighting="equal"``.
    """
    import arviz

    from mechfit.derive import derive_variant
    from mechfit.mechanism import load_mechanism

    folder = Path(results)
    path = folder / "ranking.json"
    if not path.is_file():
        raise DesignInputError(f"{folder}: no ranking.json; give the folder written by "
                               "mechfit rank --out")
    try:
        ranking = json.loads(path.read_text(encoding="utf-8"))
        listed = [c for c in ranking["candidates"] if c.get("folder")]
    except (ValueError, KeyError, TypeError) as error:
        raise DesignInputError(f"{path}: not a ranking written by mechfit rank "
                               f"({error})") from None
    usable = [c for c in listed if (folder / "candidates" / c["folder"] / "posterior.nc")
              .is_file()]
    if weighting not in ("stacking", "equal"):
        raise DesignInputError(f"weights {weighting!r}: expected 'stacking' or 'equal'")
    if count is None:
        leading = {(c.get("name"), c.get("variant")) for c in ranking.get("leading_set") or []
                   if isinstance(c, dict)}
        chosen = [c for c in usable if (c["name"], c["variant"]) in leading]
        if len(chosen) < 2:
            chosen = usable[:max(2, len(chosen))]
    else:
        if count < 1:
            raise DesignInputError(f"--candidates {count}: expected a whole number >= 1")
        chosen = usable[:count]
    if not chosen:
        raise DesignInputError(f"{folder}: no fitted candidate with a posterior.nc")
    weights = np.array([float(c.get("weight") or 0.0) for c in chosen])
    if weighting == "equal" or np.count_nonzero(weights > 0) < min(2, len(chosen)):
        weights = np.ones(len(chosen))
    weights = weights / weights.sum()
    out = []
    for c, w in zip(chosen, weights, strict=True):
        sub = folder / "candidates" / c["folder"]
        mech = load_mechanism(sub / "mechanism.mech")
        model = derive_variant(mech, c["variant"])
        idata = arviz.from_netcdf(sub / "posterior.nc")
        out.append(FittedCandidate(c["name"], c["variant"], c["folder"], float(w), model,
                                   thin_draws(posterior_values(idata), draws)))
    return out
