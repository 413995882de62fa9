"""The report's tables as plain rows of text, shared by the HTML and Markdown writers.

Numbers are shown with four significant figures (three for uncertainties) in plain
or scientific notation as their size requires; a missing value is an en dash.

Examples
--------
>>> format_number(0.000123456), format_number(1234.5), format_number(None)
('1.235e-04', '1234', '–')
>>> table = parameter_table([ParameterRow("k1", 2.0, 1.5, 2.6, 2.01, 0.2, "1/s")])
>>> table.header[:3], table.rows[0][:4]
(['parameter', 'unit', 'median'], ['k1', '1/s', '2', '1.5 – 2.6'])
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

from mechfit.report.data import CandidateReport, ParameterRow, ResidualDiagnostic

MISSING = "–"


def format_number(value, digits: int = 4) -> str:
    """``value`` with ``digits`` significant figures; ``–`` for None or NaN."""
    if value is None:
        return MISSING
    if isinstance(value, str):
        return value
    x = float(value)
    if math.isnan(x):
        return MISSING
    if math.isinf(x):
        return "∞" if x > 0 else "-∞"
    if x == 0:
        return "0"
    magnitude = math.floor(math.log10(abs(x)))
    if magnitude < -3 or magnitude >= digits + 1:
        return f"{x:.{digits - 1}e}"
    decimals = max(digits - 1 - magnitude, 0)
    text = f"{x:.{decimals}f}"
    if "." in text:
        text = text.rstrip("0").rstrip(".")
    return text


@dataclass
class Table:
    """A header and rows of text (all rows as long as the header)."""

    header: list[str]
    rows: list[list[str]]


def ranking_table(candidates: Sequence[CandidateReport]) -> Table:
    """Rank, candidate, criteria, weight and verdict; extra columns after the fixed ones."""
    extra: list[str] = []
    for c in candidates:
        extra += [k for k in c.ranking.extra if k not in extra]
    header = ["rank", "mechanism", "variant", "parameters", "max ln L", "AICc", "BIC",
              "elpd LOO (SE)", "weight", *extra, "verdict"]
    rows = []
    for i, c in enumerate(candidates, start=1):
        r = c.ranking
        loo = format_number(r.elpd_loo)
        if r.elpd_loo is not None and r.elpd_loo_se is not None:
            loo += f" ({format_number(r.elpd_loo_se, 3)})"
        rows.append([str(i), r.name, r.variant, str(r.n_parameters),
                     format_number(r.log_likelihood_max), format_number(r.aicc),
                     format_number(r.bic), loo, format_number(r.weight, 3),
                     *[format_number(r.extra.get(k)) for k in extra], r.verdict or MISSING])
    return Table(header, rows)


def parameter_table(parameters: Sequence[ParameterRow]) -> Table:
    """Posterior median and 95% HDI, maximum-likelihood value ± SE, per parameter."""
    header = ["parameter", "unit", "median", "95% HDI", "MLE", "± SE", "note"]
    rows = []
    for p in parameters:
        hdi = MISSING
        if p.hdi_low is not None and p.hdi_high is not None:
            hdi = f"{format_number(p.hdi_low)} – {format_number(p.hdi_high)}"
        rows.append([p.name, p.unit or MISSING, format_number(p.median), hdi,
                     format_number(p.mle), format_number(p.mle_se, 3), p.note])
    return Table(header, rows)


def diagnostics_table(diagnostics: Sequence[ResidualDiagnostic]) -> Table:
    """Runs-test p, lag-1 autocorrelation, Durbin–Watson and the flag, per run."""
    header = ["run", "observable", "runs test p", "lag-1 autocorrelation", "Durbin–Watson",
              "structured", "note"]
    rows = [[d.run, d.observable, format_number(d.runs_test_p, 3),
             format_number(d.lag1_autocorrelation, 3), format_number(d.durbin_watson, 3),
             "yes" if d.structured else "no", d.note] for d in diagnostics]
    return Table(header, rows)


def energy_table(levels) -> Table:
    """The energy levels of :func:`mechfit.report.energetics.energy_levels` in kJ/mol."""
    header = ["level", "kind", "G / (kJ/mol)", "relative to", "note"]
    rows = [[lv.name, "transition state" if lv.kind == "transition" else "state",
             MISSING if lv.energy is None else format_number(lv.energy / 1e3, 3),
             lv.reference, lv.note] for lv in levels]
    return Table(header, rows)
