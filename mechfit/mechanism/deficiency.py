"""Complexes, linkage classes, deficiency and weak reversibility.

Chemical reaction network theory (M. Feinberg, Foundations of Chemical Reaction
Network Theory, Springer 2019, chapters 2-3): the complexes are the distinct left
and right sides of the reactions; the linkage classes are the connected components
of the complex graph; the deficiency is ``n - l - s`` (complexes, linkage classes,
rank of the stoichiometric matrix); a network is weakly reversible when every
linkage class is strongly connected.

Examples
--------
>>> from mechfit import parse_mechanism
>>> d = analyse_complexes(parse_mechanism("E + S <=> ES @ k1, k_1\\nES -> E + P @ k2"))
>>> d.deficiency, d.weakly_reversible
(0, False)
"""

from __future__ import annotations

from dataclasses import dataclass

import networkx as nx
import numpy as np

from mechfit.mechanism.model import Mechanism, Side
from mechfit.mechanism.network import stoichiometric_matrix


def _complex_text(side: Side) -> str:
    if not side:
        return "0"
    return " + ".join(n if c == 1 else f"{c} {n}" for n, c in sorted(side))


@dataclass(frozen=True)
class ComplexAnalysis:
    complexes: tuple[str, ...]
    linkage_classes: tuple[tuple[str, ...], ...]
    rank: int
    deficiency: int
    weakly_reversible: bool
    graph: nx.DiGraph


def complex_graph(mech: Mechanism) -> nx.DiGraph:
    """Directed graph of complexes (nodes are complex texts such as ``'E + S'``)."""
    g = nx.DiGraph()
    for r in mech.reactions():
        a, b = _complex_text(r.reactants), _complex_text(r.products)
        g.add_edge(a, b)
    return g


def analyse_complexes(mech: Mechanism) -> ComplexAnalysis:
    """Complexes, linkage classes, deficiency and weak reversibility of ``mech``."""
    g = complex_graph(mech)
    n = stoichiometric_matrix(mech)
    rank = int(np.linalg.matrix_rank(n)) if n.size else 0
    classes = [tuple(sorted(c)) for c in nx.weakly_connected_components(g)]
    classes.sort()
    weak = all(nx.is_strongly_connected(g.subgraph(c)) for c in classes)
    complexes = tuple(g.nodes)
    return ComplexAnalysis(complexes, tuple(classes), rank,
                           len(complexes) - len(classes) - rank, weak, g)
