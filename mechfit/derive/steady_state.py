"""Steady state (QSSA), pre-equilibrium and rate-determining-step models.

One procedure serves all three. Given species to put in steady state and steps to
take at equilibrium, the *eliminated* species U are the steady-state species and
the eliminable species of the fast steps, widened by every catalyst law
(:func:`catalyst_laws`, the forms of a catalyst: if ``ES`` is eliminated, so is
``E``, and ``[E] + [ES] = [E]0 + [ES]0`` holds, the total being a run condition).

Unknowns are the concentrations of U and, for each fast step f, its net flux
:math:`J_f` (the rate at which the equilibrium has to shift to stay at
equilibrium). Equations:

* equilibrium of each fast step: :math:`k_f \\prod [\\text{reactants}] =
  k_r \\prod [\\text{products}]`;
* each conservation law inside U;
* balances :math:`d[X]/dt = \\sum_{j\\,\\text{slow}} N_{Xj} v_j + \\sum_f N_{Xf} J_f
  = 0` for X in U, in combinations free of the fluxes (the left null space of the
  fast columns of N) that are not already conservation laws.

Their number equals the number of U species when the fast steps change U
independently (else :class:`DerivationError`). The fluxes then follow from the
balances, and the remaining species keep ODEs: slow steps by mass action plus the
fast fluxes. This is the steady-state approximation of Bodenstein and of Briggs and
Haldane (Biochem. J. 19 (1925) 338) and the pre-equilibrium (rapid equilibrium)
treatment of Michaelis and Menten (Biochem. Z. 49 (1913) 333), written so that
both combine (the intermediates of a pre-equilibrium are taken as small, as in the
textbook treatment).

Solving for U: when the equations are linear in U they are solved exactly, by the
King–Altman method (:mod:`mechfit.derive.king_altman`) for closed cycles of catalyst
forms, else by sympy's sparse linear elimination (``linsolve``). Nonlinear equations go to
:func:`mechfit.derive.roots.admissible_solution`; without an admissible closed form
the model is a numerical steady-state variant (``implicit`` equations).

Examples
--------
>>> from mechfit import parse_mechanism
>>> m = parse_mechanism("E + S <=> ES @ k1, k_1\\nES -> E + P @ k2")
>>> model = steady_state_model(m, ["ES"])
>>> model.state, model.algebraic["ES"]
(('S', 'P'), S*k1*(ES__0 + E__0)/(S*k1 + k2 + k_1))
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence

import networkx as nx
import sympy

from mechfit.derive.errors import DerivationError
from mechfit.derive.king_altman import king_altman_weights, transition_graph, tree_count
from mechfit.derive.model import KineticModel
from mechfit.derive.roots import admissible_solution
from mechfit.derive.simplification import BUDGET, readable, tidy
from mechfit.mechanism import conservation_laws, intermediates, stoichiometric_matrix, symbols
from mechfit.mechanism.expression import to_text
from mechfit.mechanism.model import Mechanism, Step

#: above this many spanning trees the King–Altman sum gives way to a linear solve
MAX_TREES = 5000


# ---- names ------------------------------------------------------------------------
def variant_name(mech: Mechanism, steady: Iterable[str] = (), fast: Iterable[str] = ()) -> str:
    """The stable name of a variant: ``full``, ``qssa:ES``, ``qssa:all``,
    ``preeq:bind``, ``qssa:H+preeq:init``.

    Species are listed in mechanism order and steps in file order, joined by ``,``;
    ``qssa:all`` stands for every intermediate.
    """
    steady, fast = set(steady), set(fast)
    parts = []
    if steady:
        inter = eliminable_species(mech)
        names = [s for s in mech.species if s in steady]
        parts.append("qssa:all" if set(names) == set(inter) else "qssa:" + ",".join(names))
    if fast:
        parts.append("preeq:" + ",".join(s.label for s in mech.steps if s.label in fast))
    return "+".join(parts) or "full"


# ---- checks -----------------------------------------------------------------------
def _check_species(mech: Mechanism, steady: Sequence[str]) -> None:
    inter = eliminable_species(mech)
    for s in steady:
        if s not in mech.species:
            raise DerivationError(
                f"unknown species '{s}' for steady state: the mechanism has "
                f"{', '.join(mech.species)}", names=(s,))
        if s not in inter:
            allowed = ", ".join(inter) if inter else "none"
            raise DerivationError(
                f"'{s}' is not an intermediate or a form of a catalyst, so it cannot be "
                f"put in steady state (allowed: {allowed})", names=(s,))


def _check_fast(mech: Mechanism, fast: Sequence[str]) -> list[Step]:
    inter = set(eliminable_species(mech))
    out = []
    for label in fast:
        try:
            step = mech.step(label)
        except KeyError:
            labels = ", ".join(s.label for s in mech.steps)
            raise DerivationError(f"unknown step '{label}' named fast: the steps are "
                                  f"{labels}", names=(label,)) from None
        if step.law is not None:
            raise DerivationError(f"step '{label}' has an empirical rate law; only a "
                                  "mass-action two-way step can be at equilibrium",
                                  names=(label,))
        if not step.reversible:
            raise DerivationError(f"step '{label}' ({step.equation()}) is one-way; only a "
                                  "two-way step (<=>) can be at equilibrium", names=(label,))
        if not inter & set(step.species):
            raise DerivationError(f"step '{label}' ({step.equation()}) involves no "
                                  "intermediate or catalyst form, so its equilibrium "
                                  "eliminates nothing",
                                  names=(label,))
        out.append(step)
    return out


# ---- the procedure ------------------------------------------------------------------
def _step_rates(mech: Mechanism) -> dict[str, sympy.Expr]:
    out: dict[str, sympy.Expr] = {}
    for r in mech.reactions():
        sign = 1 if r.direction == "forward" else -1
        out[r.step] = out.get(r.step, sympy.Integer(0)) + sign * r.rate()
    return out


def catalyst_laws(mech: Mechanism) -> list[dict[str, int]]:
    """Conservation laws that count the forms of a catalyst (or enzyme).

    A law qualifies when it has at least two species, all weights 1, its species are
    all intermediates or include a catalyst (a species some step leaves unchanged,
    ``Cat`` in ``Cat + A -> Cat + P``), and every reaction involving them has exactly
    one of them among its reactants and one among its products, each with
    coefficient 1, and every form can be reached from every other (the forms are
    converted into each other, as in ``E + S <=> ES -> E + P``; a catalyst that
    decays to a dead form does not qualify). Atom or moiety balances of chain carriers
    (``2 Br2 + Br + HBr``) and substrate balances (``S + ES + P``) do not qualify.

    Examples
    --------
    >>> from mechfit import parse_mechanism
    >>> m = parse_mechanism("Cat + A -> Cat + P @ k1\\nCat + A <=> CatA @ k2, k_2")
    >>> catalyst_laws(m)
    [{'Cat': 1, 'CatA': 1}]
    """
    inter = set(intermediates(mech))
    catalysts = set()
    for st in mech.steps:
        right = dict(st.products)
        catalysts |= {n for n, c in st.reactants if right.get(n) == c}
    out = []
    for law in conservation_laws(mech):
        support = law.as_dict(mech.species)
        if len(support) < 2 or any(w != 1 for w in support.values()):
            continue
        if not (set(support) <= inter or set(support) & catalysts):
            continue
        ok = True
        graph = nx.DiGraph()
        graph.add_nodes_from(support)
        for r in mech.reactions():
            left = [(n, c) for n, c in r.reactants if n in support]
            right = [(n, c) for n, c in r.products if n in support]
            if not left and not right:
                continue
            if len(left) != 1 or len(right) != 1 or left[0][1] != 1 or right[0][1] != 1:
                ok = False
                break
            graph.add_edge(left[0][0], right[0][0])
        if ok and nx.is_strongly_connected(graph):
            out.append(support)
    return out


def eliminable_species(mech: Mechanism) -> tuple[str, ...]:
    """Species a steady state or equilibrium may eliminate: the intermediates
    (:func:`mechfit.mechanism.intermediates`) and the forms of every catalyst law
    (:func:`catalyst_laws`), in mechanism order.

    Examples
    --------
    >>> from mechfit import parse_mechanism
    >>> m = parse_mechanism("Cat + A -> Cat + P @ k1\\nCat + A <=> CatA @ k2, k_2")
    >>> eliminable_species(m)
    ('Cat', 'CatA')
    """
    found = set(intermediates(mech))
    for law in catalyst_laws(mech):
        found |= set(law)
    return tuple(s for s in mech.species if s in found)


def _eliminated(mech: Mechanism, seed: set[str]):
    """The eliminated species (seed widened by catalyst laws) and the laws inside them."""
    catalytic = catalyst_laws(mech)
    elim = set(seed)
    changed = True
    while changed:
        changed = False
        for law in catalytic:
            if elim & set(law) and not set(law) <= elim:
                elim |= set(law)
                changed = True
    used = [law.as_dict(mech.species) for law in conservation_laws(mech)
            if set(law.as_dict(mech.species)) <= elim]
    return [s for s in mech.species if s in elim], used


def _is_linear(eqs: Sequence[sympy.Expr], unknowns: Sequence[sympy.Symbol]) -> bool:
    for e in eqs:
        try:
            if sympy.Poly(e, *unknowns).total_degree() > 1:
                return False
        except (sympy.PolynomialError, sympy.GeneratorsNeeded):
            if e.free_symbols & set(unknowns):
                return False
    return True


def _king_altman(mech: Mechanism, forms: list[str], laws: list[dict[str, int]],
                 slow_steps: list[Step]) -> dict[sympy.Symbol, sympy.Expr] | None:
    """Closed-form steady state of catalyst cycles, or None when not applicable."""
    group_of: dict[str, int] = {}
    for i, law in enumerate(laws):
        if any(w != 1 for w in law.values()):
            return None
        for s in law:
            if s in group_of:
                return None
            group_of[s] = i
    if set(group_of) != set(forms):
        return None
    transitions: list[list[tuple[str, str, sympy.Expr]]] = [[] for _ in laws]
    for r in mech.reactions():
        if r.step not in {s.label for s in slow_steps}:
            continue
        left = [(n, c) for n, c in r.reactants if n in group_of]
        right = [(n, c) for n, c in r.products if n in group_of]
        if not left and not right:
            continue
        if r.law is not None or len(left) != 1 or len(right) != 1 or left[0][1] != 1 \
                or right[0][1] != 1:
            return None
        a, b = left[0][0], right[0][0]
        weight = sympy.cancel(r.rate() / symbols.concentration(a))
        if weight.free_symbols & {symbols.concentration(f) for f in forms}:
            return None
        transitions[group_of[a]].append((a, b, weight))
    out = {}
    for law, trans in zip(laws, transitions, strict=True):
        group = [s for s in forms if s in law]
        if tree_count(transition_graph(group, trans)) > MAX_TREES:
            return None
        weights = king_altman_weights(group, trans)
        total_weight = sum(weights.values())
        if total_weight == 0:
            return None
        total = sum(w * symbols.initial_concentration(s) for s, w in law.items())
        for s in group:
            out[symbols.concentration(s)] = total * weights[s] / total_weight
    return out


def _linear_solve(eqs, unknowns) -> dict[sympy.Symbol, sympy.Expr]:
    """Exact solution of linear equations (sympy's sparse elimination over the field
    of rational functions, which returns reduced fractions)."""
    names = tuple(u.name for u in unknowns)
    found = sympy.linsolve(list(eqs), list(unknowns))
    if not isinstance(found, sympy.FiniteSet) or len(found) != 1:
        raise DerivationError(
            "the steady-state equations have no solution: the eliminated species "
            f"{', '.join(names)} cannot all be at steady state", names=names)
    (values,) = found
    if any(v.free_symbols & set(unknowns) for v in values):
        raise DerivationError(
            "the steady-state equations are singular: the eliminated species "
            f"{', '.join(names)} are not determined by them", names=names)
    return dict(zip(unknowns, values, strict=True))


def _basis(nullspace: list[sympy.Matrix], first: list[sympy.Matrix],
           extra: list[sympy.Matrix]) -> tuple[list[sympy.Matrix], list[sympy.Matrix]]:
    """Pick a basis of span(nullspace) starting with ``first``; return (first, rest)."""
    chosen = list(first)
    rest = []
    dim = len(nullspace)
    for v in extra + nullspace:
        if len(chosen) == dim:
            break
        trial = sympy.Matrix.hstack(*chosen, v) if chosen else v
        if trial.rank() == len(chosen) + 1:
            chosen.append(v)
            rest.append(v)
    return list(first), rest


def reduced_model(
    mech: Mechanism,
    steady: Iterable[str] = (),
    fast: Iterable[str] = (),
    *,
    name: str | None = None,
    seconds: float = BUDGET,
) -> KineticModel:
    """The model with ``steady`` species in steady state and ``fast`` steps at equilibrium.

    Parameters
    ----------
    mech
        The mechanism.
    steady
        Intermediates to put in steady state (``d[X]/dt = 0``).
    fast
        Labels of two-way mass-action steps taken at equilibrium.
    name
        Variant name; by default :func:`variant_name`.
    seconds
        Time budget of each simplification and of a nonlinear solve (times 4).

    Returns
    -------
    KineticModel
        ODEs on the other species, eliminated species in ``algebraic``; or, where no
        closed form exists, in ``implicit_species`` with the equations ``implicit``.

    Raises
    ------
    DerivationError
        Unknown species or step, a steady state on a non-intermediate, a one-way or
        empirical step named fast, or equations that do not determine the species.

    Examples
    --------
    >>> from mechfit import parse_mechanism
    >>> m = parse_mechanism("2 NO <=> N2O2 @ k1, k_1\\nN2O2 + O2 -> 2 NO2 @ k2")
    >>> model = reduced_model(m, fast=["1"])
    >>> model.name, model.algebraic["N2O2"]
    ('preeq:1', NO**2*k1/k_1)
    >>> dict(zip(model.state, model.rhs))["NO2"]
    2*NO**2*O2*k1*k2/k_1
    """
    steady = [s for s in dict.fromkeys(steady)]
    fast = [s for s in dict.fromkeys(fast)]
    _check_species(mech, steady)
    fast_steps = _check_fast(mech, fast)
    inter = set(eliminable_species(mech))
    seed = set(steady) | {x for st in fast_steps for x in st.species if x in inter}
    if not seed:
        from mechfit.derive.model import mass_action_model
        return mass_action_model(mech)
    forms, laws = _eliminated(mech, seed)
    state = tuple(s for s in mech.species if s not in forms)
    if not state:
        raise DerivationError(
            f"this variant eliminates every species ({', '.join(forms)}): nothing is left "
            "to integrate, so steady state and equilibrium coincide; keep one species out",
            names=tuple(forms))
    u = [symbols.concentration(s) for s in forms]
    rates = _step_rates(mech)
    n = stoichiometric_matrix(mech)
    row = {s: i for i, s in enumerate(mech.species)}
    col = {st.label: j for j, st in enumerate(mech.steps)}
    fast_labels = [st.label for st in fast_steps]
    slow_steps = [st for st in mech.steps if st.label not in fast_labels]
    flux = {label: sympy.Dummy(f"J_{label}") for label in fast_labels}

    def slow_balance(s: str) -> sympy.Expr:
        return sum((int(n[row[s], col[st.label]]) * rates[st.label] for st in slow_steps),
                   sympy.Integer(0))

    nf = sympy.Matrix([[int(n[row[s], col[f]]) for f in fast_labels] for s in forms]) \
        if fast_labels else sympy.zeros(len(forms), 0)
    if fast_labels and nf.rank() < len(fast_labels):
        raise DerivationError(
            f"the fast steps {', '.join(fast_labels)} change the eliminated species "
            f"{', '.join(forms)} in dependent ways; their equilibria cannot be separated: "
            "name fewer fast steps", names=tuple(fast_labels))
    nullspace = nf.T.nullspace() if fast_labels else [
        sympy.Matrix([1 if k == i else 0 for k in range(len(forms))]) for i in range(len(forms))]
    law_vectors = [sympy.Matrix([law.get(s, 0) for s in forms]) for law in laws]
    units = [sympy.Matrix([1 if k == i else 0 for k in range(len(forms))])
             for i in range(len(forms)) if all(x == 0 for x in nf.row(i))]
    _, balances = _basis(nullspace, law_vectors, units)
    equations: list[sympy.Expr] = []
    for st in fast_steps:
        fwd = st.forward.symbol()
        rev = st.reverse.symbol()
        for s, c in st.reactants:
            fwd *= symbols.concentration(s) ** c
        for s, c in st.products:
            rev *= symbols.concentration(s) ** c
        equations.append(fwd - rev)
    for law in laws:
        equations.append(sum((w * (symbols.concentration(s) - symbols.initial_concentration(s))
                              for s, w in law.items()), sympy.Integer(0)))
    slow = {s: slow_balance(s) for s in forms}
    for y in balances:
        equations.append(sympy.expand(sum((y[i] * slow[s] for i, s in enumerate(forms)),
                                          sympy.Integer(0))))
    if len(equations) != len(forms):  # pragma: no cover - guarded by the rank test
        raise DerivationError("internal: equation count does not match the species")

    assumptions = []
    if steady:
        assumptions.append("steady state, d[X]/dt = 0, for " + ", ".join(
            s for s in forms if s in set(steady) or not fast_labels))
    for st in fast_steps:
        assumptions.append(f"step {st.label} ({st.equation()}) at equilibrium: "
                           f"{to_text(equations[fast_steps.index(st)], mech.species)} = 0")
    for law in laws:
        text = " + ".join((s if w == 1 else f"{w} {s}") for s, w in law.items())
        assumptions.append(f"conservation: {text} is constant, its initial value a run "
                           "condition")
    if fast_labels:
        assumptions.append("intermediates of the fast steps are small, so the equilibria "
                           "do not hold back reactant")

    solution: dict[sympy.Symbol, sympy.Expr] | None
    linear = _is_linear(equations, u)
    if linear:
        solution = None
        if not fast_labels:
            solution = _king_altman(mech, forms, laws, slow_steps)
            if solution is not None:
                assumptions.append("steady state of the catalyst cycle by the King–Altman "
                                   "method (King and Altman 1956)")
        if solution is None:
            solution = _linear_solve(equations, u)
            assumptions.append("linear steady-state equations solved exactly")
    else:
        solution, note = admissible_solution(equations, u, 4 * seconds)
        assumptions.append("nonlinear steady-state equations: " + note)
    if solution is not None and not linear:
        solution = {k: tidy(v, seconds) for k, v in solution.items()}
    elif solution is not None:
        # exact linear solutions come out cancelled (linsolve) or free of
        # cancellation (King–Altman): only make small ones easier to read
        solution = {k: readable(v) for k, v in solution.items()}

    # fluxes of the fast steps from independent balance rows
    flux_value: dict[sympy.Symbol, sympy.Expr] = {}
    if fast_labels:
        rows: list[int] = []
        for i in range(len(forms)):
            if sympy.Matrix.vstack(*(nf.row(k) for k in rows + [i])).rank() > len(rows):
                rows.append(i)
            if len(rows) == len(fast_labels):
                break
        sub = sympy.Matrix([list(nf.row(i)) for i in rows])
        rhs = sympy.Matrix([-slow[forms[i]] for i in rows])
        values = sub.inv() * rhs
        for label, v in zip(fast_labels, values, strict=True):
            flux_value[flux[label]] = v

    def ode(s: str) -> sympy.Expr:
        e = slow_balance(s) + sum((int(n[row[s], col[f]]) * flux[f] for f in fast_labels),
                                  sympy.Integer(0))
        e = e.xreplace(flux_value)
        if solution is not None:
            return tidy(e.xreplace(solution), seconds)
        return sympy.expand(e)

    rhs_exprs = tuple(ode(s) for s in state)
    algebraic = ({s: solution[symbols.concentration(s)] for s in forms}
                 if solution is not None else {})
    implicit_species = () if solution is not None else tuple(forms)
    implicit = () if solution is not None else tuple(equations)
    if solution is None:
        assumptions.append("no closed form: " + ", ".join(forms) + " are found numerically "
                           "from the algebraic equations (numerical steady state)")
    used = set().union(*(e.free_symbols for e in (*rhs_exprs, *algebraic.values(), *implicit)))
    used_names = {s.name for s in used}
    return KineticModel(
        name=name or variant_name(mech, steady, fast),
        mechanism=mech,
        state=state,
        rhs=rhs_exprs,
        algebraic=algebraic,
        parameters=tuple(p for p in mech.parameters if p in used_names),
        mass_action=False,
        assumptions=tuple(assumptions),
        steady=tuple(s for s in forms if s not in {x for st in fast_steps for x in st.species}
                     or s in set(steady)),
        fast=tuple(fast_labels),
        implicit_species=implicit_species,
        implicit=implicit,
    )


def steady_state_model(mech: Mechanism, species: Iterable[str] | None = None,
                       **options) -> KineticModel:
    """Steady state on ``species`` (default: every intermediate, ``qssa:all``)."""
    species = list(eliminable_species(mech) if species is None else species)
    return reduced_model(mech, steady=species, **options)


def pre_equilibrium_model(mech: Mechanism, steps: Iterable[str], **options) -> KineticModel:
    """Pre-equilibrium on the named fast steps (``preeq:<labels>``)."""
    return reduced_model(mech, fast=list(steps), **options)


def rate_determining_model(mech: Mechanism, label: str, **options) -> KineticModel:
    """The rate-determining-step variant ``rds:<label>``.

    Every other two-way mass-action step that involves an intermediate is at
    equilibrium, and intermediates that no such step fixes are in steady state (they
    are formed and used up by fast steps after the slow one). The rate is then the
    rate of step ``label`` with its intermediates at their equilibrium values
    (common practice; e.g. P. Atkins and J. de Paula, Physical Chemistry, 9th ed.,
    Oxford 2010, section on the rate-determining step; recalled from memory).
    """
    try:
        mech.step(label)
    except KeyError:
        labels = ", ".join(s.label for s in mech.steps)
        raise DerivationError(f"unknown step '{label}' named rate-determining: the steps "
                              f"are {labels}", names=(label,)) from None
    inter = set(eliminable_species(mech))
    fast = [s.label for s in mech.steps if s.label != label and s.reversible
            and s.law is None and inter & set(s.species)]
    if not fast:
        raise DerivationError(f"no two-way step other than '{label}' involves an "
                              "intermediate, so there is nothing to put at equilibrium",
                              names=(label,))
    fixed = {x for lab in fast for x in mech.step(lab).species if x in inter}
    forms, _ = _eliminated(mech, fixed)
    steady = [s for s in mech.species if s in inter and s not in forms]
    model = reduced_model(mech, steady=steady, fast=fast, name=f"rds:{label}", **options)
    return model
