"""Shared drawing helpers: figures without pyplot (Agg only), PNG and SVG output.

Figures are made with :class:`matplotlib.figure.Figure` directly, so no display,
GUI backend or global pyplot state is involved; saving renders with Agg (PNG) or
matplotlib's SVG writer with text turned into paths (no fonts needed to view it).

Examples
--------
>>> fig = new_figure(2.0, 1.5)
>>> ax = fig.add_subplot()
>>> _ = ax.plot([0, 1], [0, 1])
>>> figure_to_png(fig, dpi=40)[:8] == b"\\x89PNG\\r\\n\\x1a\\n"
True
"""

from __future__ import annotations

import io

from matplotlib.figure import Figure

#: colours used across the report (restrained: one hue for bands, dark for data)
BAND_COLOUR = "#4c72b0"
DATA_COLOUR = "#222222"
ACCENT_COLOUR = "#c44e52"
GRID_COLOUR = "#dddddd"

#: matplotlib settings applied to every report figure
STYLE = {
    "font.size": 8.0,
    "axes.titlesize": 8.5,
    "axes.labelsize": 8.0,
    "legend.fontsize": 7.0,
    "xtick.labelsize": 7.0,
    "ytick.labelsize": 7.0,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "svg.fonttype": "path",
    "svg.hashsalt": "mechfit",
}


def new_figure(width: float, height: float, *, layout: str | None = "constrained") -> Figure:
    """A blank figure of ``width`` x ``height`` inches with the report's style.

    ``layout=None`` leaves the placement of the axes to the caller (the grids of many
    small panels place them with fixed margins: matplotlib's constrained layout costs
    about a second for twenty panels).
    """
    import matplotlib

    with matplotlib.rc_context(STYLE):
        return Figure(figsize=(width, height), layout=layout)


def styled(function):
    """Run a drawing function under the report's matplotlib style."""
    import functools

    import matplotlib

    @functools.wraps(function)
    def wrapper(*args, **kwargs):
        with matplotlib.rc_context(STYLE):
            return function(*args, **kwargs)

    return wrapper


def figure_to_png(figure: Figure, dpi: float = 110) -> bytes:
    """The figure as PNG bytes (white background)."""
    import matplotlib

    buffer = io.BytesIO()
    with matplotlib.rc_context(STYLE):
        figure.savefig(buffer, format="png", dpi=dpi, facecolor="white")
    return buffer.getvalue()


def figure_to_svg(figure: Figure) -> str:
    """The figure as an SVG document string, text drawn as paths (no fonts needed)."""
    import matplotlib

    buffer = io.StringIO()
    with matplotlib.rc_context(STYLE):
        # no creation date: the same figure gives the same file
        figure.savefig(buffer, format="svg", transparent=True, metadata={"Date": None})
    return buffer.getvalue()
