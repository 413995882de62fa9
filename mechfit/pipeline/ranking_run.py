"""Rank candidate mechanisms against one study: fit each, compare, write the results.

:func:`rank_study` is a thin runner around :func:`rank_study_steps`, a generator of
progress events (long work as a generator, so a progress bar or a test can hook in).
Candidates are fitted in worker processes when ``workers > 1``; the ranking itself
(:func:`mechfit.compare.rank_candidates`) and exact leave-one-run-out refits run here.
"""

from __future__ import annotations

import contextlib
import dataclasses
import json
import multiprocessing
import os
from collections.abc import Iterator, Sequence
from concurrent.futures import ProcessPoolExecutor, as_completed
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from mechfit.compare import Candidate, Ranking, rank_candidates
from mechfit.compare.elpd import PARETO_K_UNRELIABLE
from mechfit.compare.run_loo import log_predictive_density
from mechfit.derive import derive_variant, derive_variants, split_variant_list
from mechfit.errors import MechfitError
from mechfit.infer.fit import FIT_EVALUATIONS, FIT_TOLERANCE
from mechfit.infer.inference_data import write_inference_data
from mechfit.infer.likelihood import Likelihood
from mechfit.infer.optimize import maximum_likelihood
from mechfit.infer.sampling import sample_posterior
from mechfit.infer.study_model import study_problem
from mechfit.mechanism import Mechanism
from mechfit.pipeline.evaluate import (
    CandidateOutcome,
    FitSettings,
    evaluate_candidate,
    evaluate_from_text,
)
from mechfit.plain_json import json_default

RESULT_FILES = ("ranking.json", "ranking.md")


class RankingFailure(MechfitError):
    """No candidate could be fitted, so there is nothing to rank."""

    exit_code = 1


@dataclass(frozen=True)
class RankSettings:
    """Settings of a ranking: variants per mechanism, fitting effort, parallelism.

    ``exact_refits``: for the candidates in the leading set after a first ranking, every
    run whose leave-one-run-out Pareto k exceeds 0.7 is refitted without that run (in
    the worker pool), and the ranking is made again with those exact values.
    """

    variants: str = "full"
    fit: FitSettings = field(default_factory=FitSettings)
    workers: int = 1
    exact_refits: bool = True

    def variant_names(self, mechanism: Mechanism) -> list[str]:
        """The variants to fit: ``"full"``, ``"all"`` (every derivable variant) or a list
        such as ``"full,qssa:all"``."""
        if self.variants == "all":
            # variants without a closed form need a numerical steady state, which the
            # simulator does not integrate: they are left out (and said so by derive)
            return [m.name for m in derive_variants(mechanism)
                    if not m.numerical_steady_state]
        names = split_variant_list(self.variants)
        for name in names:
            derive_variant(mechanism, name)  # a clear error for a bad name, before fitting
        return names


@dataclass
class Event:
    """A progress event: ``kind`` is ``"start"``, ``"fitted"``, ``"refit"`` or ``"ranked"``."""

    kind: str
    key: str = ""
    done: int = 0
    total: int = 0
    seconds: float = 0.0
    status: str = ""


@dataclass
class StudyRanking:
    """The outcome of a ranking: every candidate's fit and the :class:`Ranking`."""

    study: object
    outcomes: list[CandidateOutcome]
    ranking: Ranking | None
    settings: RankSettings

    @property
    def failed(self) -> list[CandidateOutcome]:
        return [o for o in self.outcomes if not o.ok]

    def outcome(self, name: str, variant: str) -> CandidateOutcome:
        for o in self.outcomes:
            if o.name == name and o.variant == variant:
                return o
        raise KeyError((name, variant))

    def summary(self) -> dict:
        """The JSON object of ``mechfit rank --json`` (``candidates`` best first)."""
        from mechfit import __version__

        out = self.ranking.summary() if self.ranking is not None else {"candidates": []}
        out = dict(out)
        for c in out["candidates"]:
            c["folder"] = _folder_name(c["name"], c["variant"])
        out["study"] = str(getattr(self.study, "path", ""))
        out["study_info"] = study_info(self.study)
        out["version"] = __version__
        out["failed"] = [{"name": o.name, "variant": o.variant, "reason": o.reason}
                         for o in self.failed]
        out["settings"] = {"variants": self.settings.variants, **self.settings.fit.as_dict(),
                           "exact_refits": self.settings.exact_refits}
        return out

    def table(self) -> str:
        """The ranking table as plain text (what ``mechfit rank`` prints)."""
        text = self.ranking.report() if self.ranking is not None else "no candidate ranked"
        if self.failed:
            text += "\n\nfailed to fit:\n" + "\n".join(
                f"  {o.name} [{o.variant}]: {o.reason}" for o in self.failed)
        return text

    def write(self, folder: str | os.PathLike[str]) -> list[Path]:
        """Write ``ranking.json``, ``ranking.md`` and per candidate ``posterior.nc`` and
        ``fit.json`` under ``folder`` (refuses to replace earlier results)."""
        folder = Path(folder)
        existing = [n for n in RESULT_FILES if (folder / n).exists()]
        if existing:
            raise MechfitError(f"{folder}: holds a ranking already ({', '.join(existing)}); "
                               "choose another --out folder or remove the old results")
        folder.mkdir(parents=True, exist_ok=True)
        written = []
        for o in self.outcomes:
            if not o.ok:
                continue
            sub = folder / "candidates" / _folder_name(o.name, o.variant)
            sub.mkdir(parents=True, exist_ok=True)
            written.append(write_inference_data(o.idata, sub / "posterior.nc"))
            with open(sub / "fit.json", "x", encoding="utf-8") as handle:
                json.dump(o.summary, handle, indent=2, default=json_default)
                handle.write("\n")
            written.append(sub / "fit.json")
            (sub / "mechanism.mech").write_text(o.mechanism_text, encoding="utf-8")
        with open(folder / "ranking.json", "x", encoding="utf-8") as handle:
            json.dump(self.summary(), handle, indent=2, default=json_default)
            handle.write("\n")
        with open(folder / "ranking.md", "x", encoding="utf-8") as handle:
            handle.write(f"# Ranking: {getattr(self.study, 'title', '')}\n\n```\n"
                         f"{self.table()}\n```\n")
        written += [folder / "ranking.json", folder / "ranking.md"]
        return written


def study_info(study) -> dict:
    """Title, note, run conditions and time spans of a study (canonical units), for the
    report's cautions and plots."""
    text = f"{study.title} {getattr(study, 'note', '')}".lower()
    return {
        "title": study.title,
        "note": getattr(study, "note", ""),
        "invented": "invented" in text,
        "initial": {r.name: {k: float(v) for k, v in r.initial.items()} for r in study.runs},
        "run_temperatures": {r.name: float(r.temperature) for r in study.runs},
        "times": {r.name: [float(np.min(r.times)), float(np.max(r.times))]
                  for r in study.runs if len(r.times)},
        "reference_temperature": float(study.reference_temperature),
        "units": {"concentration": "mol/L", "time": "s", "temperature": "K"},
    }


def _folder_name(name: str, variant: str) -> str:
    safe = "".join(ch if ch.isalnum() or ch in "-_." else "_" for ch in variant)
    return f"{name}__{safe}"


def _held_out_density(study, outcome: CandidateOutcome, run: str,
                      settings: FitSettings) -> float:
    """log p(y_run | other runs): refit without the run, score the run at the new draws.

    Only what the score needs is computed: the maximum-likelihood point (searched from
    the whole-study optimum, which is close to the held-out one, when it is known) and
    the posterior draws; no InferenceData, identifiability or summaries.
    """
    reduced = dataclasses.replace(study, runs=tuple(r for r in study.runs if r.name != run))
    model = derive_variant(outcome.mechanism(), outcome.variant)
    optimum = {n: p["mle"] for n, p in outcome.summary.get("maximum_likelihood", {})
               .get("parameters", {}).items() if p.get("mle") is not None}
    problem = study_problem(reduced, model)
    held = Likelihood(problem.model, problem.observations, problem.parameters, problem.errors)
    if optimum:
        start = held.parameters.free_vector({n: float(v) for n, v in optimum.items()
                                             if n in held.parameters})
        fit = maximum_likelihood(held, starts=0, current=False, extra_starts=(start,),
                                 seed=settings.seed, tolerance=FIT_TOLERANCE,
                                 max_evaluations=FIT_EVALUATIONS)
    else:
        fit = maximum_likelihood(held, starts=settings.starts, local=settings.local,
                                 seed=settings.seed, tolerance=FIT_TOLERANCE,
                                 max_evaluations=FIT_EVALUATIONS)
    post = sample_posterior(held, fit.u, fit.covariance_free, settings.sampling())
    draws = post.natural().reshape(-1, len(held.parameters.names))
    take = np.linspace(0, len(draws) - 1, min(len(draws), 400)).astype(int)
    problem = study_problem(study, model)
    lik = Likelihood(problem.model, problem.observations, problem.parameters, problem.errors)
    # free vectors of the whole-study likelihood, by name (a parameter of the held-out
    # run alone, such as its time offset, keeps its starting value)
    u = np.array([lik.parameters.free_vector(
        {n: float(v) for n, v in zip(held.parameters.names, draws[i], strict=True)})
        for i in take])
    pointwise = lik.pointwise(u)
    r = lik.observations.run_names.index(run)
    sums = pointwise[:, lik.observations.run == r].sum(axis=1)
    sums = sums[np.isfinite(sums)]
    if sums.size == 0:
        raise MechfitError(f"refit of {outcome.key} without run {run}: no finite predictions")
    return log_predictive_density(sums)


def _candidate(o: CandidateOutcome, refits: dict[str, float] | None = None) -> Candidate:
    refit = None
    if refits:
        def refit(run, refits=refits):
            if run not in refits:
                raise MechfitError(f"no exact refit of {o.key} without run {run} was made")
            return refits[run]
    approx = o.approximation or {}
    return Candidate(o.name, o.variant, o.idata, "y", o.point_runs,
                     log_likelihood_max=o.log_likelihood_max, n_parameters=o.n_parameters,
                     n_data=o.n_data, residuals=o.residuals(), refit=refit,
                     approximation_deviation=approx.get("deviation"),
                     approximation_threshold=approx.get("tolerance"))


def _refit_job(study_path: str, text: str, name: str, variant: str, run: str,
               settings: FitSettings, summary: dict) -> float:
    from mechfit.study import load_study

    study = load_study(study_path)
    outcome = CandidateOutcome(name, variant, text, "ok", summary=summary)
    return _held_out_density(study, outcome, run, settings)


def _refits(study, outcomes: list[CandidateOutcome], wanted, settings: RankSettings,
            pool: ProcessPoolExecutor | None = None):
    """Yield ((name, variant, run), log p(y_run | other runs)) for every wanted refit
    (in ``pool`` when one is given and there is more than one refit)."""
    texts = {(o.name, o.variant): o.mechanism_text for o in outcomes}
    optima = {(o.name, o.variant): {"maximum_likelihood": o.summary.get("maximum_likelihood",
                                                                        {})}
              for o in outcomes}
    if pool is not None and len(wanted) > 1:
        futures = {pool.submit(_refit_job, str(study.path), texts[(n, v)], n, v, run,
                               settings.fit, optima[(n, v)]): (n, v, run)
                   for n, v, run in wanted}
        for fut in as_completed(futures):
            yield futures[fut], fut.result()
    else:
        for n, v, run in wanted:
            outcome = CandidateOutcome(n, v, texts[(n, v)], "ok", summary=optima[(n, v)])
            yield (n, v, run), _held_out_density(study, outcome, run, settings.fit)


def rank_study_steps(study, mechanisms: Sequence[Mechanism],
                     settings: RankSettings = RankSettings()  # noqa: B008
                     ) -> Iterator[Event | StudyRanking]:
    """Fit every candidate, rank them, and yield progress events, then the result."""
    jobs = [(m, v) for m in mechanisms for v in settings.variant_names(m)]
    keys = [f"{m.name} [{v}]" for m, v in jobs]
    if len(set(keys)) != len(keys):
        raise MechfitError("two mechanisms share a name: " + ", ".join(
            sorted({k for k in keys if keys.count(k) > 1})) + "; rename one of the files")
    total = len(jobs)
    yield Event("start", total=total)
    # one pool of worker processes serves the fits and then the exact refits (a spawned
    # worker spends seconds importing the scientific stack)
    with contextlib.ExitStack() as stack:
        pool = None
        if settings.workers > 1 and (total > 1 or settings.exact_refits):
            pool = stack.enter_context(ProcessPoolExecutor(
                max_workers=settings.workers, mp_context=multiprocessing.get_context("spawn")))
        yield from _rank_with(study, jobs, keys, settings, pool)


def _rank_with(study, jobs, keys, settings: RankSettings,
               pool: ProcessPoolExecutor | None) -> Iterator[Event | StudyRanking]:
    outcomes: list[CandidateOutcome] = []
    total = len(jobs)
    if pool is not None and total > 1:
        # larger schemes first, so that the last job to finish is a small one (the
        # longest-first rule of list scheduling; the results do not depend on it)
        ordered = sorted(jobs, key=lambda job: -(len(job[0].species)
                                                 + len(job[0].reactions())))
        futures = {pool.submit(evaluate_from_text, str(study.path), m.to_text(), m.name,
                               v, settings.fit): (m, v) for m, v in ordered}
        for fut in as_completed(futures):
            m, v = futures[fut]
            try:
                outcome = fut.result()
            except Exception as exc:  # the worker process died
                outcome = CandidateOutcome(m.name, v, m.to_text(), "failed",
                                           reason=f"worker failed: {exc}")
            outcomes.append(outcome)
            yield Event("fitted", outcome.key, len(outcomes), total, outcome.seconds,
                        outcome.status)
    else:
        for m, v in jobs:
            outcome = evaluate_candidate(study, m, v, settings.fit)
            outcomes.append(outcome)
            yield Event("fitted", outcome.key, len(outcomes), total, outcome.seconds,
                        outcome.status)
    order = {k: i for i, k in enumerate(keys)}
    outcomes.sort(key=lambda o: order[o.key])
    good = [o for o in outcomes if o.ok]
    if not good:
        reasons = "; ".join(f"{o.key}: {o.reason}" for o in outcomes)
        raise RankingFailure(f"no candidate could be fitted ({reasons})")
    ranking = rank_candidates([_candidate(o) for o in good], seed=settings.fit.seed)
    if settings.exact_refits and len(study.runs) > 1:
        # exact leave-one-run-out values where PSIS is unreliable (Pareto k > 0.7), for
        # the candidates still in contention after the first pass (the leading set);
        # the others keep the approximate value, and the ranking says so
        wanted = []
        for c in ranking.leading_set:
            run_k = c.run_loo.pareto_k if c.run_loo is not None else ()
            labels = c.run_loo.labels if c.run_loo is not None else ()
            for run, k in zip(labels, run_k, strict=True):
                if k > PARETO_K_UNRELIABLE:
                    wanted.append((c.name, c.variant, run))
        if wanted:
            yield Event("refits", total=len(wanted))
            values = {}
            for done, (item, value) in enumerate(_refits(study, good, wanted, settings, pool),
                                                 1):
                values[item] = value
                yield Event("refit", f"{item[0]} [{item[1]}] without {item[2]}", done,
                            len(wanted))
            candidates = []
            for o in good:
                mine = {run: v for (n, var, run), v in values.items()
                        if (n, var) == (o.name, o.variant)}
                candidates.append(_candidate(o, mine))
            ranking = rank_candidates(candidates, seed=settings.fit.seed)
    yield Event("ranked", total=total, done=total)
    yield StudyRanking(study, outcomes, ranking, settings)


def rank_study(study, mechanisms: Sequence[Mechanism],
               settings: RankSettings = RankSettings()) -> StudyRanking:  # noqa: B008
    """Fit and rank every candidate (see :func:`rank_study_steps`); no progress output.

    Examples
    --------
    See ``docs/tutorial.md``; a full ranking takes seconds to minutes.
    """
    result = None
    for item in rank_study_steps(study, mechanisms, settings):
        if isinstance(item, StudyRanking):
            result = item
    return result
