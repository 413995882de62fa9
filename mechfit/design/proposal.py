"""Proposing the next run: design values -> planned run -> criterion -> search -> summary.

Two modes. ``"discriminate"``: the Box–Hill expected discrimination
(:func:`mechfit.design.criteria.box_hill`) between the candidates' posterior predictive
distributions of the planned measurements, Monte Carlo over posterior draws, weighted by
the candidates' renormalised stacking weights. ``"precision"``: the D-optimal gain
(:func:`mechfit.design.criteria.d_optimal`) for the best candidate, the increase of
log det of the information on its free parameters (log scale for positive ones) over the
information the posterior already holds (its inverse covariance); the Jacobian is a
forward difference at the posterior median.

Design values are in the study's units (species: initial concentration; ``temperature``;
``duration``: run length; ``points``: number of samples). Values not varied take the
study's typical value: the median over its runs of each species' initial concentration
and of the temperature, the longest run's length and the median number of sample times.
The samples are evenly spaced, ``duration/points, ..., duration``.

Several runs (``runs > 1``): in precision mode they are chosen greedily (each next run
maximises the gain of the set). The Box–Hill value of a set of runs is the sum over its
runs (the posterior is not updated between planned runs), so in discrimination mode the
next runs are the best designs that differ from those already chosen by at least 0.15
in the unit cube of the design variables.

Examples
--------
>>> settings = DesignSettings()
>>> settings.mode, settings.draws
('discriminate', 100)
"""

from __future__ import annotations

import time as clock
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np

from mechfit.design.criteria import box_hill, d_optimal
from mechfit.design.predict import (
    DesignInputError,
    FittedCandidate,
    PlannedRun,
    free_coordinates,
    noise_levels,
    planned_likelihood,
    predict_runs,
    split_predictions,
)
from mechfit.design.search import Proposal, greedy_runs, search
from mechfit.design.space import DesignSpace
from mechfit.study.units import canonical_factor, to_canonical

MODES = ("discriminate", "precision")
CAUTION = ("A proposed run may go beyond the conditions studied (higher temperature or "
           "concentration): check it for thermal and pressure hazards under the site's "
           "process-safety practice and local codes before running it.")


@dataclass(frozen=True)
class DesignSettings:
    """How to search: ``mode``, ``runs`` to propose, ``draws`` per candidate, search budget."""

    mode: str = "discriminate"
    runs: int = 1
    draws: int = 100
    n_initial: int = 64
    n_refine: int = 3
    max_evaluations: int = 40
    top: int = 3
    seed: int = 0

    def __post_init__(self) -> None:
        if self.mode not in MODES:
            raise DesignInputError(f"--mode {self.mode!r}: expected one of {', '.join(MODES)}")
        if self.runs < 1 or self.draws < 2:
            raise DesignInputError("--runs must be >= 1 and --draws >= 2")


@dataclass
class DesignProblem:
    """A study, its fitted candidates, a design space and the observables to measure."""

    study: object
    candidates: list[FittedCandidate]
    space: DesignSpace
    observables: tuple[str, ...] = ()
    noise: Mapping[str, float] = field(default_factory=dict)

    def __post_init__(self) -> None:
        study = self.study
        species = set().union(*(c.model.mechanism.species for c in self.candidates))
        for v in self.space.variables:
            if v.name not in ("temperature", "duration", "points") and v.name not in species:
                raise DesignInputError(
                    f"--vary {v.name}: not a species of the candidates nor one of "
                    "temperature, duration, points (species: " + ", ".join(sorted(species))
                    + ")")
            smallest = min(v.choices) if v.discrete else v.low
            if v.name == "duration" and not smallest > 0:
                raise DesignInputError(f"--vary duration: the run length must be > 0, got "
                                       f"{smallest:g}")
            if v.name == "temperature" and not to_canonical(
                    smallest, study.units.get("temperature", "K"), "temperature") > 0:
                raise DesignInputError(f"--vary temperature: {smallest:g} "
                                       f"{study.units.get('temperature', 'K')} is below "
                                       "absolute zero")
        if not self.observables:
            self.observables = tuple(o for o in study.observables
                                     if any(o in r.series for r in study.runs))
        unknown = [o for o in self.observables if o not in study.observables]
        if unknown:
            raise DesignInputError("--measure: unknown observable " + ", ".join(unknown)
                                   + " (the study has " + ", ".join(study.observables) + ")")
        units = study.units
        self.concentration_factor = canonical_factor(units.get("concentration", "mol/L"))[0]
        self.time_factor = canonical_factor(units.get("time", "s"))[0]
        self.temperature_unit = units.get("temperature", "K")
        runs = study.runs
        all_species = sorted({s for r in runs for s in r.initial} & species)
        self.base_initial = {s: float(np.median([r.initial.get(s, 0.0) for r in runs]))
                             for s in all_species}
        self.base_temperature = float(np.median([r.temperature for r in runs]))
        self.base_duration = float(max(r.times[-1] for r in runs))
        self.base_points = int(np.median([len(r.times) for r in runs]))
        self.sigma = {}
        for o in self.observables:
            self.sigma[o] = noise_levels(study, self.candidates[0], [o], self.noise)[o]

    # ---- design values (study units) -> planned run (canonical) -----------------------
    def planned_run(self, values: Mapping[str, float]) -> PlannedRun:
        initial = dict(self.base_initial)
        temperature = self.base_temperature
        duration, points = self.base_duration, self.base_points
        for name, value in values.items():
            if name == "temperature":
                temperature = float(to_canonical(value, self.temperature_unit, "temperature"))
            elif name == "duration":
                duration = value * self.time_factor
            elif name == "points":
                points = int(round(value))
            else:
                initial[name] = value * self.concentration_factor
        times = tuple(np.linspace(duration / points, duration, points))
        return PlannedRun(initial, temperature, times, self.observables)

    def point_noise(self, curves: Sequence[Mapping[str, np.ndarray]]) -> np.ndarray:
        """Standard deviation of every planned point (absolute and relative parts)."""
        out = []
        for name in self.observables:
            a, rel = self.sigma[name]
            typical = np.nanmean(np.vstack([np.nanmedian(c[name], axis=0) for c in curves]),
                                 axis=0)
            out.append(np.sqrt(a**2 + (rel * typical) ** 2))
        return np.concatenate(out)

    # ---- criteria ---------------------------------------------------------------------
    def predictions(self, runs: Sequence[PlannedRun]) -> list[list[dict[str, np.ndarray]]]:
        """Per candidate, per run: observable -> (S, T)."""
        return [predict_runs(self.study, c, runs) for c in self.candidates]

    def discrimination(self, designs: Sequence[Mapping[str, float]]) -> float:
        """Box–Hill expected discrimination of a set of runs (sum over the runs)."""
        return float(np.sum(self.discrimination_each(designs)))

    def discrimination_each(self, designs: Sequence[Mapping[str, float]]) -> np.ndarray:
        """Box–Hill value of each design as a single run, all predicted in one batch."""
        runs = [self.planned_run(d) for d in designs]
        per_candidate = self.predictions(runs)
        weights = [c.weight for c in self.candidates]
        out = np.empty(len(runs))
        for r in range(len(runs)):
            curves = [p[r] for p in per_candidate]
            stacked = []
            for p in curves:
                block = np.hstack([p[o] for o in self.observables])
                stacked.append(block[np.all(np.isfinite(block), axis=1)])
            if min(b.shape[0] for b in stacked) < 2:
                out[r] = -np.inf
                continue
            out[r] = box_hill(stacked, self.point_noise(curves), weights)
        return out

    def precision(self, designs: Sequence[Mapping[str, float]], step: float = 1e-4) -> float:
        """D-optimal gain for the best candidate: log det(info after) - log det(info now)."""
        best = self.candidates[0]
        runs = [self.planned_run(d) for d in designs]
        lik = planned_likelihood(self.study, best, runs)
        parameters = lik.parameters
        keep = [j for j, p in enumerate(parameters.free_parameters) if p.kind != "noise"]
        u_draws = free_coordinates(parameters, best.draws)[:, keep]
        u_draws = u_draws[np.all(np.isfinite(u_draws), axis=1)]
        u0 = np.median(free_coordinates(parameters, best.draws), axis=0)
        rows = np.tile(u0, (len(keep) + 1, 1))
        for i, j in enumerate(keep):
            rows[i + 1, j] += step
        mu = lik.predict(parameters.natural(rows))
        if not np.all(np.isfinite(mu)):
            return -np.inf
        jacobian = ((mu[1:] - mu[0]) / step).T
        # points are ordered run by run, observable by observable, as the curves
        curves = split_predictions(lik, runs, mu[:1])
        noise = np.concatenate([self.point_noise([c]) for c in curves])
        prior = np.linalg.pinv(np.atleast_2d(np.cov(u_draws, rowvar=False)))
        _, before = np.linalg.slogdet(prior)
        return float(d_optimal(jacobian, noise, prior) - before)

    def criterion(self, mode: str):
        return self.discrimination if mode == "discriminate" else self.precision


@dataclass
class DesignResult:
    """The proposed runs and the top designs of the first search, with predicted curves."""

    problem: DesignProblem
    settings: DesignSettings
    proposals: list[Proposal]
    alternatives: list[Proposal]
    seconds: float

    def curve_summary(self, values: Mapping[str, float], times_shown: int = 5) -> list[dict]:
        """Each candidate's median and 90 % band of every observable at a few times."""
        p = self.problem
        run = p.planned_run(values)
        index = np.unique(np.linspace(0, len(run.times) - 1, times_shown).astype(int))
        out = []
        for c, curves in zip(p.candidates, p.predictions([run]), strict=True):
            entry = {"candidate": c.key, "observables": {}}
            for name in p.observables:
                factor = canonical_factor(p.study.observables[name].unit)[0]
                y = curves[0][name][:, index] / factor
                entry["observables"][name] = {
                    "unit": p.study.observables[name].unit,
                    "time": [float(run.times[i] / p.time_factor) for i in index],
                    "median": np.nanmedian(y, axis=0).tolist(),
                    "low": np.nanquantile(y, 0.05, axis=0).tolist(),
                    "high": np.nanquantile(y, 0.95, axis=0).tolist()}
            out.append(entry)
        return out

    def sentences(self) -> list[str]:
        """Plain sentences for the report's next-experiments section."""
        p = self.problem
        names = ", ".join(c.key for c in p.candidates)
        out = []
        for i, prop in enumerate(self.proposals, start=1):
            conditions = describe(prop.values, p.study.units)
            if self.settings.mode == "discriminate":
                out.append(f"Next run {i}: {conditions}; expected Box–Hill discrimination "
                           f"{prop.score:.3g} between {names} (measure "
                           + ", ".join(p.observables) + ").")
            else:
                out.append(f"Next run {i}: {conditions}; expected D-optimal gain "
                           f"{prop.score:.3g} (log det of the information) for the "
                           f"parameters of {p.candidates[0].key}.")
        out.append(CAUTION)
        return out

    def summary(self) -> dict:
        """The ``mechfit design --json`` object (keys in docs/design.md)."""
        p = self.problem
        return {
            "mode": self.settings.mode,
            "criterion": ("box_hill" if self.settings.mode == "discriminate"
                          else "d_optimal_gain"),
            "candidates": [{"name": c.name, "variant": c.variant, "folder": c.folder,
                            "weight": c.weight, "draws": c.n_draws} for c in p.candidates],
            "space": [{"name": v.name, "low": v.low, "high": v.high,
                       "choices": list(v.choices) or None, "log": v.log}
                      for v in p.space.variables],
            "fixed": {"initial": {s: v / p.concentration_factor
                                  for s, v in p.base_initial.items()},
                      "temperature": describe_temperature(p.base_temperature,
                                                          p.temperature_unit),
                      "duration": p.base_duration / p.time_factor,
                      "points": p.base_points},
            "units": dict(p.study.units),
            "observables": {o: {"sigma": p.sigma[o][0] /
                                canonical_factor(p.study.observables[o].unit)[0],
                                "relative": p.sigma[o][1],
                                "unit": p.study.observables[o].unit}
                            for o in p.observables},
            "proposals": [{"values": prop.values, "score": prop.score,
                           "curves": self.curve_summary(prop.values)}
                          for prop in self.proposals],
            "top_designs": [{"values": a.values, "score": a.score} for a in self.alternatives],
            "seconds": self.seconds,
            "design_suggestions": self.sentences(),
        }


def describe_temperature(kelvin: float, unit: str) -> float:
    """A canonical temperature (K) in ``unit``."""
    zero = float(to_canonical(0.0, unit, "temperature"))
    one = float(to_canonical(1.0, unit, "temperature"))
    return (kelvin - zero) / (one - zero)


def describe(values: Mapping[str, float], units: Mapping[str, str]) -> str:
    """``Sub = 120 mM, temperature = 35 degC`` for design values in study units."""
    parts = []
    for name, value in values.items():
        unit = {"temperature": units.get("temperature", "K"),
                "duration": units.get("time", "s"), "points": ""}.get(
                    name, units.get("concentration", "mol/L"))
        text = f"{int(round(value))}" if name == "points" else f"{value:.3g}"
        parts.append(f"{name} = {text} {unit}".rstrip())
    return ", ".join(parts)


def propose(problem: DesignProblem, settings: DesignSettings = DesignSettings()  # noqa: B008
            ) -> DesignResult:
    """Search the design space and return the proposed runs (best first)."""
    start = clock.perf_counter()
    options = {"n_initial": settings.n_initial, "n_refine": settings.n_refine,
               "max_evaluations": settings.max_evaluations, "seed": settings.seed}
    criterion = problem.criterion(settings.mode)
    batch = problem.discrimination_each if settings.mode == "discriminate" else None
    first = search(lambda d: criterion([d]), problem.space, batch=batch, **options)
    if settings.mode == "precision" and settings.runs > 1:
        chosen = greedy_runs(criterion, problem.space, settings.runs, **options)
    else:
        chosen = [first[0]]
        for prop in first[1:]:
            if len(chosen) >= settings.runs:
                break
            if all(np.max(np.abs(np.subtract(prop.u, c.u))) >= 0.15 for c in chosen):
                chosen.append(prop)
    return DesignResult(problem, settings, chosen, first[:settings.top],
                        clock.perf_counter() - start)
