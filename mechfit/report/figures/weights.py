"""Bar chart of model weights per candidate, one group of bars per weight kind.

Examples
--------
>>> fig = plot_model_weights({"Akaike": {"A (full)": 0.7, "B (full)": 0.3}})
>>> [t.get_text() for t in fig.axes[0].get_yticklabels()]
['A (full)', 'B (full)']
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np
from matplotlib.figure import Figure

from mechfit.report.errors import ReportError
from mechfit.report.figures.canvas import new_figure, styled

#: colours of the weight kinds, in order
KIND_COLOURS = ("#4c72b0", "#dd8452", "#55a868", "#8172b3")


@styled
def plot_model_weights(weights: Mapping[str, Mapping[str, float]], *,
                       order: list[str] | None = None, width: float = 5.5) -> Figure:
    """Horizontal bars: for each candidate (best at the top), its weight of each kind.

    Parameters
    ----------
    weights
        Weight kind (e.g. ``"Akaike"``, ``"stacking"``, ``"pseudo-BMA"``) ->
        candidate -> weight in [0, 1].
    order
        Candidates from best to worst (default: order of first appearance).
    """
    if not weights:
        raise ReportError("model weights: no weights given")
    if order is None:
        order = []
        for per_kind in weights.values():
            order += [c for c in per_kind if c not in order]
    for kind, per_kind in weights.items():
        for candidate, w in per_kind.items():
            if not (0.0 <= float(w) <= 1.0 + 1e-9):
                raise ReportError(f"model weights: {kind} weight of {candidate!r} is {w}; "
                                  "weights lie between 0 and 1")
    kinds = list(weights)
    height = 0.8 / len(kinds)
    fig = new_figure(width, 0.5 + 0.32 * len(order) * max(1, len(kinds) * 0.6))
    ax = fig.add_subplot()
    positions = np.arange(len(order))
    for i, kind in enumerate(kinds):
        values = [float(weights[kind].get(c, np.nan)) for c in order]
        ax.barh(positions - 0.4 + height * (i + 0.5), values, height=height * 0.9,
                color=KIND_COLOURS[i % len(KIND_COLOURS)], label=kind)
    ax.set_yticks(positions, order)
    ax.invert_yaxis()
    ax.set_xlim(0, 1)
    ax.set_xlabel("weight")
    ax.legend(loc="lower right", frameon=False)
    return fig
