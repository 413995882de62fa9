"""Network analysis, checked against worked examples of chemical reaction network theory."""

import numpy as np
import sympy

from mechfit import parse_mechanism
from mechfit.mechanism import (
    analyse_complexes,
    conservation_laws,
    cycles,
    dependent_constants,
    intermediates,
    species_step_graph,
    stoichiometric_matrix,
)


def test_stoichiometric_matrix_and_conservation_of_michaelis_menten():
    m = parse_mechanism("E + S <=> ES @ k1, k_1\nES -> E + P @ k2")
    n = stoichiometric_matrix(m)
    assert n.tolist() == [[-1, 1], [-1, 0], [1, -1], [0, 1]]
    laws = [law.as_dict(m.species) for law in conservation_laws(m)]
    # total enzyme and total substrate (common practice; e.g. Cornish-Bowden, Fundamentals of
    # Enzyme Kinetics, 4th ed. 2012, ch. 2)
    assert laws == [{"E": 1, "ES": 1}, {"S": 1, "ES": 1, "P": 1}]
    for law in conservation_laws(m):
        assert not np.any(np.array(law.weights) @ n)


def test_element_conservation_of_the_hydrogen_bromine_chain():
    m = parse_mechanism("Br2 -> 2 Br @ k1\nBr + H2 -> HBr + H @ k2\nH + Br2 -> HBr + Br @ k3\n"
                        "H + HBr -> H2 + Br @ k4\n2 Br -> Br2 @ k5")
    laws = {law.as_text(m.species) for law in conservation_laws(m)}
    # bromine atoms and hydrogen atoms are conserved
    assert laws == {"2 Br2 + Br + HBr", "2 H2 + HBr + H"}


def test_mixed_sign_law_when_no_nonnegative_basis_exists():
    m = parse_mechanism("A -> B + C @ k1")  # conserved: A + B, A + C, and B - C
    laws = conservation_laws(m)
    assert len(laws) == 2 and all(law.nonnegative for law in laws)
    m2 = parse_mechanism("A + B -> 0 @ k1")  # only A - B is conserved
    (law,) = conservation_laws(m2)
    assert not law.nonnegative and sorted(law.weights) == [-1, 1]


def test_feinberg_deficiency_zero_example():
    """A <=> 2B, A + C <=> D, D -> B + E, B + E -> A + C: 5 complexes, 2 linkage classes,
    rank 3, deficiency 0, weakly reversible. M. Feinberg, "Chemical reaction network structure
    and the stability of complex isothermal reactors I", Chem. Eng. Sci. 42 (1987) 2229, the
    network of its first example (recalled from memory)."""
    m = parse_mechanism("A <=> 2 B @ k1, k_1\nA + C <=> D @ k2, k_2\nD -> B + E @ k3\n"
                        "B + E -> A + C @ k4")
    c = analyse_complexes(m)
    assert (len(c.complexes), len(c.linkage_classes), c.rank) == (5, 2, 3)
    assert c.deficiency == 0 and c.weakly_reversible


def test_edelstein_network_has_deficiency_one():
    """A <=> 2A, A + B <=> C <=> B (B. B. Edelstein, J. Theor. Biol. 29 (1970) 57; deficiency one
    as discussed in M. Feinberg, Foundations of Chemical Reaction Network Theory, Springer 2019;
    recalled from memory). A alone on one side: '2 A' is written as such."""
    m = parse_mechanism("A <=> 2 A @ k1, k_1\nA + B <=> C @ k2, k_2\nC <=> B @ k3, k_3")
    c = analyse_complexes(m)
    assert (len(c.complexes), len(c.linkage_classes), c.rank, c.deficiency) == (5, 2, 2, 1)
    assert c.weakly_reversible


def test_michaelis_menten_deficiency_zero_not_weakly_reversible():
    c = analyse_complexes(parse_mechanism("E + S <=> ES @ k1, k_1\nES -> E + P @ k2"))
    assert (len(c.complexes), len(c.linkage_classes), c.rank, c.deficiency) == (3, 1, 2, 0)
    assert not c.weakly_reversible


def test_wegscheider_condition_of_the_three_species_cycle():
    """A <=> B <=> C <=> A: detailed balance requires k1 k2 k3 = k_1 k_2 k_3 (R. Wegscheider,
    Monatsh. Chem. 22 (1901) 849; L. Onsager, Phys. Rev. 37 (1931) 405, section 3)."""
    m = parse_mechanism("A <=> B @ k1, k_1\nB <=> C @ k2, k_2\nC <=> A @ k3, k_3")
    (cyc,) = cycles(m)
    k = {n: sympy.Symbol(n, positive=True) for n in m.constants}
    assert sympy.simplify(cyc.forward / cyc.reverse
                          - k["k1"] * k["k2"] * k["k3"] / (k["k_1"] * k["k_2"] * k["k_3"])) == 0
    dep = dependent_constants(m)
    assert list(dep) == ["k_3"]
    assert sympy.simplify(dep["k_3"] - k["k1"] * k["k2"] * k["k3"] / (k["k_1"] * k["k_2"])) == 0


def test_wegscheider_skips_fixed_and_shared_constants():
    m = parse_mechanism("A <=> B @ k1, k_1\nB <=> C @ k2, k_2\nC <=> A @ k3, k_3 = 2")
    assert list(dependent_constants(m)) == ["k3"]


def test_no_cycles_without_two_way_loops():
    assert cycles(parse_mechanism("A <=> B @ k1, k_1\nB <=> C @ k2, k_2")) == ()


def test_intermediates():
    m = parse_mechanism("Cat + ArBr -> CatAr @ k1\nCatAr + Am <=> CatArAm @ k2, k_2\n"
                        "CatArAm -> Cat + Prod + HBr @ k3\nCat + Am <=> CatAm @ k4, k_4")
    assert intermediates(m) == ("Cat", "CatAr", "CatArAm", "CatAm")
    assert intermediates(parse_mechanism("A <=> B @ k1, k_1\nB -> C @ k2")) == ("B",)


def test_species_step_graph_is_bipartite():
    import networkx as nx

    g = species_step_graph(parse_mechanism("E + S <=> ES @ k1, k_1\nES -> E + P @ k2"))
    assert nx.is_bipartite(g.to_undirected())
    assert g.edges[("species", "E"), ("step", "1")]["weight"] == 1
    assert g.nodes[("step", "1")]["reversible"]
