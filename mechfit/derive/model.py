"""A kinetic model: the ODEs (and algebraic relations) a simulator integrates.

Every approximation variant of a mechanism (full mass action, steady state,
pre-equilibrium) is a :class:`KineticModel`. Its expressions use the symbols of
:mod:`mechfit.mechanism.symbols`: concentrations of the ``state`` species, rate
constants and law parameters (``parameters``), and initial concentrations
``[X]0`` of any species of the mechanism (run conditions such as a total catalyst
concentration enter this way).

Rate convention (IUPAC Gold Book, "rate of reaction"): the rate of an elementary
reaction is ``k * prod([X]^nu_X)`` over its reactants, and
``d[X]/dt = sum over reactions of (nu_X,products - nu_X,reactants) * rate``.

Examples
--------
>>> from mechfit import parse_mechanism
>>> m = mass_action_model(parse_mechanism("A -> B @ k1\\nB -> C @ k2"))
>>> m.state, m.rhs
(('A', 'B', 'C'), (-A*k1, A*k1 - B*k2, B*k2))
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

import sympy

from mechfit.mechanism import symbols
from mechfit.mechanism.model import Mechanism


@dataclass(frozen=True)
class KineticModel:
    """ODEs on ``state`` plus algebraic expressions for the other species.

    Attributes
    ----------
    name
        Stable variant name (``"full"`` for plain mass action).
    mechanism
        The mechanism the model came from.
    state
        Species integrated as ODE variables, in mechanism order.
    rhs
        ``d[state_i]/dt`` as sympy expressions.
    algebraic
        Species not in ``state`` -> expression in state, parameters and initial
        concentrations (steady-state or equilibrium forms, conserved totals).
    parameters
        Names of the rate constants and law parameters the expressions use.
    mass_action
        True when ``rhs`` is plain mass action of ``mechanism`` (every species in
        ``state``, no empirical law); a simulator may then use matrix kernels.
    assumptions
        Plain-text statements of what the variant assumed.
    steady, fast
        The species put in steady state (after conservation laws added the other
        forms of a catalyst) and the step labels taken at equilibrium.
    implicit_species
        Species eliminated by the approximation for which no closed form was found
        (empty for closed-form variants). They are neither in ``state`` nor in
        ``algebraic``; ``rhs`` is written in their concentration symbols, and a
        simulator finds them at each time by solving ``implicit`` = 0.
    implicit
        The algebraic equations ``g(state, implicit species) = 0`` (steady-state
        balances, equilibrium conditions, conservation laws), one per implicit
        species.
    """

    name: str
    mechanism: Mechanism = field(compare=False)
    state: tuple[str, ...]
    rhs: tuple[sympy.Expr, ...]
    algebraic: Mapping[str, sympy.Expr] = field(default_factory=dict, compare=False)
    parameters: tuple[str, ...] = ()
    mass_action: bool = False
    assumptions: tuple[str, ...] = ()
    steady: tuple[str, ...] = field(default=(), compare=False)
    fast: tuple[str, ...] = field(default=(), compare=False)
    implicit_species: tuple[str, ...] = field(default=(), compare=False)
    implicit: tuple[sympy.Expr, ...] = field(default=(), compare=False)

    @property
    def numerical_steady_state(self) -> bool:
        """True when some eliminated species have no closed form (see ``implicit``)."""
        return bool(self.implicit_species)

    @property
    def eliminated(self) -> tuple[str, ...]:
        """Species of the mechanism that are not integrated (algebraic or implicit)."""
        return tuple(s for s in self.mechanism.species if s not in self.state)

    def jacobian(self) -> sympy.Matrix:
        """d rhs_i / d [state_j] as a sympy matrix."""
        xs = [symbols.concentration(s) for s in self.state]
        return sympy.Matrix(self.rhs).jacobian(xs)

    def parameter_symbols(self) -> tuple[sympy.Symbol, ...]:
        """The sympy symbols of ``parameters``, as they appear in the expressions."""
        found = {s.name: s for e in (*self.rhs, *self.algebraic.values(), *self.implicit)
                 for s in e.free_symbols}
        return tuple(found[p] for p in self.parameters if p in found)


def reaction_rates(mech: Mechanism) -> tuple[sympy.Expr, ...]:
    """The rate of every reaction (direction of a step) in ``mech.reactions()`` order."""
    return tuple(r.rate() for r in mech.reactions())


def mass_action_odes(mech: Mechanism) -> dict[str, sympy.Expr]:
    """``{species: d[X]/dt}`` under mass action (empirical steps use their law)."""
    out = {s: sympy.Integer(0) for s in mech.species}
    for r, rate in zip(mech.reactions(), reaction_rates(mech), strict=True):
        for name, c in r.reactants:
            out[name] -= c * rate
        for name, c in r.products:
            out[name] += c * rate
    return out


def mass_action_model(mech: Mechanism) -> KineticModel:
    """The full model: one ODE per species (the variant named ``"full"``)."""
    odes = mass_action_odes(mech)
    return KineticModel(
        name="full",
        mechanism=mech,
        state=mech.species,
        rhs=tuple(odes[s] for s in mech.species),
        algebraic={},
        parameters=mech.parameters,
        mass_action=not any(s.law is not None for s in mech.steps),
        assumptions=("mass action for every elementary step",),
    )
