"""Derived rate laws typeset offline with matplotlib's mathtext (a subset of TeX).

No TeX installation, web script or web font is used: mathtext lays the formula out
with the DejaVu fonts matplotlib ships, and the SVG writer turns the glyphs into
paths, so the formula displays anywhere. LaTeX that mathtext cannot read raises
:class:`RateLawTypesetError`; the writers then print the source text instead and
say so.

Examples
--------
>>> fig = plot_rate_law(r"v = \\frac{k_{2} [\\mathrm{E}]_0 [\\mathrm{S}]}{K_M + [\\mathrm{S}]}")
>>> width, height = fig.get_size_inches()
>>> bool(width > height > 0)
True
"""

from __future__ import annotations

from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

from mechfit.report.errors import ReportError
from mechfit.report.figures.canvas import STYLE, styled

#: padding around the formula, inches
PAD = 0.06


class RateLawTypesetError(ReportError):
    """mathtext could not read a LaTeX string (the message quotes it)."""


@styled
def plot_rate_law(latex: str, *, fontsize: float = 16.0) -> Figure:
    """A figure just large enough for the formula ``latex`` (without ``$`` signs)."""
    text = latex.strip()
    if text.startswith("$") and text.endswith("$"):
        text = text.strip("$")
    if not text:
        raise RateLawTypesetError("rate law: the LaTeX string is empty")
    fig = Figure(figsize=(1.0, 1.0))
    canvas = FigureCanvasAgg(fig)
    label = fig.text(0, 0, f"${text}$", fontsize=fontsize, ha="left", va="bottom")
    try:
        extent = label.get_window_extent(canvas.get_renderer())
    except ValueError as err:
        first = str(err).strip().splitlines()
        raise RateLawTypesetError(f"rate law {latex} cannot be typeset: "
                                  f"{first[-1] if first else err}") from None
    dpi = fig.dpi
    width, height = extent.width / dpi + 2 * PAD, extent.height / dpi + 2 * PAD
    fig.set_size_inches(width, height)
    label.set_position((PAD / width, PAD / height - extent.y0 / dpi / height))
    return fig


__all__ = ["plot_rate_law", "RateLawTypesetError", "STYLE"]
