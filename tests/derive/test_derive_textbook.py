"""Textbook rate laws, each checked by symbolic equality with its published form.

Every test names its source beside it. Equation and page numbers are not quoted
where they were not checked; the forms themselves are standard and were recalled
from memory where the comment says so.
"""

from __future__ import annotations

import sympy
from sympy import Rational, sqrt

from mechfit import parse_mechanism
from mechfit.derive import (
    derive_rate_law,
    pre_equilibrium_model,
    rate_determining_model,
    reduced_model,
    steady_state_model,
)
from mechfit.mechanism.symbols import concentration, initial_concentration, rate_constant


def c(name):
    return concentration(name)


def k(name):
    return rate_constant(name)


def same(a, b) -> bool:
    return sympy.simplify(sympy.together(a - b)) == 0


ENZYME = """bind: E + S <=> ES @ k1, k_1
cat: ES -> E + P @ k2
"""


def test_briggs_haldane():
    # G. E. Briggs and J. B. S. Haldane, "A note on the kinetics of enzyme action",
    # Biochem. J. 19 (1925) 338: v = k2 [E]0 [S] / (Km + [S]), Km = (k_1 + k2)/k1
    # (recalled from memory). Orders: first in [S] at low [S], zero at high [S];
    # first in [E]0 (A. Cornish-Bowden, Fundamentals of Enzyme Kinetics, 4th ed.,
    # Wiley-Blackwell 2012, ch. 2; recalled from memory).
    law = derive_rate_law(steady_state_model(parse_mechanism(ENZYME)), "P")
    km = (k("k_1") + k("k2")) / k("k1")
    published = k("k2") * initial_concentration("E") * c("S") / (km + c("S"))
    assert same(law.rate, published)
    assert law.orders["S"] == (1, 0)
    assert law.orders["E__0"] == (1, 1)
    # two identifiable combinations (kcat/Km and 1/Km) from three constants
    assert len(law.lumped) == 2
    assert same(law.lumped["a1"], k("k2") / km)
    assert same(law.lumped["b1"], 1 / km)


def test_briggs_haldane_consumption_of_substrate_is_the_same_rate():
    # -d[S]/dt = d[P]/dt in the steady state (Briggs and Haldane 1925, as above)
    m = steady_state_model(parse_mechanism(ENZYME))
    s_law = derive_rate_law(m, "S")
    p_law = derive_rate_law(m, "P")
    assert s_law.consumption and not p_law.consumption
    assert same(s_law.rate, p_law.rate)


def test_rapid_equilibrium_michaelis_menten():
    # L. Michaelis and M. L. Menten, Biochem. Z. 49 (1913) 333: v = V [S]/(Ks + [S]),
    # V = k2 [E]0, Ks = k_1/k1 the dissociation constant (recalled from memory).
    law = derive_rate_law(pre_equilibrium_model(parse_mechanism(ENZYME), ["bind"]), "P")
    published = k("k2") * initial_concentration("E") * c("S") / (k("k_1") / k("k1") + c("S"))
    assert same(law.rate, published)
    assert law.orders["S"] == (1, 0)
    assert law.variant == "preeq:bind"


def test_lindemann_hinshelwood_with_third_body():
    # F. A. Lindemann, Trans. Faraday Soc. 17 (1922) 598; P. Atkins and J. de Paula,
    # Physical Chemistry, 9th ed., Oxford 2010, Lindemann-Hinshelwood mechanism:
    # v = k1 k2 [A][M]/(k_1 [M] + k2); first order in A; in M second-order kinetics
    # overall at low pressure, first order at high pressure (recalled from memory).
    m = parse_mechanism("act: A + M <=> Astar + M @ k1, k_1\nreact: Astar -> P @ k2")
    law = derive_rate_law(steady_state_model(m, ["Astar"]), "P")
    published = k("k1") * k("k2") * c("A") * c("M") / (k("k_1") * c("M") + k("k2"))
    assert same(law.rate, published)
    assert law.orders["M"] == (1, 0)
    assert law.orders["A"] == (1, 1)


def test_lindemann_self_collision_orders():
    # Atkins and de Paula, 9th ed. (as above): with A as its own collision partner the
    # rate is second order in A at low pressure and first order at high pressure
    # (recalled from memory).
    m = parse_mechanism("act: A + A <=> Astar + A @ k1, k_1\nreact: Astar -> P @ k2")
    law = derive_rate_law(steady_state_model(m, ["Astar"]), "P")
    published = k("k1") * k("k2") * c("A") ** 2 / (k("k_1") * c("A") + k("k2"))
    assert same(law.rate, published)
    assert law.orders["A"] == (2, 1)


INHIBITION = {
    "competitive": ENZYME + "inh: E + I <=> EI @ k3, k_3\n",
    "uncompetitive": ENZYME + "inh2: ES + I <=> ESI @ k4, k_4\n",
    "mixed": ENZYME + "inh: E + I <=> EI @ k3, k_3\ninh2: ES + I <=> ESI @ k4, k_4\n",
}


def _inhibition_form(kic, kiu):
    # Cornish-Bowden, Fundamentals of Enzyme Kinetics, 4th ed. (2012), ch. 6, the
    # general linear inhibition equation v = V[S]/(Km(1 + [I]/Kic) + [S](1 + [I]/Kiu))
    # with V = k2[E]0, Km = (k_1 + k2)/k1 (recalled from memory).
    km = (k("k_1") + k("k2")) / k("k1")
    v = k("k2") * initial_concentration("E")
    return v * c("S") / (km * (1 + c("I") * kic) + c("S") * (1 + c("I") * kiu))


def test_competitive_inhibition():
    # Cornish-Bowden 2012 (as above): competitive, 1/Kiu = 0, Kic = k_3/k3.
    law = derive_rate_law(steady_state_model(parse_mechanism(INHIBITION["competitive"])), "P")
    assert same(law.rate, _inhibition_form(k("k3") / k("k_3"), 0))
    # the apparent order in I is 0 at low [I] and -1 at high [I]
    assert law.orders["I"] == (0, -1)


def test_uncompetitive_inhibition():
    # Cornish-Bowden 2012 (as above): uncompetitive, 1/Kic = 0, Kiu = k_4/k4.
    law = derive_rate_law(steady_state_model(parse_mechanism(INHIBITION["uncompetitive"])),
                          "P")
    assert same(law.rate, _inhibition_form(0, k("k4") / k("k_4")))
    # at high [S] the rate tends to V/(1 + [I]/Kiu): still zero order in S
    assert law.orders["S"] == (1, 0)


def test_mixed_inhibition():
    # Cornish-Bowden 2012 (as above): mixed, both terms.
    law = derive_rate_law(steady_state_model(parse_mechanism(INHIBITION["mixed"])), "P")
    assert same(law.rate, _inhibition_form(k("k3") / k("k_3"), k("k4") / k("k_4")))


def test_no_oxidation_third_order_by_pre_equilibrium():
    # 2 NO + O2 -> 2 NO2 via 2 NO <=> N2O2 (fast), N2O2 + O2 -> 2 NO2 (slow):
    # d[NO2]/dt = 2 k2 K [NO]^2 [O2], K = k1/k_1: third order overall, second in NO,
    # first in O2 (Atkins and de Paula, Physical Chemistry, 9th ed., 2010, the
    # pre-equilibrium section; recalled from memory).
    m = parse_mechanism("dim: 2 NO <=> N2O2 @ k1, k_1\nox: N2O2 + O2 -> 2 NO2 @ k2")
    law = derive_rate_law(pre_equilibrium_model(m, ["dim"]), "NO2")
    published = 2 * k("k2") * k("k1") / k("k_1") * c("NO") ** 2 * c("O2")
    assert same(law.rate, published)
    assert law.orders == {"NO": (2, 2), "O2": (1, 1)}
    assert len(law.lumped) == 1  # only k2 k1/k_1 is identifiable


OZONE = "split: O3 <=> O2 + O @ k1, k_1\nattack: O + O3 -> 2 O2 @ k2\n"


def test_ozone_decomposition_steady_state():
    # Two-step decomposition of ozone, steady state on O:
    # -d[O3]/dt = 2 k1 k2 [O3]^2 / (k_1 [O2] + k2 [O3])
    # (K. J. Laidler, Chemical Kinetics, 3rd ed., Harper & Row 1987, ozone
    # decomposition; recalled from memory).
    law = derive_rate_law(steady_state_model(parse_mechanism(OZONE), ["O"]), "O3")
    assert law.consumption
    published = 2 * k("k1") * k("k2") * c("O3") ** 2 / (k("k_1") * c("O2") + k("k2") * c("O3"))
    assert same(law.rate, published)
    # Laidler (as above): second order in O3 and inverse first order in O2 when the
    # reverse of the first step dominates; first order in O3 when it is negligible
    assert law.orders["O3"] == (2, 1)
    assert law.orders["O2"] == (0, -1)


def test_ozone_decomposition_pre_equilibrium():
    # Same source: with O3 <=> O2 + O at equilibrium,
    # -d[O3]/dt = 2 k2 K [O3]^2/[O2], K = k1/k_1 (recalled from memory).
    law = derive_rate_law(pre_equilibrium_model(parse_mechanism(OZONE), ["split"]), "O3")
    published = 2 * k("k2") * k("k1") / k("k_1") * c("O3") ** 2 / c("O2")
    assert same(law.rate, published)
    assert law.orders == {"O3": (2, 2), "O2": (-1, -1)}


def test_ozone_steady_state_tends_to_pre_equilibrium():
    # the pre-equilibrium form is the k2[O3] << k_1[O2] limit of the steady state
    # (Laidler 1987, as above)
    ss = derive_rate_law(steady_state_model(parse_mechanism(OZONE), ["O"]), "O3").rate
    pe = derive_rate_law(pre_equilibrium_model(parse_mechanism(OZONE), ["split"]), "O3").rate
    eps = sympy.Symbol("eps", positive=True)
    ratio = sympy.limit((ss / pe).subs(k("k2"), eps * k("k2")), eps, 0)
    assert ratio == 1


HBR = """init: Br2 + M <=> 2 Br + M @ k1, k_1
prop: Br + H2 <=> HBr + H @ k2, k_2
prop2: H + Br2 -> HBr + Br @ k3
"""


def test_hydrogen_bromine_chain():
    # M. Bodenstein and S. C. Lind, Z. Phys. Chem. 57 (1907) 168 (empirical law);
    # mechanism of Christiansen, Herzfeld and Polanyi (1919-1920); as given in Atkins
    # and de Paula, Physical Chemistry, 9th ed. (2010), chain reactions:
    # d[HBr]/dt = k [H2][Br2]^(1/2) / (1 + k' [HBr]/[Br2]),
    # k = 2 k2 (k1/k_1)^(1/2), k' = k_2/k3 (recalled from memory).
    law = derive_rate_law(steady_state_model(parse_mechanism(HBR), ["Br", "H"]), "HBr")
    kk = 2 * k("k2") * sqrt(k("k1") / k("k_1"))
    kp = k("k_2") / k("k3")
    published = kk * c("H2") * sqrt(c("Br2")) / (1 + kp * c("HBr") / c("Br2"))
    assert same(law.rate, published)
    assert "root chosen" in " ".join(law.assumptions)
    # Bodenstein and Lind: first order in H2, half order in Br2 while HBr is scarce,
    # retarded by HBr (order -1 when the HBr term dominates)
    assert law.orders["H2"] == (1, 1)
    assert law.orders["Br2"][1] == Rational(1, 2)
    assert law.orders["HBr"] == (0, -1)
    lumped = {str(v) for v in law.lumped.values()}
    assert str(sympy.simplify(kp)) in lumped


def test_reversible_enzyme_haldane():
    # J. B. S. Haldane, Enzymes, Longmans 1930 (recalled from memory):
    # v = (k1 k2 [S] - k_1 k_2 [P]) [E]0 / (k_1 + k2 + k1 [S] + k_2 [P])
    m = parse_mechanism("bind: E + S <=> ES @ k1, k_1\nrel: ES <=> E + P @ k2, k_2")
    law = derive_rate_law(steady_state_model(m), "P")
    published = ((k("k1") * k("k2") * c("S") - k("k_1") * k("k_2") * c("P"))
                 * initial_concentration("E")
                 / (k("k_1") + k("k2") + k("k1") * c("S") + k("k_2") * c("P")))
    assert same(law.rate, published)
    # the reverse term becomes a positive lumped parameter with a minus sign
    signs = sorted(p.sign for p in law.parameters if p.part == "numerator")
    assert signs == [-1, 1]


def test_two_intermediate_cycle_king_altman():
    # E + S <=> ES -> EP -> E + P: kcat = k2 k3/(k2 + k3),
    # Km = k3 (k_1 + k2) / (k1 (k2 + k3)) (Cornish-Bowden, Fundamentals of Enzyme
    # Kinetics, 4th ed., 2012, ch. 4; recalled from memory).
    m = parse_mechanism(
        "bind: E + S <=> ES @ k1, k_1\nconv: ES -> EP @ k2\nrel: EP -> E + P @ k3")
    model = steady_state_model(m)
    assert any("King" in a for a in model.assumptions)
    law = derive_rate_law(model, "P")
    kcat = k("k2") * k("k3") / (k("k2") + k("k3"))
    km = k("k3") * (k("k_1") + k("k2")) / (k("k1") * (k("k2") + k("k3")))
    assert same(law.rate, kcat * initial_concentration("E") * c("S") / (km + c("S")))


def test_consecutive_first_order_steady_state():
    # A -> I -> P with I in steady state: d[P]/dt = k1 [A] (Atkins and de Paula,
    # 9th ed., 2010, the steady-state approximation; recalled from memory)
    m = parse_mechanism("A -> I @ k1\nI -> P @ k2")
    law = derive_rate_law(steady_state_model(m), "P")
    assert same(law.rate, k("k1") * c("A"))
    assert law.orders == {"A": (1, 1)}


def test_rate_determining_step_on_a_two_step_cycle():
    # With E + S <=> ES at equilibrium ahead of a rate-determining ES -> E + P, the
    # rate is that of the slow step at the equilibrium [ES] (Atkins and de Paula,
    # 9th ed., 2010, rate-determining step; recalled from memory): the
    # rapid-equilibrium form of Michaelis and Menten (1913).
    m = parse_mechanism(ENZYME)
    law = derive_rate_law(rate_determining_model(m, "cat"), "P")
    published = k("k2") * initial_concentration("E") * c("S") / (k("k_1") / k("k1") + c("S"))
    assert same(law.rate, published)
    assert law.variant == "rds:cat"


def test_steady_state_and_pre_equilibrium_combined():
    # Mixed treatment: inhibitor binding at equilibrium, ES in steady state gives the
    # competitive form again (Cornish-Bowden 2012, ch. 6; recalled from memory).
    model = reduced_model(parse_mechanism(INHIBITION["competitive"]), steady=["ES"],
                          fast=["inh"])
    assert model.name == "qssa:ES+preeq:inh"
    law = derive_rate_law(model, "P")
    assert same(law.rate, _inhibition_form(k("k3") / k("k_3"), 0))
