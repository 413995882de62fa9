"""The sympy symbols that stand for concentrations, initial concentrations and parameters.

Every part of mechfit makes its symbols here, so that the same name always gives the
same symbol (sympy compares symbols by name *and* assumptions). Concentrations and
rate constants are positive; free parameters of empirical laws and observables are
real (an order may be zero or negative).

Examples
--------
>>> concentration("A") == concentration("A")
True
>>> concentration("A").is_positive
True
>>> parameter("a").is_positive is None
True
"""

from __future__ import annotations

import sympy

INITIAL_SUFFIX = "__0"


def concentration(species: str) -> sympy.Symbol:
    """The symbol for the concentration of ``species`` (named like the species)."""
    return sympy.Symbol(species, positive=True)


def initial_concentration(species: str) -> sympy.Symbol:
    """The symbol for the initial concentration of ``species`` (``A__0`` for ``A``)."""
    return sympy.Symbol(species + INITIAL_SUFFIX, positive=True)


def rate_constant(name: str) -> sympy.Symbol:
    """The symbol for a rate constant (positive)."""
    return sympy.Symbol(name, positive=True)


def parameter(name: str) -> sympy.Symbol:
    """The symbol for a free parameter of an expression (real, sign unknown)."""
    return sympy.Symbol(name, real=True)
