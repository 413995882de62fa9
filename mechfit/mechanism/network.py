"""The reaction network of a mechanism: stoichiometric matrix, graph, intermediates.

Examples
--------
>>> from mechfit import parse_mechanism
>>> m = parse_mechanism("E + S <=> ES @ k1, k_1\\nES -> E + P @ k2")
>>> stoichiometric_matrix(m).tolist()
[[-1, 1], [-1, 0], [1, -1], [0, 1]]
>>> intermediates(m)
('E', 'ES')
"""

from __future__ import annotations

import networkx as nx
import numpy as np

from mechfit.mechanism.model import Mechanism


def stoichiometric_matrix(mech: Mechanism) -> np.ndarray:
    """Integer matrix N (species x steps): N[i, j] is the net change of species i when
    step j runs forward once (products minus reactants)."""
    index = {s: i for i, s in enumerate(mech.species)}
    out = np.zeros((len(mech.species), len(mech.steps)), dtype=np.int64)
    for j, step in enumerate(mech.steps):
        for name, v in step.net().items():
            out[index[name], j] = v
    return out


def order_matrices(mech: Mechanism) -> tuple[np.ndarray, np.ndarray]:
    """Reactant and product coefficient matrices (species x reactions) for every
    direction in :meth:`Mechanism.reactions` order: the orders of mass action."""
    index = {s: i for i, s in enumerate(mech.species)}
    reactions = mech.reactions()
    left = np.zeros((len(mech.species), len(reactions)), dtype=np.int64)
    right = np.zeros_like(left)
    for j, r in enumerate(reactions):
        for name, c in r.reactants:
            left[index[name], j] += c
        for name, c in r.products:
            right[index[name], j] += c
    return left, right


def species_step_graph(mech: Mechanism) -> nx.DiGraph:
    """The bipartite species-step graph.

    Nodes are ``("species", name)`` and ``("step", label)``; an edge runs from each
    reactant to its step and from the step to each product, with the coefficient as
    ``weight``. Step nodes carry ``reversible`` and ``equation`` attributes.
    """
    g = nx.DiGraph()
    for s in mech.species:
        g.add_node(("species", s), kind="species", bipartite=0)
    for step in mech.steps:
        node = ("step", step.label)
        g.add_node(node, kind="step", bipartite=1, reversible=step.reversible,
                   equation=step.equation())
        for name, c in step.reactants:
            g.add_edge(("species", name), node, weight=c)
        for name, c in step.products:
            g.add_edge(node, ("species", name), weight=c)
    return g


def formed_and_consumed(mech: Mechanism) -> dict[str, tuple[set[str], set[str]]]:
    """For each species, the labels of the steps that form it and that consume it
    (in either direction of a two-way step)."""
    out = {s: (set(), set()) for s in mech.species}
    for r in mech.reactions():
        net: dict[str, int] = {}
        for n, c in r.reactants:
            net[n] = net.get(n, 0) - c
        for n, c in r.products:
            net[n] = net.get(n, 0) + c
        for n, v in net.items():
            if v > 0:
                out[n][0].add(r.step)
            elif v < 0:
                out[n][1].add(r.step)
    return out


def intermediates(mech: Mechanism) -> tuple[str, ...]:
    """The species a steady-state treatment may be applied to.

    A species is an intermediate when the written (forward) direction of one step
    forms it and the forward direction of another step consumes it: ``ES`` and the
    free enzyme ``E`` in ``E + S <=> ES -> E + P`` (catalyst forms count), not ``S``
    or ``P``. An off-cycle form reached through a two-way step counts too: a species
    that takes part only in two-way steps, alone on its side, with an intermediate on
    the other side (``CatAm`` in ``Cat + Am <=> CatAm``). This follows the IUPAC Gold
    Book's "reaction intermediate" (formed from the reactants, reacting further),
    read with the written direction of each step (common practice).
    """
    fwd_formed: dict[str, set[str]] = {s: set() for s in mech.species}
    fwd_consumed: dict[str, set[str]] = {s: set() for s in mech.species}
    for step in mech.steps:
        for n, v in step.net().items():
            (fwd_formed if v > 0 else fwd_consumed)[n].add(step.label) if v else None
    found = {s for s in mech.species
             if any(a != b for a in fwd_formed[s] for b in fwd_consumed[s])}
    changed = True
    while changed:
        changed = False
        for s in mech.species:
            if s in found:
                continue
            steps = [st for st in mech.steps if s in st.species]
            if not steps or not all(st.reversible and st.law is None for st in steps):
                continue
            ok = True
            for st in steps:
                if st.products != ((s, 1),) or not any(n in found for n, _ in st.reactants):
                    ok = False
                    break
            if ok:
                found.add(s)
                changed = True
    return tuple(s for s in mech.species if s in found)
