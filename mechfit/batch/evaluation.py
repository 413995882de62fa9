"""What a batch worker does with one scheme x variant, and ranking what the store holds.

:func:`evaluate_scheme` is the evaluator handed to :func:`mechfit.batch.run_batch`: a
module-level function (picklable, so it runs in a spawned process or on a dask worker)
that fits one candidate with :func:`mechfit.pipeline.evaluate.evaluate_from_text` and
returns plain values: ``status``, ``reason``, a JSON-safe ``summary`` holding everything
the ranking needs later, and the posterior as netCDF bytes. :func:`rank_stored` turns
stored rows back into candidates and ranks them with
:func:`mechfit.compare.rank_candidates`, as a
:class:`~mechfit.pipeline.ranking_run.StudyRanking` so the ranking's writers serve.
"""

from __future__ import annotations

import tempfile
from collections.abc import Sequence
from pathlib import Path

from mechfit.compare import Candidate, rank_candidates
from mechfit.infer.inference_data import read_inference_data, write_inference_data
from mechfit.pipeline.evaluate import CandidateOutcome, FitSettings, evaluate_from_text
from mechfit.pipeline.ranking_run import RankingFailure, RankSettings, StudyRanking


def study_content(study) -> str:
    """The study's content for the store key: the study file's text and every data table's
    text (so an edited value redoes the work and a moved study does not).

    Examples
    --------
    >>> from mechfit.demo import study_path
    >>> from mechfit.study import load_study
    >>> text = study_content(load_study(study_path()))
    >>> "corvenone" in text and "--- r11.csv" in text
    True
    """
    parts = [Path(study.path).read_text(encoding="utf-8")]
    for source in sorted({r.source for r in study.runs if r.source}):
        path = Path(source)
        if path.is_file():
            parts.append(f"--- {path.name}\n" + path.read_text(encoding="utf-8"))
    return "\n".join(parts)


def scheme_payload(study_path: str, text: str, name: str, variant: str,
                   settings: FitSettings) -> dict:
    """The picklable payload of :func:`evaluate_scheme`.

    Examples
    --------
    >>> p = scheme_payload("study.toml", "A -> P @ k\\n", "first", "full", FitSettings())
    >>> p["name"], p["variant"], p["settings"]["starts"]
    ('first', 'full', 16)
    """
    return {"study": str(study_path), "text": text, "name": name, "variant": variant,
            "settings": settings.as_dict()}


def evaluate_scheme(payload: dict) -> dict:
    """Fit one scheme x variant (runs in a worker); never raises for a failed fit.

    Returns
    -------
    dict
        ``status`` (``"ok"``/``"failed"``), ``reason``, ``summary`` (JSON-safe: ``name``,
        ``variant``, ``scheme`` text, ``log_likelihood_max``, ``n_parameters``, ``n_data``,
        ``point_runs``, ``residuals`` by series, ``assumptions``, ``fit`` = the
        ``fit.json`` dict) and ``posterior`` (netCDF bytes, or ``None``).
    """
    settings = FitSettings(**payload["settings"])
    outcome = evaluate_from_text(payload["study"], payload["text"], payload["name"],
                                 payload["variant"], settings)
    summary = {"name": outcome.name, "variant": outcome.variant, "scheme": payload["text"],
               "mechanism_text": outcome.mechanism_text}
    if not outcome.ok:
        return {"status": "failed", "reason": outcome.reason, "summary": summary,
                "posterior": None}
    summary.update({
        "log_likelihood_max": outcome.log_likelihood_max,
        "n_parameters": outcome.n_parameters, "n_data": outcome.n_data,
        "point_runs": list(outcome.point_runs),
        "residuals": {k: [float(x) for x in v] for k, v in outcome.residuals().items()},
        "assumptions": list(outcome.assumptions), "fit": outcome.summary})
    with tempfile.TemporaryDirectory(prefix="mechfit-batch-") as tmp:
        path = write_inference_data(outcome.idata, Path(tmp) / "posterior.nc")
        blob = path.read_bytes()
    return {"status": "ok", "reason": None, "summary": summary, "posterior": blob}


def outcome_from_row(row: dict) -> CandidateOutcome:
    """A :class:`CandidateOutcome` rebuilt from a stored row (posterior read from its
    file for ``ok`` rows)."""
    s = row["summary"]
    if row["status"] != "ok":
        return CandidateOutcome(row["name"], row["variant"],
                                s.get("mechanism_text", s.get("scheme", "")), "failed",
                                reason=row.get("reason") or "")
    return CandidateOutcome(
        row["name"], row["variant"], s["mechanism_text"], "ok",
        seconds=row.get("seconds") or 0.0, idata=read_inference_data(row["posterior"]),
        summary=s["fit"], log_likelihood_max=float(s["log_likelihood_max"]),
        n_parameters=int(s["n_parameters"]), n_data=int(s["n_data"]),
        point_runs=list(s["point_runs"]), identifiability=s["fit"].get("identifiability", {}),
        assumptions=tuple(s.get("assumptions", ())))


def rank_stored(study, rows: Sequence[dict], settings: RankSettings) -> StudyRanking:
    """Rank the ``ok`` rows with :func:`mechfit.compare.rank_candidates`.

    Exact leave-one-run-out refits are not run here (the stored posterior is all a batch
    keeps), so ``settings.exact_refits`` should be false.

    Raises
    ------
    RankingFailure
        When no row is ``ok``.
    """
    outcomes = [outcome_from_row(r) for r in rows]
    good = [(o, r) for o, r in zip(outcomes, rows, strict=True) if o.ok]
    if not good:
        reasons = "; ".join(f"{o.key}: {o.reason}" for o in outcomes) or "nothing was run"
        raise RankingFailure(f"no scheme could be fitted ({reasons})")
    candidates = [Candidate(o.name, o.variant, o.idata, "y", o.point_runs,
                            log_likelihood_max=o.log_likelihood_max,
                            n_parameters=o.n_parameters, n_data=o.n_data,
                            residuals=r["summary"]["residuals"])
                  for o, r in good]
    ranking = rank_candidates(candidates, seed=settings.fit.seed)
    return StudyRanking(study, outcomes, ranking, settings)
