"""Arrhenius plot (ln k against 1/T) and Eyring plot (ln(k/T) against 1/T) with bands.

A straight line on the Arrhenius plot has slope -Ea/R; on the Eyring plot slope
-dH/R and intercept ln(k_B/h) + dS/R (IUPAC Gold Book, "Arrhenius equation",
"Eyring equation"). The bands are pointwise 50% and 95% intervals of the posterior
draws of k on the temperature grid.

Examples
--------
>>> import numpy as np
>>> from mechfit.report.data import TemperatureDependence
>>> T = np.linspace(290.0, 330.0, 5)
>>> draws = np.exp(-6000.0 / T)[None, :] * np.array([[0.9], [1.0], [1.1]])
>>> fig = plot_temperature_dependence([TemperatureDependence("k1", T, draws)])
>>> fig.axes[0].get_ylabel()
'ln k'
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from matplotlib.figure import Figure

from mechfit.report.data import TemperatureDependence
from mechfit.report.errors import ReportError
from mechfit.report.figures.canvas import DATA_COLOUR, new_figure, styled
from mechfit.report.figures.predictive import predictive_quantiles

COLOURS = ("#4c72b0", "#dd8452", "#55a868", "#c44e52", "#8172b3", "#937860")


def plot_coordinates(series: TemperatureDependence) -> tuple[np.ndarray, np.ndarray]:
    """x = 1000/T (1/K) and y draws: ln k (Arrhenius) or ln(k/T) (Eyring).

    Examples
    --------
    >>> import numpy as np
    >>> s = TemperatureDependence("k", np.array([250.0, 500.0]), np.array([[1.0, 500.0]]),
    ...                           kind="eyring")
    >>> x, y = plot_coordinates(s)
    >>> x.tolist(), np.round(y, 6).tolist()
    ([4.0, 2.0], [[-5.521461, 0.0]])
    """
    x = 1000.0 / series.temperature
    if series.kind == "eyring":
        return x, np.log(series.rate_draws / series.temperature[None, :])
    return x, np.log(series.rate_draws)


def _reciprocal(values):
    values = np.asarray(values, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(values == 0, np.inf, 1000.0 / values)


@styled
def plot_temperature_dependence(series: Sequence[TemperatureDependence], *,
                                width: float = 4.2, height: float = 3.0) -> Figure:
    """All constants of one candidate on one plot; all must be of the same kind."""
    if not series:
        raise ReportError("temperature plot: no rate constants given")
    kinds = {s.kind for s in series}
    if len(kinds) > 1:
        raise ReportError("temperature plot: mix of Arrhenius and Eyring series; draw them "
                          "in separate figures")
    kind = kinds.pop()
    fig = new_figure(width, height)
    ax = fig.add_subplot()
    for i, s in enumerate(series):
        colour = COLOURS[i % len(COLOURS)]
        x, y = plot_coordinates(s)
        q = predictive_quantiles(y)
        order = np.argsort(x)
        ax.fill_between(x[order], q["low95"][order], q["high95"][order], color=colour,
                        alpha=0.15, linewidth=0)
        ax.fill_between(x[order], q["low50"][order], q["high50"][order], color=colour,
                        alpha=0.3, linewidth=0)
        label = s.constant + (f" / {s.unit}" if s.unit else "")
        ax.plot(x[order], q["median"][order], color=colour, linewidth=1.2, label=label)
        if s.point_temperature is not None and s.point_rate is not None:
            pt = np.asarray(s.point_temperature, dtype=float)
            pk = np.asarray(s.point_rate, dtype=float)
            py = np.log(pk / pt) if kind == "eyring" else np.log(pk)
            ax.plot(1000.0 / pt, py, "o", color=DATA_COLOUR, markersize=3)
    ax.set_xlabel("1000 K / T")
    ax.set_ylabel("ln(k/T)" if kind == "eyring" else "ln k")
    top = ax.secondary_xaxis("top", functions=(_reciprocal, _reciprocal))
    top.set_xlabel("T / K")
    ax.legend(loc="best", frameon=False)
    return fig
