"""Equivalent schemes: the same reduced rate law, so fitting both would be wasted work.

Two schemes are called equivalent here when the steady-state rate law of both
(variant ``qssa:all``) has the same *structure*: the rate of the same species, and the
same sets of concentration monomials in numerator and denominator once each is written
as a polynomial in the concentrations (:class:`sympy.Poly`); the coefficient values (the
lumped rate constants) are ignored. Where ``qssa:all`` does not apply (no closed form,
a rate that is identically zero, or the derivation fails) the structure of the full
mass-action ODEs is used instead: for each integrated species, the monomials of its
right-hand side. This is the structural identifiability argument of common practice:
schemes whose rate laws differ only in how the lumped constants are made of elementary
constants cannot be told apart by the data, whatever values the constants take.
Schemes that fix different values (``@ k = 2.5``) are kept apart: they have different
free parameters.

Examples
--------
>>> from mechfit import parse_mechanism
>>> a = parse_mechanism("bind: E + S <=> ES @ k1, k_1\\nturn: ES -> E + P @ k2\\nsteady: ES")
>>> b = parse_mechanism("bind: E + S -> ES @ k1\\nturn: ES -> E + P @ k2\\nsteady: ES")
>>> rate_law_structure(a) == rate_law_structure(b)
True
"""

from __future__ import annotations

import functools
from collections.abc import Sequence

import sympy

from mechfit.derive import derive_rate_law, mass_action_model, reduced_model
from mechfit.derive.steady_state import eliminable_species
from mechfit.errors import MechfitError
from mechfit.mechanism import Mechanism, symbols


def _monomials(expr: sympy.Expr, concentrations: dict[sympy.Symbol, str]) -> frozenset:
    gens = [s for s in concentrations if s in expr.free_symbols]
    if not gens:
        return frozenset({()})
    try:
        poly = sympy.Poly(sympy.expand(expr), *gens)
    except sympy.PolynomialError:
        # not a polynomial in the concentrations (an empirical law with a fitted order):
        # only the very same expression counts as the same structure
        return frozenset({("expression", sympy.srepr(expr))})
    names = [concentrations[g] for g in gens]
    return frozenset(
        tuple(sorted((n, int(e)) for n, e in zip(names, exps, strict=True) if e))
        for exps in poly.monoms())


#: seconds given to a nonlinear steady-state solve when judging equivalence (four times
#: this) and to tidying its root; a scheme that needs longer is compared by its full ODEs
#: (a mechfit convention: a solve that takes the derivation's usual 8 s would cost more
#: than fitting the scheme it might spare, and schemes with a second-order step between
#: intermediates, such as a catalyst dimer, rarely have a closed form)
EQUIVALENCE_BUDGET = 0.25


@functools.lru_cache(maxsize=4096)
def rate_law_structure(mechanism: Mechanism) -> tuple:
    """A hashable description of the reduced rate law's structure (see module notes).

    Results are remembered per mechanism (mechanisms are immutable), so enumerating a
    family again does not derive its members again.

    Returns
    -------
    tuple
        ``("qssa", fixed, species, numerator monomials, denominator monomials)`` or,
        when the steady-state rate law cannot be had, ``("full", fixed, ((species,
        monomials), ...))``; ``fixed`` are the scheme's fixed values (name, value), so a
        scheme that fixes a constant is never merged with one that fits it.
    """
    concentrations = {symbols.concentration(s): s for s in mechanism.species}
    fixed = tuple(sorted(mechanism.fixed.items()))
    try:
        law = derive_rate_law(reduced_model(mechanism, list(eliminable_species(mechanism)),
                                            name="qssa:all", seconds=EQUIVALENCE_BUDGET))
        # a zero rate (a degenerate steady state, as in autocatalysis) says nothing
        if law.closed_form and law.numerator != 0:
            return ("qssa", fixed, law.species, _monomials(law.numerator, concentrations),
                    _monomials(law.denominator, concentrations))
    except (MechfitError, sympy.PolynomialError):
        pass
    model = mass_action_model(mechanism)
    return ("full", fixed, tuple((s, _monomials(rhs, concentrations))
                          for s, rhs in zip(model.state, model.rhs, strict=True)))


def merge_equivalent(schemes: Sequence) -> tuple[list, dict[str, list[str]]]:
    """Keep the first scheme of each group of equivalent schemes.

    Parameters
    ----------
    schemes
        Objects with ``name`` and ``mechanism`` (:class:`~mechfit.batch.schemes.Scheme`).

    Returns
    -------
    kept : list
        The schemes kept, in their given order.
    merged : dict
        Name of a kept scheme -> names of the schemes merged into it (only non-empty).

    Examples
    --------
    >>> from mechfit import parse_mechanism
    >>> from mechfit.batch.schemes import enumerate_schemes
    >>> base = parse_mechanism("bind: E + S <=> ES @ k1, k_1\\nturn: ES -> E + P @ k2\\n"
    ...                        "steady: ES", name="mm")
    >>> kept, merged = merge_equivalent(enumerate_schemes(base))
    >>> [s.name for s in kept], merged
    (['mm'], {'mm': ['mm__oneway-bind']})
    """
    kept: list = []
    merged: dict[str, list[str]] = {}
    first: dict[tuple, str] = {}
    for scheme in schemes:
        key = rate_law_structure(scheme.mechanism)
        if key in first:
            merged.setdefault(first[key], []).append(scheme.name)
        else:
            first[key] = scheme.name
            kept.append(scheme)
    return kept, merged
