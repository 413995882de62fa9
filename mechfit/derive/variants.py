"""The approximation variants of a mechanism, with stable names.

:func:`derive_variants` lists the models that ranking compares as candidates:

======================  ==============================================================
name                    meaning
======================  ==============================================================
``full``                mass action, one ODE per species
``qssa:all``            steady state on every intermediate and catalyst form
``qssa:X,Y``            steady state on one group of intermediates (a species and the
                        other forms of its catalyst), when there are several groups;
                        the groups are those of the file's ``steady:`` species when
                        it names some, else of every intermediate
``preeq:L``             step ``L`` at equilibrium (a two-way step with an intermediate)
``rds:L``               step ``L`` rate-determining: every other two-way step with an
                        intermediate at equilibrium, other intermediates in steady state
``qssa:X+preeq:L``      a combination (the file's directives, or the command line)
======================  ==============================================================

Species are listed in mechanism order and steps in file order. A name is a pure
function of the mechanism and the request, so the same file always gives the same
names. :func:`derive_variant` builds a variant back from its name. Names may hold
commas (``qssa:Br,H``): split a list of names with :func:`split_variant_list`.

Examples
--------
>>> from mechfit import parse_mechanism
>>> m = parse_mechanism("bind: E + S <=> ES @ k1, k_1\\ncat: ES -> E + P @ k2")
>>> [v.name for v in derive_variants(m)]
['full', 'qssa:all', 'preeq:bind']
"""

from __future__ import annotations

import re

import numpy as np
import sympy

from mechfit.derive.errors import DerivationError
from mechfit.derive.model import KineticModel, mass_action_model
from mechfit.derive.steady_state import (
    _eliminated,
    eliminable_species,
    rate_determining_model,
    reduced_model,
    variant_name,
)
from mechfit.mechanism.model import Mechanism

_PART = re.compile(r"\+(?=(?:qssa|preeq|rds):)")


_LIST = re.compile(r"\s*,\s*(?=(?:full\s*(?:,|$)|qssa:|preeq:|rds:))")


def split_variant_list(text: str) -> list[str]:
    """Split a comma-separated list of variant names; commas inside a name
    (``qssa:Br,H``) stay, since a new name starts only with a variant head.

    Examples
    --------
    >>> split_variant_list("full, qssa:Br,H,preeq:init,rds:prop")
    ['full', 'qssa:Br,H', 'preeq:init', 'rds:prop']
    """
    return [part.strip() for part in _LIST.split(text.strip()) if part.strip()]


def variant_requests(mech: Mechanism) -> list[tuple[str, dict]]:
    """The candidate variants as ``(name, options)`` without deriving them.

    ``options`` holds ``steady`` and ``fast`` (or ``rds``) for :func:`derive_variant`.
    """
    inter = eliminable_species(mech)
    out: list[tuple[str, dict]] = [("full", {})]
    if inter:
        out.append(("qssa:all", {"steady": list(inter)}))
        groups = []
        seeds = [x for x in inter if x in mech.steady] if mech.steady else list(inter)
        for x in seeds:
            forms, _ = _eliminated(mech, {x})
            if forms not in groups and set(forms) != set(inter):
                groups.append(forms)
        if len(groups) > 1:
            for forms in groups:
                out.append((variant_name(mech, steady=forms), {"steady": forms}))
    for step in mech.steps:
        if step.reversible and step.law is None and set(step.species) & set(inter):
            out.append((f"preeq:{step.label}", {"fast": [step.label]}))
    for step in mech.steps:
        others = [s for s in mech.steps if s.label != step.label and s.reversible
                  and s.law is None and set(s.species) & set(inter)]
        if set(step.species) & set(inter) and others:
            out.append((f"rds:{step.label}", {"rds": step.label}))
    if mech.steady or mech.fast:
        name = variant_name(mech, mech.steady, mech.fast)
        if name not in {n for n, _ in out}:
            out.append((name, {"steady": list(mech.steady), "fast": list(mech.fast)}))
    return out


def derive_variant(mech: Mechanism, name: str) -> KineticModel:
    """Build the variant called ``name`` (see the module table).

    Examples
    --------
    >>> from mechfit import parse_mechanism
    >>> m = parse_mechanism("bind: E + S <=> ES @ k1, k_1\\ncat: ES -> E + P @ k2")
    >>> derive_variant(m, "preeq:bind").algebraic["ES"]
    S*k1*(ES__0 + E__0)/(S*k1 + k_1)
    """
    if name == "full":
        return mass_action_model(mech)
    steady: list[str] = []
    fast: list[str] = []
    for part in _PART.split(name):
        kind, _, rest = part.partition(":")
        items = [x for x in rest.split(",") if x]
        if kind == "rds" and len(items) == 1 and part == name:
            return rate_determining_model(mech, items[0])
        if kind == "qssa" and items:
            steady += list(eliminable_species(mech)) if items == ["all"] else items
        elif kind == "preeq" and items:
            fast += items
        else:
            raise DerivationError(
                f"unknown variant name '{name}': expected full, qssa:all, qssa:X,Y, "
                "preeq:STEP, rds:STEP or a combination such as qssa:X+preeq:STEP",
                names=(name,))
    return reduced_model(mech, steady=steady, fast=fast, name=name)


def derive_variants(mech: Mechanism, *, skipped: list | None = None) -> list[KineticModel]:
    """Derive every variant of :func:`variant_requests`, in that order.

    A candidate the mechanism does not support (for example fast steps whose
    equilibria cannot be separated) is left out; pass a list as ``skipped`` to
    receive ``(name, reason)`` for each. A candidate whose equations are the same
    as an earlier variant's is left out too (reason ``"same as <name>"``). Variants
    without a closed form are kept, marked ``numerical_steady_state``.
    """
    out: list[KineticModel] = []
    for name, options in variant_requests(mech):
        try:
            if "rds" in options:
                model = rate_determining_model(mech, options["rds"])
            elif name == "full":
                model = mass_action_model(mech)
            else:
                model = reduced_model(mech, name=name, **options)
        except DerivationError as err:
            if skipped is not None:
                skipped.append((name, str(err)))
            continue
        twin = next((m for m in out if same_equations(m, model)), None)
        if twin is not None:
            if skipped is not None:
                skipped.append((name, f"same as {twin.name}"))
            continue
        out.append(model)
    return out


def same_equations(a: KineticModel, b: KineticModel, points: int = 3) -> bool:
    """True when two variants have the same state, the same eliminated species and
    equal expressions.

    Equality of the rational expressions is tested numerically at ``points`` random
    positive values of every symbol (relative tolerance 1e-9): two different
    rational functions agree at a random point with probability zero (the
    Schwartz–Zippel lemma; common practice for polynomial identity testing). This
    avoids costly symbolic simplification.
    """
    if (a.state != b.state or set(a.algebraic) != set(b.algebraic)
            or a.implicit_species != b.implicit_species):
        return False
    if a.numerical_steady_state or b.numerical_steady_state:
        return a.rhs == b.rhs and a.implicit == b.implicit
    left = [*a.rhs, *(a.algebraic[s] for s in sorted(a.algebraic))]
    right = [*b.rhs, *(b.algebraic[s] for s in sorted(b.algebraic))]
    free = sorted(set().union(*(e.free_symbols for e in left + right)), key=str)
    rng = np.random.default_rng(7)
    for _ in range(points):
        point = {s: sympy.Float(10.0 ** rng.uniform(-1, 1)) for s in free}
        for x, y in zip(left, right, strict=True):
            vx, vy = complex(x.xreplace(point).evalf()), complex(y.xreplace(point).evalf())
            if abs(vx - vy) > 1e-9 * max(abs(vx), abs(vy), 1e-300):
                return False
    return True
