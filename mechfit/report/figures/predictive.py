"""Data against posterior predictive bands, and residuals, one panel per run and observable.

Bands are the central 50% and 95% intervals of the predictive draws at each time
(pointwise quantiles), with the median as a line: the usual posterior predictive check
(Gelman et al., *Bayesian Data Analysis*, 3rd ed., 2013, sec. 6.3).

Examples
--------
>>> import numpy as np
>>> from mechfit.report.data import ObservableSeries, RunFit
>>> t = np.linspace(0, 10, 6)
>>> draws = np.exp(-t)[None, :] * np.array([[0.9], [1.0], [1.1]])
>>> run = RunFit("r1", [ObservableSeries("A", t, np.exp(-t), predictive_draws=draws)])
>>> fig = plot_predictive_bands([run])
>>> len(fig.axes)
1
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from matplotlib.figure import Figure
from matplotlib.ticker import MaxNLocator

from mechfit.report.data import RunFit
from mechfit.report.figures.canvas import (
    ACCENT_COLOUR,
    BAND_COLOUR,
    DATA_COLOUR,
    GRID_COLOUR,
    new_figure,
    styled,
)

#: panels per row of a grid figure
COLUMNS = 3


def predictive_quantiles(draws: np.ndarray) -> dict[str, np.ndarray]:
    """Pointwise 2.5, 25, 50, 75 and 97.5 percentiles of draws (draws x points).

    Examples
    --------
    >>> q = predictive_quantiles(np.arange(101.0)[:, None])
    >>> float(q["median"][0]), float(q["low95"][0]), float(q["high50"][0])
    (50.0, 2.5, 75.0)
    """
    low95, low50, median, high50, high95 = np.percentile(
        np.asarray(draws, dtype=float), [2.5, 25, 50, 75, 97.5], axis=0)
    return {"low95": low95, "low50": low50, "median": median, "high50": high50,
            "high95": high95}


def _panels(runs: Sequence[RunFit]):
    return [(run, series) for run in runs for series in run.series]


#: margins of the panel grids, in inches: left (tick labels and axis label), right, top
#: (title), bottom (tick labels and axis label), and the space a legend row takes
MARGINS = {"left": 0.6, "right": 0.12, "top": 0.3, "bottom": 0.45, "legend": 0.3}


def _grid(n: int, panel_width: float, panel_height: float, *, legend: bool = False):
    """Rows of ``COLUMNS`` panels placed with fixed margins (no layout engine), each
    axis with at most about four ticks."""
    columns = min(COLUMNS, max(n, 1))
    rows = int(np.ceil(n / columns))
    extra = MARGINS["legend"] if legend else 0.0
    width, height = panel_width * columns, panel_height * rows + extra
    fig = new_figure(width, height, layout=None)
    gap_w = MARGINS["left"] + MARGINS["right"]
    gap_h = MARGINS["top"] + MARGINS["bottom"]
    fig.subplots_adjust(left=MARGINS["left"] / width, right=1.0 - MARGINS["right"] / width,
                        bottom=(MARGINS["bottom"] + extra) / height,
                        top=1.0 - MARGINS["top"] / height,
                        wspace=gap_w / (panel_width - gap_w),
                        hspace=gap_h / (panel_height - gap_h))
    axes = [fig.add_subplot(rows, columns, i + 1) for i in range(n)]
    for ax in axes:
        ax.xaxis.set_major_locator(MaxNLocator(4))
        ax.yaxis.set_major_locator(MaxNLocator(4))
    return fig, axes


def _title(run: RunFit, observable: str) -> str:
    text = f"{run.run}: {observable}"
    if run.temperature is not None:
        text += f"  ({run.temperature:.2f} K)"
    return text


@styled
def plot_predictive_bands(runs: Sequence[RunFit], *, time_unit: str = "s",
                          panel_width: float = 2.6, panel_height: float = 1.9) -> Figure:
    """One panel per run and observable: data as points, predictive median and bands.

    Parameters
    ----------
    runs
        The runs of one candidate, each with its observed series.
    time_unit
        Shown on the time axis.
    """
    panels = _panels(runs)
    fig, axes = _grid(len(panels), panel_width, panel_height, legend=True)
    for ax, (run, series) in zip(axes, panels, strict=True):
        if series.predictive_draws is not None:
            q = predictive_quantiles(series.predictive_draws)
            grid = series.prediction_time
            ax.fill_between(grid, q["low95"], q["high95"], color=BAND_COLOUR, alpha=0.18,
                            linewidth=0, label="95% band")
            ax.fill_between(grid, q["low50"], q["high50"], color=BAND_COLOUR, alpha=0.35,
                            linewidth=0, label="50% band")
            ax.plot(grid, q["median"], color=BAND_COLOUR, linewidth=1.2, label="median")
        if series.fitted is not None:
            ax.plot(series.time, series.fitted, color=ACCENT_COLOUR, linewidth=0.8,
                    linestyle="--", label="best fit")
        ax.plot(series.time, series.observed, "o", color=DATA_COLOUR, markersize=2.5,
                label="data")
        ax.set_title(_title(run, series.observable), loc="left")
        ax.set_xlabel(f"time / {time_unit}")
        ax.set_ylabel(series.unit or series.observable)
        ax.grid(color=GRID_COLOUR, linewidth=0.5)
    if axes:
        handles, labels = axes[0].get_legend_handles_labels()
        fig.legend(handles, labels, loc="lower center", ncols=len(labels), frameon=False)
    return fig


@styled
def plot_residuals(runs: Sequence[RunFit], *, time_unit: str = "s",
                   panel_width: float = 2.6, panel_height: float = 1.6) -> Figure:
    """One panel per run and observable: residuals (observed - fitted) against time."""
    panels = _panels(runs)
    fig, axes = _grid(len(panels), panel_width, panel_height)
    for ax, (run, series) in zip(axes, panels, strict=True):
        residuals = series.residuals
        ax.axhline(0.0, color=GRID_COLOUR, linewidth=1.0)
        ax.plot(series.time, residuals, "-", color=GRID_COLOUR, linewidth=0.6)
        ax.plot(series.time, residuals, "o", color=DATA_COLOUR, markersize=2.5)
        limit = float(np.nanmax(np.abs(residuals))) if residuals.size else 0.0
        if limit > 0:
            ax.set_ylim(-1.15 * limit, 1.15 * limit)
        ax.set_title(_title(run, series.observable), loc="left")
        ax.set_xlabel(f"time / {time_unit}")
        ax.set_ylabel("residual")
    return fig
