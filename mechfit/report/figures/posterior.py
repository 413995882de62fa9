"""Pair plot of a candidate's posterior: histograms on the diagonal, hexbin densities below.

Takes an :class:`arviz.InferenceData` (its ``posterior`` group; chains and draws are
pooled) or a plain mapping of parameter name -> 1-d draws. Parameters spanning more
than two decades are shown on a log10 axis, as rate constants usually are.

Examples
--------
>>> import numpy as np
>>> rng = np.random.default_rng(0)
>>> draws = {"k1": rng.lognormal(0, 0.1, 200), "k2": rng.normal(5, 1, 200)}
>>> fig = plot_pair(draws)
>>> len(fig.axes)
3
"""

from __future__ import annotations

import os
from collections.abc import Mapping, Sequence

import numpy as np
from matplotlib.figure import Figure

from mechfit.infer.diagnostics import arviz
from mechfit.report.errors import ReportError
from mechfit.report.figures.canvas import BAND_COLOUR, new_figure, styled

#: at most this many parameters in one pair plot (the grid grows as its square)
MAX_VARIABLES = 6


# one quiet import of arviz for the whole package (see mechfit.infer.diagnostics)
arviz_module = arviz


def load_posterior(path: str | os.PathLike):
    """InferenceData from a netCDF file (``posterior.nc``), with a clear error if unreadable."""
    try:
        return arviz_module().from_netcdf(str(path))
    except (OSError, ValueError) as err:
        raise ReportError(f"posterior file {str(path)!r} cannot be read as arviz "
                          f"InferenceData (netCDF): {err}") from None


def posterior_draws(posterior, variables: Sequence[str] | None = None) -> dict[str, np.ndarray]:
    """Pooled 1-d draws per scalar parameter from InferenceData, a netCDF path or a mapping.

    Raises :class:`ReportError` naming a parameter that is missing or not scalar.

    Examples
    --------
    >>> sorted(posterior_draws({"a": [1.0, 2.0], "b": [3.0, 4.0]}, ["b"]))
    ['b']
    """
    if isinstance(posterior, (str, os.PathLike)):
        posterior = load_posterior(posterior)
    if isinstance(posterior, Mapping) and not hasattr(posterior, "posterior"):
        source = {name: np.asarray(v, dtype=float) for name, v in posterior.items()}
        names = list(source) if variables is None else list(variables)
        out = {}
        for name in names:
            if name not in source:
                raise ReportError(f"pair plot: no draws for parameter {name!r}; "
                                  f"have {', '.join(source)}")
            out[name] = source[name].reshape(-1)
        return out
    group = getattr(posterior, "posterior", None)
    if group is None:
        raise ReportError("pair plot: expected arviz InferenceData with a posterior group "
                          "or a mapping name -> draws")
    names = list(group.data_vars) if variables is None else list(variables)
    out = {}
    for name in names:
        if name not in group.data_vars:
            raise ReportError(f"pair plot: the posterior has no parameter {name!r}; "
                              f"have {', '.join(map(str, group.data_vars))}")
        values = np.asarray(group[name].values, dtype=float)
        if values.ndim > 2:
            raise ReportError(f"pair plot: parameter {name!r} is not scalar "
                              f"(shape {values.shape[2:]} per draw)")
        out[name] = values.reshape(-1)
    return out


def _transform(values: np.ndarray) -> tuple[np.ndarray, bool]:
    finite = values[np.isfinite(values)]
    if finite.size and finite.min() > 0 and finite.max() / finite.min() > 100:
        return np.log10(values), True
    return values, False


@styled
def plot_pair(posterior, variables: Sequence[str] | None = None, *,
              size: float = 1.45, gridsize: int = 25) -> Figure:
    """Pair plot of up to :data:`MAX_VARIABLES` parameters of one posterior.

    Parameters
    ----------
    posterior
        :class:`arviz.InferenceData`, the path of one saved as netCDF, or a mapping
        name -> draws.
    variables
        Parameters to show (default: all, at most :data:`MAX_VARIABLES`).
    """
    draws = posterior_draws(posterior, variables)
    names = list(draws)[:MAX_VARIABLES]
    if not names:
        raise ReportError("pair plot: no parameters to draw")
    shown = {}
    for name in names:
        values, logged = _transform(draws[name])
        shown[name] = (values, f"log10 {name}" if logged else name)
    n = len(names)
    fig = new_figure(max(size * n, 2.0), max(size * n, 2.0))
    for i, row in enumerate(names):
        for j, column in enumerate(names[: i + 1]):
            ax = fig.add_subplot(n, n, i * n + j + 1)
            x, xlabel = shown[column]
            if i == j:
                ax.hist(x[np.isfinite(x)], bins=25, color=BAND_COLOUR, alpha=0.7)
                ax.set_yticks([])
                ax.set_title(xlabel, fontsize=7)
            else:
                y, ylabel = shown[row]
                keep = np.isfinite(x) & np.isfinite(y)
                ax.hexbin(x[keep], y[keep], gridsize=gridsize, cmap="Blues", mincnt=1,
                          linewidths=0)
                if j == 0:
                    ax.set_ylabel(ylabel)
                else:
                    ax.set_yticklabels([])
            if i == n - 1:
                ax.set_xlabel(xlabel)
            else:
                ax.set_xticklabels([])
            ax.tick_params(labelsize=6)
    if len(draws) > len(names):
        fig.suptitle(f"first {len(names)} of {len(draws)} parameters", fontsize=7)
    return fig
