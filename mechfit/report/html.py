"""The HTML report: one self-contained page rendered from ``templates/report.html.j2``.

Figures are inlined as ``data:`` URIs (PNG; formulas as SVG with glyphs as paths),
the stylesheet is inline, and the page has no script, external stylesheet, font or
image, so it works offline and prints as it shows.

Examples
--------
>>> import numpy as np
>>> from mechfit.report.data import CandidateReport, RankingRow, ReportData, StudyRanges
>>> row = RankingRow("A", "full", 2, -10.0, 24.0, 25.0, verdict="best supported")
>>> data = ReportData("Invented example", StudyRanges({"A": (0.1, 0.1)}, n_runs=1),
...                   [CandidateReport("A", "full", row)], invented=True)
>>> page = render_html(data, dpi=30)
>>> page.startswith("<!DOCTYPE html>"), "<script" in page, "Invented data." in page
(True, False, True)
"""

from __future__ import annotations

from pathlib import Path

import jinja2

from mechfit.report.content import build_content
from mechfit.report.data import ReportData

TEMPLATES = Path(__file__).resolve().parent / "templates"


def environment() -> jinja2.Environment:
    """The jinja2 environment of the HTML template (autoescape on, strict undefined)."""
    return jinja2.Environment(loader=jinja2.FileSystemLoader(str(TEMPLATES)), autoescape=True,
                              undefined=jinja2.StrictUndefined, keep_trailing_newline=True)


def render_html_content(content: dict) -> str:
    """The page from content built by :func:`mechfit.report.content.build_content`."""
    return environment().get_template("report.html.j2").render(**content)


def render_html(data: ReportData, *, dpi: float = 110) -> str:
    """The whole report as one HTML page."""
    return render_html_content(build_content(data, dpi=dpi))
