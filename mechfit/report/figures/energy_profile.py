"""Reaction Gibbs-energy profile drawn from :func:`mechfit.report.energetics.energy_levels`.

States are short horizontal bars; a transition state is the top of a smooth hump
between two states. A step without a barrier estimate is a dashed link marked
"no barrier estimate"; a cut after a one-way step (its dG0 unknown) is a dotted
vertical line, and the levels after it are relative to the state it leads to.

Examples
--------
>>> from mechfit.report.data import EnergyProfile, EnergyProfileStep
>>> profile = EnergyProfile("A", [EnergyProfileStep("s1", "B", barrier=50e3,
...                                                 equilibrium_constant=5.0)])
>>> fig = plot_energy_profile(profile)
>>> "kJ/mol" in fig.axes[0].get_ylabel()
True
"""

from __future__ import annotations

import numpy as np
from matplotlib.figure import Figure

from mechfit.report.data import EnergyProfile
from mechfit.report.energetics import energy_levels
from mechfit.report.figures.canvas import ACCENT_COLOUR, BAND_COLOUR, new_figure, styled

HALF_BAR = 0.3


def _hump(x0, e0, xt, et, x1, e1):
    left = np.linspace(0, 1, 30)
    xs = np.concatenate([x0 + HALF_BAR + (xt - x0 - HALF_BAR) * left,
                         xt + (x1 - HALF_BAR - xt) * left])
    ys = np.concatenate([e0 + (et - e0) * (1 - np.cos(np.pi * left)) / 2,
                         et + (e1 - et) * (1 - np.cos(np.pi * left)) / 2])
    return xs, ys


@styled
def plot_energy_profile(profile: EnergyProfile, *, title: str = "", width: float = 5.5,
                        height: float = 3.2) -> Figure:
    """The profile of one candidate's path at ``profile.temperature``."""
    levels = energy_levels(profile)
    fig = new_figure(width, height)
    ax = fig.add_subplot()
    states = [lv for lv in levels if lv.kind == "state"]
    transitions = [lv for lv in levels if lv.kind == "transition"]
    x_of = {}
    x = 0.0
    for i, state in enumerate(states):
        if i > 0 and state.segment != states[i - 1].segment:
            x += 0.5
        x_of[i] = x
        x += 2.0
    for i, state in enumerate(states):
        xs = x_of[i]
        e = state.energy / 1e3
        ax.plot([xs - HALF_BAR, xs + HALF_BAR], [e, e], color="#222222", linewidth=2)
        ax.annotate(f"{state.name}\n{e:.1f}", (xs, e), xytext=(0, -4),
                    textcoords="offset points", ha="center", va="top", fontsize=7,
                    linespacing=1.1)
    for i, ts in enumerate(transitions):
        before, after = states[i], states[i + 1]
        x0, x1 = x_of[i], x_of[i + 1]
        e0, e1 = before.energy / 1e3, after.energy / 1e3
        cut = after.segment != before.segment
        if cut:
            xc = x1 - 0.7
            ax.axvline(xc, color="#777777", linestyle=":", linewidth=1)
            ax.text(xc, 1.0, "  scale cut:\n  dG0 unknown", transform=ax.get_xaxis_transform(),
                    ha="left", va="top", fontsize=6.5, color="#555555")
        if ts.energy is None:
            stop = x1 - 0.7 if cut else x1 - HALF_BAR
            end = e0 if cut else e1
            ax.plot([x0 + HALF_BAR, stop], [e0, end], color=ACCENT_COLOUR,
                    linestyle="--", linewidth=0.9)
            ax.annotate(f"{ts.name}:\nno barrier estimate", ((x0 + HALF_BAR + stop) / 2,
                        max(e0, end)), xytext=(0, 3), textcoords="offset points",
                        ha="center", va="bottom", fontsize=6.5, color=ACCENT_COLOUR)
            continue
        et = ts.energy / 1e3
        xt = (x0 + x1) / 2
        if cut:
            xs, ys = _hump(x0, e0, xt, et, x1, et)
            ax.plot(xs[:30], ys[:30], color=BAND_COLOUR, linewidth=1.2)
        else:
            xs, ys = _hump(x0, e0, xt, et, x1, e1)
            ax.plot(xs, ys, color=BAND_COLOUR, linewidth=1.2)
        ax.text(xt, et, f"{ts.name}‡ {et:.1f}", ha="center", va="bottom", fontsize=7,
                color=BAND_COLOUR)
    ax.set_xticks([])
    ax.spines["bottom"].set_visible(False)
    ax.set_ylabel("Gibbs energy / (kJ/mol)")
    ax.margins(x=0.06, y=0.2)
    ax.set_title((title + "  " if title else "") + f"at {profile.temperature:.2f} K, "
                 "relative to " + profile.start, loc="left")
    return fig
