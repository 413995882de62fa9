r"""Rank candidate mechanisms (mechanism x variant) fitted to the same study.

:func:`rank_candidates` takes one :class:`Candidate` per fitted model, with plain inputs
(the posterior as an :class:`arviz.InferenceData`, the name of its pointwise
log-likelihood, the run of every point, the maximum log-likelihood, the numbers of
parameters and data points, the residuals of every run), and returns a :class:`Ranking`:

- AIC, AICc, BIC and Akaike weights (:mod:`mechfit.compare.criteria`,
  :mod:`mechfit.compare.weights`);
- WAIC and PSIS-LOO on points (:mod:`mechfit.compare.elpd`), leave-one-run-out LOO with
  exact refits where PSIS is unreliable (:mod:`mechfit.compare.run_loo`);
- stacking and pseudo-BMA weights and differences to the best with standard errors
  (:func:`arviz.compare`);
- residual diagnostics per run (:mod:`mechfit.compare.residuals`) and the
  approximation check of reduced variants (:mod:`mechfit.compare.approximation`);
- a verdict in plain words per candidate (:mod:`mechfit.compare.verdicts`).

The ordering follows ``elpd_loo`` (PSIS-LOO on points, larger is better; ties broken by
AICc); AICc is the cross-check. ``docs/ranking.md`` explains every field.

Examples
--------
>>> import numpy as np, arviz as az
>>> rng = np.random.default_rng(5)
>>> t = np.tile(np.linspace(0.0, 4.0, 15), 2)
>>> runs = ["r1"] * 15 + ["r2"] * 15
>>> y = np.exp(-t) + rng.normal(0.0, 0.02, t.size)
>>> def candidate(name, curve):
...     k = 1.0 + rng.normal(0.0, 0.01, (4, 200, 1))
...     loglik = -0.5 * ((y - curve(k, t)) / 0.02) ** 2 - np.log(0.02 * np.sqrt(2 * np.pi))
...     idata = az.from_dict(posterior={"k": k[..., 0]}, log_likelihood={"y": loglik})
...     residual = (y - curve(np.ones(1), t)) / 0.02
...     return Candidate(name, "full", idata, "y", runs,
...                      log_likelihood_max=float(loglik.sum(axis=2).max()),
...                      n_parameters=1, n_data=t.size,
...                      residuals={"r1": residual[:15], "r2": residual[15:]})
>>> ranking = rank_candidates([candidate("first order", lambda k, t: np.exp(-k * t)),
...                            candidate("second order", lambda k, t: 1 / (1 + k * t))])
>>> [(c.name, c.verdict) for c in ranking.candidates]
[('first order', 'best supported'), ('second order', 'fails to describe the data')]
"""

from __future__ import annotations

import html
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np

from mechfit.compare.approximation import ApproximationCheck, approximation_check
from mechfit.compare.criteria import InformationCriteria, information_criteria
from mechfit.compare.elpd import PredictiveDensity, difference, psis_loo, waic
from mechfit.compare.errors import ComparisonError
from mechfit.compare.residuals import ResidualDiagnostics, residual_diagnostics
from mechfit.compare.run_loo import Refit, leave_one_run_out, run_names
from mechfit.compare.verdicts import (
    BEST,
    CLEARLY_WORSE,
    FAILS,
    NOT_DISTINGUISHABLE,
    THRESHOLDS,
    aicc_support,
    criterion_verdict,
    cross_check_disagrees,
)
from mechfit.compare.weights import PredictiveWeights, akaike_weights, predictive_weights
from mechfit.plain_json import json_safe

PRIMARY_CRITERION = "elpd_loo"
CROSS_CHECK = "aicc"


@dataclass(frozen=True)
class Candidate:
    """One fitted candidate, as plain inputs.

    Attributes
    ----------
    name, variant
        The mechanism's name and the variant (``"full"``, ``"steady state"``...); the pair
        must be unique within a ranking.
    idata
        :class:`arviz.InferenceData` with ``posterior`` and ``log_likelihood`` groups.
    log_likelihood_var
        Name of the pointwise log-likelihood variable in ``log_likelihood``.
    runs
        Run label of every point, in the order of that variable's point dimension.
    log_likelihood_max
        Log-likelihood at the maximum-likelihood estimate.
    n_parameters
        Fitted parameters, counting fitted noise levels.
    n_data
        Data points (must equal the number of pointwise log-likelihood terms).
    residuals
        Series label (run, or ``run/observable``) -> residuals in time order, at the
        maximum-likelihood estimate; standardised residuals are best.
    refit
        Optional ``refit(run_name) -> log p(y_run | other runs)`` for exact
        leave-one-run-out values where PSIS is unreliable (Pareto k > 0.7).
    approximation_deviation, approximation_threshold
        For reduced variants: largest relative deviation from the full model at the fit,
        and the tolerated deviation (fractions). ``None`` for the full model.
    """

    name: str
    variant: str
    idata: object = field(repr=False)
    log_likelihood_var: str
    runs: Sequence[str] = field(repr=False)
    log_likelihood_max: float
    n_parameters: int
    n_data: int
    residuals: Mapping[str, Sequence[float] | np.ndarray] = field(repr=False)
    refit: Refit | None = field(default=None, repr=False)
    approximation_deviation: float | None = None
    approximation_threshold: float | None = None

    @property
    def key(self) -> str:
        """``"name [variant]"``, the label used in tables."""
        return f"{self.name} [{self.variant}]"


@dataclass(frozen=True)
class CandidateResult:
    """Every criterion, weight, diagnostic and the verdict of one candidate.

    Attributes
    ----------
    name, variant, key, rank
        Identity and 0-based position in the ranking (best first).
    information
        :class:`~mechfit.compare.criteria.InformationCriteria` (AIC, AICc, BIC).
    delta_aic, delta_aicc, delta_bic
        Difference to the smallest value among the candidates.
    akaike_weight
        Akaike weight from AICc.
    aicc_support
        Burnham & Anderson's wording for ``delta_aicc``.
    loo, waic, run_loo
        :class:`~mechfit.compare.elpd.PredictiveDensity` estimates (``run_loo`` is
        ``None`` for a study of one run).
    elpd_loo_diff, elpd_loo_diff_se, elpd_waic_diff, elpd_waic_diff_se,
    elpd_run_loo_diff, elpd_run_loo_diff_se
        elpd of the first-ranked candidate minus this one's, with standard errors.
    weight, weight_pseudo_bma, weight_run_stacking
        Stacking and Bayesian-bootstrap pseudo-BMA weights on points, stacking weight
        on runs (``None`` without run LOO).
    residuals
        :class:`~mechfit.compare.residuals.ResidualDiagnostics`.
    approximation
        :class:`~mechfit.compare.approximation.ApproximationCheck` or ``None``.
    verdict
        One of the four verdicts of :mod:`mechfit.compare.verdicts`.
    reasons
        Plain sentences behind the verdict and every caveat.
    """

    name: str
    variant: str
    key: str
    rank: int
    information: InformationCriteria
    delta_aic: float
    delta_aicc: float
    delta_bic: float
    akaike_weight: float
    aicc_support: str
    loo: PredictiveDensity
    waic: PredictiveDensity
    run_loo: PredictiveDensity | None
    elpd_loo_diff: float
    elpd_loo_diff_se: float
    elpd_waic_diff: float
    elpd_waic_diff_se: float
    elpd_run_loo_diff: float | None
    elpd_run_loo_diff_se: float | None
    weight: float
    weight_pseudo_bma: float
    weight_run_stacking: float | None
    residuals: ResidualDiagnostics
    approximation: ApproximationCheck | None
    verdict: str
    reasons: tuple[str, ...]

    @property
    def n_parameters(self) -> int:
        """Fitted parameters K."""
        return self.information.n_parameters

    @property
    def log_likelihood_max(self) -> float:
        """Maximum log-likelihood."""
        return self.information.log_likelihood_max

    def summary(self) -> dict:
        """JSON-safe dictionary of every field (keys documented in ``docs/ranking.md``)."""
        run = self.run_loo
        out = {
            "rank": self.rank + 1, "name": self.name, "variant": self.variant,
            "verdict": self.verdict, "reasons": list(self.reasons),
            "n_parameters": self.n_parameters, "n_data": self.information.n_data,
            "log_likelihood_max": self.log_likelihood_max,
            "aic": self.information.aic, "aicc": self.information.aicc,
            "bic": self.information.bic, "delta_aic": self.delta_aic,
            "delta_aicc": self.delta_aicc, "delta_bic": self.delta_bic,
            "aicc_support": self.aicc_support, "akaike_weight": self.akaike_weight,
            "elpd_loo": self.loo.elpd, "elpd_loo_se": self.loo.se, "p_loo": self.loo.p_effective,
            "elpd_loo_diff": self.elpd_loo_diff, "elpd_loo_diff_se": self.elpd_loo_diff_se,
            "pareto_k_max": self.loo.pareto_k_max, "n_pareto_k_high": self.loo.n_high_k,
            "elpd_waic": self.waic.elpd, "elpd_waic_se": self.waic.se,
            "p_waic": self.waic.p_effective, "elpd_waic_diff": self.elpd_waic_diff,
            "elpd_waic_diff_se": self.elpd_waic_diff_se,
            "elpd_run_loo": None if run is None else run.elpd,
            "elpd_run_loo_se": None if run is None else run.se,
            "elpd_run_loo_diff": self.elpd_run_loo_diff,
            "elpd_run_loo_diff_se": self.elpd_run_loo_diff_se,
            "run_pareto_k": None if run is None else dict(zip(run.labels, run.pareto_k.tolist(),
                                                              strict=True)),
            "runs_refitted": [] if run is None else list(run.exact),
            "n_run_pareto_k_high": 0 if run is None else run.n_high_k,
            "weight": self.weight, "weight_pseudo_bma": self.weight_pseudo_bma,
            "weight_run_stacking": self.weight_run_stacking,
            "structured_residuals": self.residuals.structured,
            "residuals": self.residuals.summary(),
            "approximation": None if self.approximation is None else self.approximation.summary(),
        }
        return json_safe(out)


@dataclass(frozen=True)
class Ranking:
    """The ranking of a set of candidates, best first.

    Attributes
    ----------
    candidates
        :class:`CandidateResult` tuple sorted by ``elpd_loo`` (best first).
    runs
        Run names of the study, in order of first appearance.
    n_data
        Data points of the study.
    alpha
        Family-wise level of the residual-structure flag.
    point_weights, run_weights
        :class:`~mechfit.compare.weights.PredictiveWeights` on points and on runs
        (``run_weights`` is ``None`` for a single run).
    primary_criterion, cross_check
        ``"elpd_loo"`` and ``"aicc"``.
    """

    candidates: tuple[CandidateResult, ...]
    runs: tuple[str, ...]
    n_data: int
    alpha: float
    point_weights: PredictiveWeights = field(repr=False)
    run_weights: PredictiveWeights | None = field(repr=False)
    primary_criterion: str = PRIMARY_CRITERION
    cross_check: str = CROSS_CHECK

    @property
    def best(self) -> CandidateResult | None:
        """The first candidate when its verdict is "best supported", else ``None``."""
        first = self.candidates[0]
        return first if first.verdict == BEST else None

    @property
    def criteria_agree(self) -> bool:
        """True when the smallest AICc belongs to the first candidate by elpd_loo."""
        return self.candidates[0].delta_aicc == 0.0

    @property
    def leading_set(self) -> tuple[CandidateResult, ...]:
        """The first candidate and those elpd_loo cannot separate from it (residuals aside)."""
        return tuple(c for c in self.candidates
                     if c.rank == 0 or criterion_verdict(
                         c.rank, elpd_difference=c.elpd_loo_diff,
                         elpd_difference_se=c.elpd_loo_diff_se) == NOT_DISTINGUISHABLE)

    def note(self) -> str:
        """One plain paragraph: the conclusion and its main caveat."""
        first = self.candidates[0]
        if first.verdict == FAILS:
            text = (f"The candidate that predicts best ({first.key}) leaves structured residuals "
                    f"in {', '.join(first.residuals.structured_series)}: none of the "
                    "candidates both leads and describes the data; a step may be missing from "
                    "all of them.")
            adequate = [c for c in self.candidates if c.verdict != FAILS]
            if adequate:
                text += (f" Of the candidates whose residuals show no structure, "
                         f"{adequate[0].key} leads ({adequate[0].verdict}).")
        else:
            close = [c for c in self.leading_set if c.verdict == NOT_DISTINGUISHABLE]
            text = f"{first.key} is best supported by {self.primary_criterion}."
            if close:
                text += (" The data cannot tell it apart from "
                         + ", ".join(c.key for c in close)
                         + "; a discriminating experiment is needed to choose between them.")
                simplest = min([first, *close], key=lambda c: c.n_parameters)
                if simplest.n_parameters < first.n_parameters:
                    text += (f" Of these, {simplest.key} needs the fewest fitted parameters "
                             f"({simplest.n_parameters}); an extra parameter that does not "
                             "improve prediction is not supported by the data (Burnham & "
                             "Anderson 2002, p. 131).")
        if not self.criteria_agree:
            lowest = min(self.candidates, key=lambda c: c.information.aicc)
            text += (f" AICc prefers {lowest.key}; the ordering follows "
                     f"{self.primary_criterion}.")
        text += (" Conclusions hold inside the conditions studied (concentrations, "
                 "temperatures, times of these runs).")
        return text

    def summary(self) -> dict:
        """JSON-safe dictionary; ``summary()["candidates"]`` is sorted best first.

        Every candidate has at least the keys ``name``, ``variant``, ``n_parameters``,
        ``log_likelihood_max``, ``aicc``, ``bic``, ``elpd_loo``, ``elpd_loo_se``,
        ``weight`` and ``verdict`` (see ``docs/ranking.md`` for all keys).
        """
        best = self.best
        return json_safe({
            "primary_criterion": self.primary_criterion,
            "cross_check": self.cross_check,
            "criteria_agree": self.criteria_agree,
            "best": None if best is None else {"name": best.name, "variant": best.variant},
            "leading_set": [{"name": c.name, "variant": c.variant} for c in self.leading_set],
            "note": self.note(),
            "n_data": self.n_data, "runs": list(self.runs), "alpha": self.alpha,
            "thresholds": THRESHOLDS,
            "candidates": [c.summary() for c in self.candidates],
        })

    def _rows(self) -> list[list[str]]:
        def number(value, digits=1):
            return "-" if value is None or not math.isfinite(value) else f"{value:.{digits}f}"

        rows = []
        for c in self.candidates:
            run = c.run_loo
            rows.append([
                str(c.rank + 1), c.name, c.variant, str(c.n_parameters),
                number(c.log_likelihood_max), number(c.information.aicc),
                number(c.delta_aicc), number(c.information.bic),
                f"{number(c.loo.elpd)} ± {number(c.loo.se)}",
                f"{number(c.elpd_loo_diff)} ± {number(c.elpd_loo_diff_se)}",
                "-" if run is None else f"{number(run.elpd)} ± {number(run.se)}",
                number(c.weight, 2), number(c.akaike_weight, 2), c.verdict])
        return rows

    _HEADER = ["#", "mechanism", "variant", "K", "max log L", "AICc", "ΔAICc", "BIC",
               "elpd_loo ± SE", "Δelpd ± SE", "run LOO ± SE", "weight", "Akaike w", "verdict"]

    def report(self) -> str:
        """A readable text table, the reasons of every candidate and the note.

        Examples
        --------
        See the module docstring; ``print(ranking.report())`` shows the table.
        """
        rows = [self._HEADER, *self._rows()]
        widths = [max(len(r[i]) for r in rows) for i in range(len(self._HEADER))]
        lines = ["  ".join(cell.ljust(w) for cell, w in zip(r, widths, strict=True)).rstrip()
                 for r in rows]
        lines.insert(1, "  ".join("-" * w for w in widths))
        lines.append("")
        lines.append(f"Ordered by {self.primary_criterion} (PSIS-LOO on points); weight: "
                     f"stacking; Δ to the first candidate; cross-check {self.cross_check}.")
        for c in self.candidates:
            lines.append(f"{c.rank + 1}. {c.key}: {c.verdict}")
            lines.extend(f"   - {reason}" for reason in c.reasons)
        lines.append("")
        lines.append(self.note())
        return "\n".join(lines)

    def _repr_html_(self) -> str:
        head = "".join(f"<th>{html.escape(h)}</th>" for h in self._HEADER)
        body = "".join("<tr>" + "".join(f"<td>{html.escape(cell)}</td>" for cell in row)
                       + "</tr>" for row in self._rows())
        return (f"<table><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>"
                f"<p>{html.escape(self.note())}</p>")


def _check_inputs(candidates: Sequence[Candidate]) -> tuple[tuple[str, ...], int]:
    if not candidates:
        raise ComparisonError("no candidates to rank; fit at least one mechanism first")
    keys = [c.key for c in candidates]
    repeated = sorted({k for k in keys if keys.count(k) > 1})
    if repeated:
        raise ComparisonError(f"candidates given twice: {', '.join(repeated)}; each "
                              "(mechanism, variant) pair may appear once", names=tuple(repeated))
    first = candidates[0]
    labels = [str(r) for r in first.runs]
    for c in candidates:
        if int(c.n_data) != int(first.n_data):
            raise ComparisonError(
                f"{c.key} was fitted to {c.n_data} points but {first.key} to {first.n_data}; "
                "candidates must be fitted to the same data", names=(c.key, first.key))
        if [str(r) for r in c.runs] != labels:
            raise ComparisonError(f"{c.key} labels its points with other runs than "
                                  f"{first.key}; candidates must share the study's points",
                                  names=(c.key,))
    return run_names(labels), int(first.n_data)


def _evaluate(c: Candidate, alpha: float) -> dict:
    # cheap checks first, so that bad input fails before any refit is run
    info = information_criteria(c.log_likelihood_max, c.n_parameters, c.n_data)
    approximation = approximation_check(c.approximation_deviation, c.approximation_threshold)
    residuals = residual_diagnostics(c.residuals, alpha)
    loo = psis_loo(c.idata, c.log_likelihood_var)
    if loo.n_points != info.n_data:
        raise ComparisonError(
            f"{c.key}: n_data = {info.n_data} but {c.log_likelihood_var!r} has {loo.n_points} "
            "pointwise terms; give the number of points the likelihood sums over",
            names=(c.key, "n_data"))
    run = (leave_one_run_out(c.idata, c.log_likelihood_var, c.runs, c.refit)
           if len(run_names(c.runs)) > 1 else None)
    return {"info": info, "loo": loo, "waic": waic(c.idata, c.log_likelihood_var), "run": run,
            "approximation": approximation, "residuals": residuals}


def parsimonious_choice(evaluated: Sequence[dict], order: Sequence[int]) -> int:
    """Index of the candidate ranked first: the one-standard-error rule on elpd_loo.

    Among the candidates whose elpd_loo lies within one standard error of the paired
    difference below the highest (``Δ <= SE(Δ)``) and that have fewer fitted parameters,
    the one with the fewest (then the higher elpd_loo) is preferred; without such a
    candidate the highest elpd_loo comes first. A candidate with structured residuals is
    never preferred over one without. The rule: Breiman, Friedman, Olshen & Stone,
    *Classification and Regression Trees* (1984), sec. 3.4.3; Hastie, Tibshirani &
    Friedman, *The Elements of Statistical Learning*, 2nd ed. (2009), sec. 7.10 (both
    recalled from memory); applying it to the paired elpd difference is common practice.
    It keeps a superfluous parameter from winning on noise: a nested candidate with one
    parameter too many gains a fraction of a log unit by chance about half the time.
    """
    highest = order[0]
    top = evaluated[highest]
    best = highest
    for index in order[1:]:
        e = evaluated[index]
        if e["info"].n_parameters >= evaluated[best]["info"].n_parameters:
            continue
        if e["residuals"].structured and not top["residuals"].structured:
            continue
        diff, diff_se = difference(top["loo"].pointwise, e["loo"].pointwise)
        if diff <= diff_se:
            best = index
    return best


def _parsimony_reason(evaluated: Sequence[dict], index: int, highest: int,
                      chosen: int) -> str | None:
    if chosen == highest or index not in (chosen, highest):
        return None
    diff, diff_se = difference(evaluated[highest]["loo"].pointwise,
                               evaluated[chosen]["loo"].pointwise)
    k_high = evaluated[highest]["info"].n_parameters
    k_chosen = evaluated[chosen]["info"].n_parameters
    if index == chosen:
        return (f"first by the one-standard-error rule: elpd_loo {diff:.1f} ± {diff_se:.1f} "
                f"below the highest, within one standard error, with {k_chosen} parameters "
                f"instead of {k_high}")
    return (f"highest elpd_loo, by {diff:.1f} ± {diff_se:.1f}, but within one standard error "
            f"of a candidate with fewer parameters ({k_chosen} instead of {k_high}), which "
            "is ranked first")


def _reasons(e: dict, rank: int, criterion: str, diff: float, diff_se: float,
             delta_aicc: float, residuals: ResidualDiagnostics,
             parsimony: str | None = None) -> tuple[str, ...]:
    reasons = []
    if residuals.structured:
        reasons.append(
            "residuals are structured in " + ", ".join(residuals.structured_series)
            + f" (runs test or lag-1 autocorrelation, p < {residuals.threshold:.2g} after "
            "Bonferroni): the rate law misses a feature of those curves")
    if parsimony is not None:
        reasons.append(parsimony)
    elif rank == 0:
        reasons.append("first by elpd_loo")
    elif criterion == NOT_DISTINGUISHABLE:
        reasons.append(f"elpd_loo {diff:.1f} ± {diff_se:.1f} below the first: within 4 or "
                       "within two standard errors")
    else:
        reasons.append(f"elpd_loo {diff:.1f} ± {diff_se:.1f} below the first: more than 4 and "
                       "more than two standard errors")
    reasons.append(f"ΔAICc = {delta_aicc:.1f}: {aicc_support(delta_aicc)} (Burnham & Anderson)")
    if cross_check_disagrees(criterion, delta_aicc):
        reasons.append("AICc disagrees with elpd_loo here; the verdict follows elpd_loo")
    if e["loo"].n_high_k:
        reasons.append(f"{e['loo'].n_high_k} point(s) with Pareto k > 0.7: elpd_loo is "
                       "unreliable there (influential points or a misspecified model)")
    run = e["run"]
    if run is not None and run.exact:
        reasons.append("leave-one-run-out refitted exactly for " + ", ".join(run.exact))
    if run is not None and run.n_high_k:
        reasons.append(f"{run.n_high_k} run(s) with Pareto k > 0.7 and no refit: the "
                       "leave-one-run-out value is approximate")
    approximation = e["approximation"]
    if approximation is not None:
        reasons.append(approximation.describe()
                       + ("" if approximation.valid else
                          ": its rate constants are not those of the full mechanism"))
    return tuple(reasons)


def rank_candidates(candidates: Sequence[Candidate], *, alpha: float = 0.05,
                    seed: int = 0) -> Ranking:
    """Compute every criterion, weight and diagnostic, order the candidates, give verdicts.

    Parameters
    ----------
    candidates
        The fitted candidates, all on the same data points.
    alpha
        Family-wise level of the residual-structure flag per candidate (0.05).
    seed
        Seed of the Bayesian bootstrap of the pseudo-BMA weights.

    Returns
    -------
    Ranking

    Raises
    ------
    ComparisonError
        Candidates given twice, fitted to different data, or inputs that do not fit
        together (counts, run labels, refits that return no number).
    """
    runs, n_data = _check_inputs(candidates)
    evaluated = [_evaluate(c, float(alpha)) for c in candidates]
    keys = [c.key for c in candidates]
    point = predictive_weights({k: e["loo"] for k, e in zip(keys, evaluated, strict=True)},
                               seed=seed)
    with_runs = all(e["run"] is not None for e in evaluated)
    by_run = (predictive_weights({k: e["run"] for k, e in zip(keys, evaluated, strict=True)},
                                 seed=seed) if with_runs else None)
    akaike = dict(zip(keys, akaike_weights([e["info"].aicc for e in evaluated]), strict=True))
    order = sorted(range(len(candidates)),
                   key=lambda i: (-evaluated[i]["loo"].elpd, evaluated[i]["info"].aicc))
    highest = order[0]
    chosen = parsimonious_choice(evaluated, order)
    if chosen != highest:
        order.remove(chosen)
        order.insert(0, chosen)
    top = evaluated[order[0]]
    minimum = {name: min(getattr(e["info"], name) for e in evaluated)
               for name in ("aic", "aicc", "bic")}
    results = []
    for rank, index in enumerate(order):
        c, e, key = candidates[index], evaluated[index], keys[index]
        diff, diff_se = difference(top["loo"].pointwise, e["loo"].pointwise)
        waic_diff, waic_se = difference(top["waic"].pointwise, e["waic"].pointwise)
        if with_runs:
            run_diff, run_se = difference(top["run"].pointwise, e["run"].pointwise)
        else:
            run_diff = run_se = None
        residuals = e["residuals"]
        criterion = criterion_verdict(rank, elpd_difference=diff, elpd_difference_se=diff_se)
        verdict = FAILS if residuals.structured else criterion
        delta_aicc = e["info"].aicc - minimum["aicc"]
        results.append(CandidateResult(
            name=c.name, variant=c.variant, key=key, rank=rank, information=e["info"],
            delta_aic=e["info"].aic - minimum["aic"], delta_aicc=delta_aicc,
            delta_bic=e["info"].bic - minimum["bic"], akaike_weight=akaike[key],
            aicc_support=aicc_support(delta_aicc), loo=e["loo"], waic=e["waic"],
            run_loo=e["run"], elpd_loo_diff=diff, elpd_loo_diff_se=diff_se,
            elpd_waic_diff=waic_diff, elpd_waic_diff_se=waic_se, elpd_run_loo_diff=run_diff,
            elpd_run_loo_diff_se=run_se, weight=point.stacking[key],
            weight_pseudo_bma=point.pseudo_bma[key],
            weight_run_stacking=None if by_run is None else by_run.stacking[key],
            residuals=residuals, approximation=e["approximation"], verdict=verdict,
            reasons=_reasons(e, rank, criterion, diff, diff_se, delta_aicc, residuals,
                             _parsimony_reason(evaluated, index, highest, chosen))))
    return Ranking(tuple(results), runs, n_data, float(alpha), point, by_run)


__all__ = ["Candidate", "CandidateResult", "Ranking", "rank_candidates", "parsimonious_choice",
           "BEST", "NOT_DISTINGUISHABLE", "CLEARLY_WORSE", "FAILS"]
