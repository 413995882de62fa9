"""The reaction network drawn from its bipartite species-step graph.

Species are boxed names; steps are small squares labelled with the step label.
Arrows run from reactants to the step and from the step to products; the arrows of a
two-way step have heads at both ends and its square is hollow. Coefficients above
one are written on the arrow. The layout is networkx's Kamada-Kawai layout
(Kamada & Kawai, Inf. Process. Lett. 31 (1989) 7), which is deterministic.

Examples
--------
>>> from mechfit import parse_mechanism
>>> from mechfit.mechanism import species_step_graph
>>> g = species_step_graph(parse_mechanism("b: E + S <=> ES @ k1, k_1\\nc: ES -> E + P @ k2"))
>>> fig = plot_network(g, title="invented example")
>>> sorted(t.get_text() for t in fig.axes[0].texts if t.get_text() in ("b", "c", "ES"))
['ES', 'b', 'c']
"""

from __future__ import annotations

import networkx as nx
import numpy as np
from matplotlib.figure import Figure

from mechfit.report.errors import ReportError
from mechfit.report.figures.canvas import BAND_COLOUR, DATA_COLOUR, new_figure, styled


def network_layout(graph: nx.DiGraph) -> dict:
    """Node -> (x, y) positions: Kamada-Kawai per connected part, parts side by side."""
    parts = sorted(nx.connected_components(graph.to_undirected()),
                   key=lambda nodes: sorted(map(str, nodes)))
    positions: dict = {}
    offset = 0.0
    for nodes in parts:
        sub = graph.subgraph(nodes).to_undirected()
        if len(sub) == 1:
            local = {next(iter(sub)): np.zeros(2)}
        else:
            local = nx.kamada_kawai_layout(sub)
        xy = np.array(list(local.values()), dtype=float)
        xy -= xy.min(axis=0)
        for node, p in zip(local, xy, strict=True):
            positions[node] = (p[0] + offset, p[1])
        offset += float(xy[:, 0].max()) + 0.8
    return positions


@styled
def plot_network(graph: nx.DiGraph, *, title: str = "", width: float | None = None,
                 height: float | None = None) -> Figure:
    """Draw a species-step graph (nodes ``("species", name)`` and ``("step", label)``).

    The size grows with the number of nodes unless ``width`` and ``height`` (inches)
    are given.
    """
    if graph.number_of_nodes() == 0:
        raise ReportError("network plot: the graph has no nodes")
    for node in graph.nodes:
        if not (isinstance(node, tuple) and len(node) == 2 and node[0] in ("species", "step")):
            raise ReportError(f"network plot: node {node!r} is not ('species', name) or "
                              "('step', label); pass mechfit.mechanism.species_step_graph(m)")
    positions = network_layout(graph)
    n = graph.number_of_nodes()
    width = width or min(3.2 + 0.25 * n, 7.0)
    height = height or min(2.4 + 0.18 * n, 5.0)
    fig = new_figure(width, height)
    ax = fig.add_subplot()
    patches = {}
    for node, (x, y) in positions.items():
        kind, name = node
        if kind == "species":
            label = ax.text(x, y, str(name), ha="center", va="center", fontsize=8, zorder=3,
                            bbox={"boxstyle": "round,pad=0.3", "fc": "#eef2f8",
                                  "ec": BAND_COLOUR, "lw": 0.8})
            patches[node] = label.get_bbox_patch()
        else:
            two_way = bool(graph.nodes[node].get("reversible", False))
            ax.plot([x], [y], marker="s", markersize=6, zorder=3,
                    markerfacecolor="white" if two_way else "#555555",
                    markeredgecolor="#555555")
            ax.text(x, y - 0.045, str(name), ha="center", va="top", fontsize=7,
                    color="#333333", style="italic", zorder=4,
                    bbox={"boxstyle": "square,pad=0.05", "fc": "white", "ec": "none",
                          "alpha": 0.8})
    for (a, b), data in graph.edges.items():
        step = a if a[0] == "step" else b
        two_way = bool(graph.nodes[step].get("reversible", False))
        ax.annotate("", xy=positions[b], xytext=positions[a], zorder=2,
                    arrowprops={"arrowstyle": "<|-|>" if two_way else "-|>",
                                "color": "#555555", "linewidth": 0.9,
                                "patchA": patches.get(a), "patchB": patches.get(b),
                                "shrinkA": 2 if a in patches else 5,
                                "shrinkB": 2 if b in patches else 5,
                                "mutation_scale": 9})
        weight = data.get("weight", 1)
        if weight != 1:
            mid = (np.asarray(positions[a]) + np.asarray(positions[b])) / 2
            ax.text(mid[0], mid[1], str(weight), fontsize=7, color=DATA_COLOUR,
                    ha="center", va="center",
                    bbox={"boxstyle": "circle,pad=0.15", "fc": "white", "ec": "none"})
    xy = np.array(list(positions.values()))
    pad = 0.15
    ax.set_xlim(xy[:, 0].min() - pad, xy[:, 0].max() + pad)
    ax.set_ylim(xy[:, 1].min() - pad, xy[:, 1].max() + pad)
    ax.set_axis_off()
    ax.set_title((title + "\n" if title else "")
                 + "boxes: species; squares: steps (hollow: two-way)", fontsize=7.5)
    return fig
