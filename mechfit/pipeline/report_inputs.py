"""Build the report's inputs (:class:`mechfit.report.ReportData`) from a results folder.

``mechfit rank`` writes a results folder and ``mechfit report DIR`` rebuilds the report
from it; both go through :func:`report_data_from_folder`, so the report always shows
what is on disk and never recomputes a fit.

Folder layout: ``ranking.json`` (the ranking, the study's title, ranges and units);
``candidates/<name>__<variant>/`` with ``posterior.nc`` (InferenceData), ``fit.json``
(parameter summaries, identifiability, the fitted curves under ``series``) and
``mechanism.mech``; and ``design.json`` once ``mechfit design`` has run (its sentences
fill the report's next-experiments section).
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
from scipy import constants

from mechfit.derive import DerivationError, derive_rate_law, derive_variant
from mechfit.design.suggestions import design_suggestions
from mechfit.errors import MechfitError
from mechfit.mechanism import load_mechanism, species_step_graph
from mechfit.report import (
    CandidateReport,
    EnergyProfile,
    EnergyProfileStep,
    ObservableSeries,
    ParameterRow,
    RankingRow,
    RateLaw,
    ReportData,
    ResidualDiagnostic,
    RunFit,
    StudyRanges,
    TemperatureDependence,
)

UNITS = {"rate constant": "", "activation energy": "J/mol", "noise": ""}
PROFILE_TEMPERATURE = 298.15


class ResultsFolderError(MechfitError):
    """A results folder that is missing files or was not written by mechfit."""


def _read_json(path: Path) -> dict:
    try:
        return json.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise ResultsFolderError(f"{path}: missing; expected a folder written by "
                                 "'mechfit rank'") from None
    except json.JSONDecodeError as exc:
        raise ResultsFolderError(f"{path}:{exc.lineno}: not valid JSON ({exc.msg})") from None


def _key(name: str, variant: str) -> str:
    return f"{name} ({variant})"


def _ranking_row(c: dict) -> RankingRow:
    return RankingRow(
        name=c["name"], variant=c["variant"], n_parameters=c["n_parameters"],
        log_likelihood_max=c["log_likelihood_max"], aicc=c["aicc"], bic=c["bic"],
        elpd_loo=c.get("elpd_loo"), elpd_loo_se=c.get("elpd_loo_se"), weight=c.get("weight"),
        verdict=c["verdict"], verdict_reason="; ".join(c.get("reasons", [])[:2]),
        extra={"ΔAICc": c.get("delta_aicc"), "Akaike w": c.get("akaike_weight")})


def _parameter_rows(fit: dict) -> list[ParameterRow]:
    rows = []
    prior_dominated = set(fit.get("identifiability", {}).get("prior_dominated", []) or [])
    for name, p in fit.get("parameters", {}).items():
        unit = "J/mol" if name.startswith(("Ea_", "dH_")) else (
            "J/(mol K)" if name.startswith("dS_") else "")
        rows.append(ParameterRow(name, p.get("median"), p.get("hdi_low"), p.get("hdi_high"),
                                 p.get("mle"), p.get("se"), unit,
                                 "not identifiable from these data" if name in prior_dominated
                                 else ""))
    return rows


def _runs(fit: dict, idata, temperatures: dict[str, float]) -> list[RunFit]:
    series = fit.get("series", [])
    pp = None
    if idata is not None and hasattr(idata, "posterior_predictive"):
        y = np.asarray(idata.posterior_predictive["y"].values)
        pp = y.reshape(-1, y.shape[-1])
        take = np.linspace(0, pp.shape[0] - 1, min(200, pp.shape[0])).astype(int)
        pp = pp[take]
    out: dict[str, RunFit] = {}
    for s in series:
        idx = np.asarray(s["points"], dtype=int)
        draws = pp[:, idx] if pp is not None else None
        item = ObservableSeries(s["observable"], np.asarray(s["time"], float),
                                np.asarray(s["observed"], float), None, draws,
                                np.asarray(s["fitted"], float), s.get("unit", ""))
        run = out.setdefault(s["run"], RunFit(s["run"], [], temperatures.get(s["run"])))
        run.series.append(item)
    return list(out.values())


def _residual_rows(c: dict) -> list[ResidualDiagnostic]:
    rows = []
    for label, r in (c.get("residuals", {}) or {}).get("series", {}).items():
        run, _, observable = label.partition("/")
        runs_test = r.get("runs_test", {}) or {}
        rows.append(ResidualDiagnostic(run, observable, runs_test.get("p_two_sided"),
                                       r.get("lag1_autocorrelation"), r.get("durbin_watson"),
                                       bool(r.get("structured"))))
    return rows


def _arrhenius_bands(idata, t_ref: float, t_range: tuple[float, float]) -> list:
    if idata is None or not t_ref:
        return []
    post = idata.posterior
    grid = np.linspace(t_range[0] - 5.0, t_range[1] + 5.0, 25)
    out = []
    for name in post.data_vars:
        if not name.startswith("Ea_"):
            continue
        const = name[3:]
        if const not in post.data_vars:
            continue
        k = np.asarray(post[const].values).reshape(-1)
        ea = np.asarray(post[name].values).reshape(-1)
        take = np.linspace(0, k.size - 1, min(400, k.size)).astype(int)
        draws = k[take, None] * np.exp(-ea[take, None] / constants.R
                                       * (1.0 / grid[None, :] - 1.0 / t_ref))
        draws = draws[np.all(np.isfinite(draws) & (draws > 0), axis=1)]
        if draws.size:
            out.append(TemperatureDependence(const, grid, draws, "arrhenius"))
    return out


def _energy_profile(mechanism, fit: dict, t_ref: float | None) -> EnergyProfile | None:
    """Barriers from k at 298.15 K (Eyring: dG = RT ln(kB T / (h k)), standard state
    1 mol/L) and dG0 = -RT ln(kf/kr) of two-way steps, at the posterior medians."""
    params = fit.get("parameters", {})

    def k_at(name: str) -> float | None:
        p = params.get(name)
        if p is None or p.get("median") is None:
            return None
        k = float(p["median"])
        ea = params.get(f"Ea_{name}", {}).get("median")
        if ea is not None and t_ref:
            k *= math.exp(-float(ea) / constants.R * (1 / PROFILE_TEMPERATURE - 1 / t_ref))
        return k if k > 0 else None

    def barrier(k: float | None) -> float | None:
        if k is None:
            return None
        t = PROFILE_TEMPERATURE
        return constants.R * t * math.log(constants.k * t / (constants.h * k))

    steps = []
    for step in mechanism.steps:
        if step.law is not None or step.forward is None:
            continue
        kf = k_at(step.forward.name)
        kr = k_at(step.reverse.name) if step.reverse is not None else None
        if kf is not None:
            kf *= step.forward.factor
        if kr is not None and step.reverse is not None:
            kr *= step.reverse.factor
        steps.append(EnergyProfileStep(
            step.label, " + ".join(n for n, _ in step.products) or "0", barrier(kf),
            kf / kr if (kf is not None and kr is not None) else None))
    if not steps:
        return None
    first = mechanism.steps[0]
    return EnergyProfile(" + ".join(n for n, _ in first.reactants) or "0", steps,
                         PROFILE_TEMPERATURE)


def _rate_laws(mechanism, variant: str) -> list[RateLaw]:
    out = []
    try:
        law = derive_rate_law(derive_variant(mechanism, variant))
        out.append(RateLaw(f"{variant}", law.latex(), f"rate of {law.species} in the "
                           f"{variant} variant"))
    except (DerivationError, MechfitError, AttributeError):
        pass
    if variant == "full":
        try:
            law = derive_rate_law(derive_variant(mechanism, "qssa:all"))
            out.append(RateLaw("qssa:all", law.latex(), f"rate of {law.species} with every "
                               "intermediate in steady state"))
        except (DerivationError, MechfitError, AttributeError):
            pass
    return out


def _approximation_notes(c: dict, fit: dict) -> list[str]:
    """The approximation check of a reduced variant as a sentence for the report."""
    check = c.get("approximation")
    if not check:
        return []
    where = fit.get("approximation", {})
    verdict = "within" if check.get("valid") else "OUTSIDE"
    text = (f"the reduced rate law deviates from the full mechanism by up to "
            f"{100 * check['deviation']:.1f} % at the best fit")
    if where.get("run"):
        text += f" (run {where['run']}, {where['species']})"
    return [text + f": {verdict} the tolerance of {100 * check['threshold']:.0f} %"
            + ("" if check.get("valid") else "; the approximation does not hold where the "
               "data were taken, so its ranking is not evidence for the mechanism")]


def report_data_from_folder(folder: str | Path) -> ReportData:
    """Everything the report shows, read from a folder written by ``mechfit rank``."""
    from mechfit.infer.inference_data import read_inference_data

    folder = Path(folder)
    if not folder.is_dir():
        raise ResultsFolderError(f"{folder}: not a folder; expected the --out folder of "
                                 "'mechfit rank'")
    ranking = _read_json(folder / "ranking.json")
    study = ranking.get("study_info", {})
    temperatures = study.get("run_temperatures", {})
    ranges = StudyRanges.from_runs(study.get("initial", {}), temperatures=temperatures,
                                   times={k: np.asarray(v) for k, v in
                                          study.get("times", {}).items()},
                                   concentration_unit="mol/L", time_unit="s")
    t_ref = study.get("reference_temperature")
    candidates = []
    networks = {}
    for c in ranking["candidates"]:
        sub = folder / "candidates" / c["folder"]
        fit = _read_json(sub / "fit.json")
        mech = load_mechanism(sub / "mechanism.mech")
        networks.setdefault(c["name"], species_step_graph(mech))
        idata = read_inference_data(sub / "posterior.nc")
        temp = (_arrhenius_bands(idata, t_ref, ranges.temperatures)
                if ranges.temperature_varies else [])
        notes = []
        sampling = fit.get("sampling", {})
        if not fit.get("converged", True):
            notes.append("the fit did NOT converge: " + (sampling.get("statement") or
                         "see fit.json") + "; treat its intervals and criteria with care")
        elif sampling.get("statement"):
            notes.append("posterior " + sampling["statement"])
        notes += identifiability_notes(fit)
        candidates.append(CandidateReport(
            name=c["name"], variant=c["variant"], ranking=_ranking_row(c),
            parameters=_parameter_rows(fit), runs=_runs(fit, idata, temperatures),
            residual_diagnostics=_residual_rows(c), posterior=idata,
            identifiability_notes=notes,
            approximation_notes=_approximation_notes(c, fit),
            temperature_dependence=temp,
            energy_profile=_energy_profile(mech, fit, t_ref),
            rate_laws=_rate_laws(mech, c["variant"])))
    weights = {"stacking": {_key(c["name"], c["variant"]): c.get("weight") or 0.0
                            for c in ranking["candidates"]},
               "Akaike": {_key(c["name"], c["variant"]): c.get("akaike_weight") or 0.0
                          for c in ranking["candidates"]}}
    notes = [ranking.get("note", "")]
    for value in (ranking.get("thresholds") or {}).values():
        if isinstance(value, dict) and value.get("source"):
            notes.append(f"{value.get('value')}: {value['source']}")
    return ReportData(
        title=study.get("title") or "mechfit ranking", ranges=ranges, candidates=candidates,
        weights=weights, verdict_notes=[n for n in notes if n], networks=networks,
        invented=bool(study.get("invented")), invented_note=study.get("note", ""),
        design_suggestions=design_suggestions(folder),
        generated=f"mechfit {ranking.get('version', '')}".strip())


def _figure(x, spec: str = ".4g", missing: str = "not finite") -> str:
    """``x`` formatted with ``spec``, or ``missing`` for None, NaN or an infinity (JSON
    stores non-finite numbers as null)."""
    try:
        x = float(x)
    except (TypeError, ValueError):
        return missing
    return format(x, spec) if np.isfinite(x) else missing


def identifiability_notes(fit: dict) -> list[str]:
    """The report's notes on what the data determine, from a candidate's ``fit.json``.

    Examples
    --------
    >>> identifiability_notes({"identifiability": {"sloppy_directions": [
    ...     {"combination": "kd^1", "sd_log": None}]}})
    ['poorly determined direction: kd^1 (sd of its log unbounded: the data do not determine it)']
    """
    notes = []
    ident = fit.get("identifiability", {}) or {}
    for d in ident.get("sloppy_directions", []) or []:
        sd = _figure(d.get("sd_log"), ".3g", "")
        notes.append(f"poorly determined direction: {d.get('combination', d)} (sd of its log "
                     + (sd if sd else "unbounded: the data do not determine it") + ")")
    for name in ident.get("prior_dominated", []) or []:
        notes.append(f"{name}: the posterior is no narrower than the prior")
    for combo in ident.get("identifiable_combinations", []) or []:
        notes.append(f"identifiable combination: {combo}")
    for x in ident.get("lumped_parameters", []) or []:
        notes.append(f"lumped parameter of the rate law {x['name']} = {x['expression']}: "
                     f"median {_figure(x.get('median'))} (95 % HDI "
                     f"{_figure(x.get('hdi_low'))} to {_figure(x.get('hdi_high'))}), "
                     + ("determined" if x.get("determined") else "NOT determined"))
    for h in fit.get("half_conversion", []) or []:
        notes.append(
            f"half-life of {h['species']} under the conditions of run {h['run']}: "
            + (f"{_figure(h['median'])} s (95 % HDI {_figure(h.get('hdi_low'))} to "
               f"{_figure(h.get('hdi_high'))})"
               if h.get("median") is not None else
               f"not reached by {100 * h['reached']:.0f} % of the draws within "
               f"{_figure(h.get('horizon'))} s"))
    return notes
