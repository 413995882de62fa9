"""The report's content, assembled once from :class:`ReportData` for every writer.

:func:`build_content` draws every figure (PNG bytes, and SVG for rate laws), builds
every table and collects the text of each section into a plain dictionary; the HTML
and Markdown templates and the JSON writer only lay that dictionary out, so the
three files always say the same thing.

Sections, in order (our own headings): Summary and verdicts; Parameters; Fits to
the data; Residuals; Identifiability; Temperature dependence; Network and energy
profile; Rate laws; Next experiments (only when suggestions are given); Cautions.
"""

from __future__ import annotations

import base64
import re
from dataclasses import dataclass

from mechfit.report.cautions import cautions
from mechfit.report.data import CandidateReport, ReportData
from mechfit.report.energetics import energy_levels
from mechfit.report.figures.canvas import figure_to_png, figure_to_svg
from mechfit.report.figures.energy_profile import plot_energy_profile
from mechfit.report.figures.network import plot_network
from mechfit.report.figures.posterior import plot_pair, posterior_draws
from mechfit.report.figures.predictive import plot_predictive_bands, plot_residuals
from mechfit.report.figures.rate_law import RateLawTypesetError, plot_rate_law
from mechfit.report.figures.temperature import plot_temperature_dependence
from mechfit.report.figures.weights import plot_model_weights
from mechfit.report.tables import (
    diagnostics_table,
    energy_table,
    parameter_table,
    ranking_table,
)

#: the section headings, in order: (anchor, heading)
SECTIONS = (
    ("summary", "Summary and verdicts"),
    ("parameters", "Parameters"),
    ("fits", "Fits to the data"),
    ("residuals", "Residuals"),
    ("identifiability", "Identifiability"),
    ("temperature", "Temperature dependence"),
    ("network", "Network and energy profile"),
    ("rate-laws", "Rate laws"),
    ("next-experiments", "Next experiments"),
    ("cautions", "Cautions"),
)


@dataclass
class RenderedFigure:
    """A drawn figure: file stem, caption, PNG bytes and (for formulas) SVG text."""

    slug: str
    caption: str
    png: bytes
    svg: str | None = None

    @property
    def png_uri(self) -> str:
        """The PNG as a ``data:`` URI for inlining."""
        return "data:image/png;base64," + base64.b64encode(self.png).decode("ascii")

    @property
    def svg_uri(self) -> str | None:
        """The SVG as a ``data:`` URI for inlining (formulas only)."""
        if self.svg is None:
            return None
        return "data:image/svg+xml;base64," + base64.b64encode(
            self.svg.encode("utf-8")).decode("ascii")

    @property
    def png_name(self) -> str:
        """File name of the PNG beside the Markdown report."""
        return f"{self.slug}.png"


def slug(text: str) -> str:
    """A file-name and anchor-safe form of ``text``.

    Examples
    --------
    >>> slug("Ping-pong (steady state)")
    'ping-pong-steady-state'
    """
    out = re.sub(r"[^a-z0-9]+", "-", text.lower()).strip("-")
    return out or "x"


class _Figures:
    def __init__(self, dpi: float) -> None:
        self.dpi = dpi
        self.taken: set[str] = set()
        self.all: list[RenderedFigure] = []

    def add(self, stem: str, caption: str, figure, *, svg: bool = False) -> RenderedFigure:
        rendered = RenderedFigure(slug(stem), caption, figure_to_png(figure, self.dpi),
                                  figure_to_svg(figure) if svg else None)
        figure.clear()
        return self.keep(rendered)

    def keep(self, rendered: RenderedFigure) -> RenderedFigure:
        """Add a drawn figure, renamed ``name-2``, ``name-3``... if its name is taken."""
        base, n = rendered.slug, 2
        while rendered.slug in self.taken:
            rendered.slug, n = f"{base}-{n}", n + 1
        self.taken.add(rendered.slug)
        self.all.append(rendered)
        return rendered


def _verdict_groups(candidates: list[CandidateReport]) -> list[dict]:
    groups: dict[str, list[str]] = {}
    for c in candidates:
        groups.setdefault(c.ranking.verdict or "no verdict given", []).append(c.key)
    return [{"verdict": v, "candidates": keys} for v, keys in groups.items()]


def _candidate(c: CandidateReport, figures: _Figures, ranges, pair: bool) -> dict:
    out: dict = {"key": c.key, "anchor": slug(c.key), "name": c.name, "variant": c.variant,
                 "verdict": c.ranking.verdict, "verdict_reason": c.ranking.verdict_reason,
                 "parameters": parameter_table(c.parameters) if c.parameters else None,
                 "identifiability_notes": list(c.identifiability_notes),
                 "approximation_notes": list(c.approximation_notes)}
    unit = ranges.time_unit
    out["fit_figure"] = out["residual_figure"] = None
    if c.runs:
        out["fit_figure"] = figures.add(
            f"fit-{c.key}", f"{c.key}: data (points) against the posterior predictive median "
            "(line) with 50% and 95% bands, one panel per run and observable.",
            plot_predictive_bands(c.runs, time_unit=unit))
        out["residual_figure"] = figures.add(
            f"residuals-{c.key}", f"{c.key}: residuals (observed minus fitted) against time.",
            plot_residuals(c.runs, time_unit=unit))
    out["diagnostics"] = (diagnostics_table(c.residual_diagnostics)
                          if c.residual_diagnostics else None)
    out["structured_runs"] = [f"{d.run} ({d.observable})" for d in c.residual_diagnostics
                              if d.structured]
    out["pair_figure"] = None
    if pair and c.posterior is not None:
        out["pair_figure"] = figures.add(
            f"pairs-{c.key}", f"{c.key}: pairs of posterior draws (hexagonal bins) and each "
            "parameter's histogram.", plot_pair(c.posterior, c.pair_variables))
    out["temperature_figures"] = []
    if c.temperature_dependence and ranges.temperature_varies:
        for kind, words in (("arrhenius", "Arrhenius plot, ln k against 1/T"),
                            ("eyring", "Eyring plot, ln(k/T) against 1/T")):
            series = [s for s in c.temperature_dependence if s.kind == kind]
            if series:
                out["temperature_figures"].append(figures.add(
                    f"{kind}-{c.key}", f"{c.key}: {words}; posterior median with 50% and 95% "
                    "bands.", plot_temperature_dependence(series)))
    out["energy_figure"] = out["energy_levels"] = out["energy_table"] = None
    if c.energy_profile is not None:
        levels = energy_levels(c.energy_profile)
        out["energy_levels"] = levels
        out["energy_table"] = energy_table(levels)
        out["energy_figure"] = figures.add(
            f"energy-{c.key}", f"{c.key}: Gibbs-energy profile from the fitted barriers and the "
            "equilibrium constants of two-way steps.",
            plot_energy_profile(c.energy_profile, title=c.key))
    out["rate_laws"] = []
    for law in c.rate_laws:
        entry = {"label": law.label, "latex": law.latex, "description": law.description,
                 "figure": None, "error": ""}
        try:
            entry["figure"] = figures.add(f"rate-law-{c.key}-{law.label}", law.label,
                                          plot_rate_law(law.latex), svg=True)
        except RateLawTypesetError as err:
            entry["error"] = f"could not be typeset ({err}); the LaTeX source is shown."
        out["rate_laws"].append(entry)
    return out


def _candidate_alone(c: CandidateReport, ranges, pair: bool,
                     dpi: float) -> tuple[dict, list[RenderedFigure]]:
    """One candidate's section and its figures, drawn on their own (in a worker)."""
    figures = _Figures(dpi)
    return _candidate(c, figures, ranges, pair), figures.all


def _candidates(data: ReportData, pair_keys: set[str], dpi: float,
                workers: int) -> list[tuple[dict, list[RenderedFigure]]]:
    """Every candidate's section and figures, drawn in ``workers`` processes when there
    are several candidates (matplotlib takes about a second per grid of run panels)."""
    jobs = [(c, data.ranges, c.key in pair_keys, dpi) for c in data.candidates]
    if workers <= 1 or len(jobs) < 2:
        return [_candidate_alone(*job) for job in jobs]
    import dataclasses
    import multiprocessing

    # a worker needs the draws of the pair plot, not the whole InferenceData
    # (pointwise log-likelihoods and predictive draws would be pickled for nothing)
    jobs = [(dataclasses.replace(c, posterior=posterior_draws(c.posterior, c.pair_variables)
                                 if pair and c.posterior is not None else None),
             ranges, pair, dots) for c, ranges, pair, dots in jobs]
    from concurrent.futures import ProcessPoolExecutor

    with ProcessPoolExecutor(max_workers=min(workers, len(jobs)),
                             mp_context=multiprocessing.get_context("spawn")) as pool:
        return list(pool.map(_candidate_alone, *zip(*jobs, strict=True)))


def build_content(data: ReportData, *, dpi: float = 110, workers: int = 1) -> dict:
    """Every section's tables, texts and drawn figures, as a plain dictionary.

    ``workers`` > 1 draws the candidates' figures in that many processes; the content is
    the same either way.
    """
    figures = _Figures(dpi)
    weights_figure = None
    if data.weights:
        weights_figure = figures.add(
            "model-weights", "Model weights of each candidate, by kind of weight.",
            plot_model_weights(data.weights, order=[c.key for c in data.candidates]))
    with_posterior = [c for c in data.candidates if c.posterior is not None]
    pair_keys = {c.key for c in with_posterior[: max(data.pair_plot_candidates, 0)]}
    candidates = []
    for section, drawn in _candidates(data, pair_keys, dpi, workers):
        for figure in drawn:
            figures.keep(figure)
        candidates.append(section)
    networks = [{"name": name, "figure": figures.add(
        f"network-{name}", f"{name}: species (boxes) and steps (squares; hollow: two-way).",
        plot_network(graph, title=name))} for name, graph in data.networks.items()]
    varies = data.ranges.temperature_varies
    return {
        "title": data.title,
        "generated": data.generated,
        "invented": data.invented,
        "invented_note": data.invented_note,
        "sections": [{"anchor": a, "heading": h} for a, h in SECTIONS
                     if a != "next-experiments" or data.design_suggestions],
        "ranking": ranking_table(data.candidates),
        "verdict_groups": _verdict_groups(data.candidates),
        "verdict_notes": list(data.verdict_notes),
        "weights_figure": weights_figure,
        "candidates": candidates,
        "networks": networks,
        "temperature_varies": varies,
        "temperature_recorded": data.ranges.temperatures is not None,
        "any_temperature_figure": any(c["temperature_figures"] for c in candidates),
        "design_suggestions": list(data.design_suggestions),
        "cautions": cautions(data.ranges, invented=data.invented,
                             extra=list(data.extra_cautions)),
        "figures": figures.all,
    }
