"""The King–Altman method: steady state of a closed cycle of catalyst forms.

When the forms of a catalyst (enzyme, metal complex) are converted into each other
by pseudo-first-order transitions (each reaction has exactly one form among its
reactants and one among its products, both with coefficient 1), the steady-state
fraction of form *i* is

.. math::  [X_i]/[X]_{tot} = D_i / \\sum_j D_j,

where :math:`D_i` is the sum, over all spanning trees of the transition graph
directed into *i*, of the product of the pseudo-first-order rate constants on the
tree's edges (E. L. King and C. Altman, J. Phys. Chem. 60 (1956) 1375; the
matrix-tree theorem of graph theory). The trees are enumerated with networkx as
spanning arborescences of the reversed graph. The result is free of cancellation,
which keeps large cycles fast; :func:`tree_count` lets callers fall back to a linear
solve when the number of trees explodes.

Examples
--------
>>> import sympy
>>> k1, k2, k3 = sympy.symbols("k1 k2 k3", positive=True)
>>> weights = king_altman_weights(["E", "ES"], [("E", "ES", k1), ("ES", "E", k2 + k3)])
>>> weights["E"], weights["ES"]
(k2 + k3, k1)
"""

from __future__ import annotations

from collections.abc import Sequence

import networkx as nx
import numpy as np
import sympy
from networkx.algorithms.tree.branchings import ArborescenceIterator


def transition_graph(forms: Sequence[str],
                     transitions: Sequence[tuple[str, str, sympy.Expr]]) -> nx.DiGraph:
    """Directed graph of the forms; parallel transitions are summed into one edge."""
    g = nx.DiGraph()
    g.add_nodes_from(forms)
    for a, b, w in transitions:
        if a == b:
            continue
        if g.has_edge(a, b):
            g[a][b]["rate"] += w
        else:
            g.add_edge(a, b, rate=w, unit=1)
    return g


def tree_count(g: nx.DiGraph) -> int:
    """Number of spanning in-trees, summed over all roots (matrix-tree theorem)."""
    nodes = list(g.nodes)
    index = {n: i for i, n in enumerate(nodes)}
    lap = np.zeros((len(nodes), len(nodes)))
    for a, b in g.edges:
        lap[index[a], index[a]] += 1.0
        lap[index[a], index[b]] -= 1.0
    total = 0.0
    for i in range(len(nodes)):
        keep = [k for k in range(len(nodes)) if k != i]
        total += np.linalg.det(lap[np.ix_(keep, keep)]) if keep else 1.0
    return int(round(total))


def king_altman_weights(
    forms: Sequence[str], transitions: Sequence[tuple[str, str, sympy.Expr]],
) -> dict[str, sympy.Expr]:
    """The King–Altman determinants :math:`D_i` of every form (unnormalised).

    Parameters
    ----------
    forms
        The catalyst forms (nodes).
    transitions
        ``(from, to, pseudo_first_order_constant)`` for every reaction direction.

    Returns
    -------
    dict
        Form -> sum over spanning trees directed into it of the product of the edge
        constants. A form no tree reaches gets 0.
    """
    g = transition_graph(forms, transitions)
    out = {f: sympy.Integer(0) for f in forms}
    if len(forms) == 1:
        out[forms[0]] = sympy.Integer(1)
        return out
    reverse = g.reverse(copy=True)
    for tree in ArborescenceIterator(reverse, weight="unit"):
        root = next(n for n in tree.nodes if tree.in_degree(n) == 0)
        term = sympy.Integer(1)
        for a, b in tree.edges:  # reversed edge b -> a is the transition a <- b
            term *= g[b][a]["rate"]
        out[root] += term
    return out
