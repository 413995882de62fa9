"""Thermodynamic cycles of two-way steps and the Wegscheider conditions they impose.

When the stoichiometric vectors of some two-way mass-action steps add up to zero
with integer multiples ``v`` (a cycle such as A <=> B <=> C <=> A), detailed balance
requires the product of their equilibrium constants to the powers ``v`` to be one:
``prod (k_i / k_-i)^v_i = 1`` (R. Wegscheider, Monatsh. Chem. 22 (1901) 849; see
also Alberty, "Principle of detailed balance in kinetics", J. Chem. Educ. 81 (2004)
1206). One condition per independent cycle: a basis of the right null space of the
stoichiometric matrix restricted to the two-way steps.

Examples
--------
>>> from mechfit import parse_mechanism
>>> m = parse_mechanism("A <=> B @ k1, k_1\\nB <=> C @ k2, k_2\\nC <=> A @ k3, k_3")
>>> [c.condition_text() for c in cycles(m)]
['k1*k2*k3 = k_1*k_2*k_3']
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import reduce
from math import gcd

import sympy

from mechfit.mechanism.model import Mechanism
from mechfit.mechanism.network import stoichiometric_matrix


@dataclass(frozen=True)
class Cycle:
    """An independent cycle: step labels with integer multiples, and its condition."""

    steps: tuple[tuple[str, int], ...]
    forward: sympy.Expr  # product of effective forward constants to the powers
    reverse: sympy.Expr  # the same for the reverse constants

    def condition(self) -> sympy.Eq:
        """``forward = reverse`` as a sympy equation."""
        return sympy.Eq(self.forward, self.reverse, evaluate=False)

    def condition_text(self) -> str:
        return f"{sympy.sstr(self.forward)} = {sympy.sstr(self.reverse)}"


def cycles(mech: Mechanism) -> tuple[Cycle, ...]:
    """The independent cycles of two-way mass-action steps with their conditions."""
    idx = [j for j, s in enumerate(mech.steps) if s.reversible and s.law is None]
    if len(idx) < 2:
        return ()
    n = stoichiometric_matrix(mech)[:, idx]
    out = []
    for vec in sympy.Matrix(n.tolist()).nullspace():
        den = reduce(lambda a, b: a * b // gcd(a, b), (sympy.fraction(x)[1] for x in vec), 1)
        ints = [int(x * den) for x in vec]
        g = reduce(gcd, (abs(x) for x in ints if x), 0) or 1
        ints = [x // g for x in ints]
        if next(x for x in ints if x) < 0:
            ints = [-x for x in ints]
        fwd, rev = sympy.Integer(1), sympy.Integer(1)
        members = []
        for j, v in zip(idx, ints, strict=True):
            if not v:
                continue
            step = mech.steps[j]
            members.append((step.label, v))
            kf, kr = step.forward.symbol(), step.reverse.symbol()
            if v > 0:
                fwd *= kf**v
                rev *= kr**v
            else:
                fwd *= kr ** (-v)
                rev *= kf ** (-v)
        out.append(Cycle(tuple(members), fwd, rev))
    return tuple(out)


def dependent_constants(mech: Mechanism) -> dict[str, sympy.Expr]:
    """One reverse constant per cycle expressed through the others (Wegscheider).

    For each cycle, the reverse constant of the last member step that is neither
    fixed, shared with another step, nor already eliminated is solved from the
    condition. Fitting the remaining constants and computing these keeps the fitted
    set thermodynamically consistent.

    Examples
    --------
    >>> from mechfit import parse_mechanism
    >>> m = parse_mechanism("A <=> B @ k1, k_1\\nB <=> C @ k2, k_2\\nC <=> A @ k3, k_3")
    >>> dependent_constants(m)
    {'k_3': k1*k2*k3/(k_1*k_2)}
    """
    uses: dict[str, int] = {}
    for s in mech.steps:
        for c in (s.forward, s.reverse):
            if c is not None:
                uses[c.name] = uses.get(c.name, 0) + 1
    fixed = mech.fixed
    out: dict[str, sympy.Expr] = {}
    for cyc in cycles(mech):
        for label, _v in reversed(cyc.steps):
            step = mech.step(label)
            for const in (step.reverse, step.forward):
                name = const.name
                if name in fixed or uses[name] > 1 or name in out:
                    continue
                sym = sympy.Symbol(name, positive=True)
                eq = (cyc.forward - cyc.reverse).xreplace(
                    {sympy.Symbol(k, positive=True): v for k, v in out.items()})
                sol = sympy.solve(eq, sym)
                if sol:
                    out[name] = sympy.simplify(sol[0])
                    break
            else:
                continue
            break
    return out
