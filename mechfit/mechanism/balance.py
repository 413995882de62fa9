"""Element and charge balance of steps.

A step is checked when every one of its species has a known composition: it parses
as a formula of real elements (:mod:`mechfit.mechanism.formula`), or ``made-of``
declares it, or it is itself a part named in a ``made-of`` declaration (an abstract
unit such as a catalyst ``Cat``). Steps with a species of unknown make-up are not
checked: nothing can be said about them. Empirical-law steps are checked too (their
stoichiometry still has to balance).

Examples
--------
>>> from mechfit import parse_mechanism
>>> parse_mechanism("H2 + Cl2 -> 2 HCl @ k1").species
('H2', 'Cl2', 'HCl')
"""

from __future__ import annotations

from collections.abc import Mapping

from mechfit.mechanism.formula import charge_of, composition
from mechfit.mechanism.model import Mechanism, Side


def _resolver(mech: Mechanism):
    made_of = dict(mech.made_of_items)
    parts = {name for side in made_of.values() for name, _ in side}
    cache: dict[str, dict[str, int] | None] = {}

    def resolve(name: str, trail: tuple[str, ...] = ()) -> dict[str, int] | None:
        if name in cache:
            return cache[name]
        if name in trail:
            raise ValueError("made-of: the compositions refer to each other in a circle: "
                             + " -> ".join(trail + (name,)))
        out: dict[str, int] | None
        if name in made_of:
            out = {}
            charge = 0
            for part, n in made_of[name]:
                if part == name:  # 'made-of: H = H' declares a one-letter element
                    comp = composition(part, allow_single_letter=True)
                    sub = comp.as_dict() if comp is not None else {part: 1}
                else:
                    sub = resolve(part, trail + (name,))
                if sub is None:
                    sub = {part: 1}
                for k, v in sub.items():
                    if k == "charge":
                        charge += v * n
                    else:
                        out[k] = out.get(k, 0) + v * n
            own = charge_of(name)
            total = own if own else charge
            if total:
                out["charge"] = total
        else:
            comp = composition(name, allow_single_letter=bool(trail))
            if comp is not None:
                out = comp.as_dict()
            elif name in parts:
                out = {name: 1}
                if charge_of(name):
                    out["charge"] = charge_of(name)
            else:
                out = None
        cache[name] = out
        return out

    return resolve


def _total(side: Side, resolve) -> dict[str, int]:
    out: dict[str, int] = {}
    for name, n in side:
        for k, v in resolve(name).items():
            out[k] = out.get(k, 0) + v * n
    return {k: v for k, v in out.items() if v}


def _show(d: Mapping[str, int]) -> str:
    atoms = ", ".join(f"{k} {v}" for k, v in sorted(d.items()) if k != "charge")
    q = d.get("charge", 0)
    return (atoms or "nothing") + (f", charge {q:+d}" if q else "")


def check_balance(mech: Mechanism) -> tuple[int | str, str] | None:
    """The first unbalanced step as ``(index, message)``, or ``None`` if all balance.

    ``index`` is the step's position in ``mech.steps``, or the name of a ``made-of``
    species when the declarations themselves are at fault (a circle).
    """
    resolve = _resolver(mech)
    for sp, _ in mech.made_of_items:
        try:
            resolve(sp)
        except ValueError as exc:
            return sp, str(exc)
    for i, step in enumerate(mech.steps):
        if not step.reactants or not step.products:
            continue  # inflow or outflow: exchange with the surroundings, not a reaction
        if any(resolve(n) is None for n in step.species):
            continue
        left, right = _total(step.reactants, resolve), _total(step.products, resolve)
        if left != right:
            keys = sorted(set(left) | set(right))
            diff = ", ".join(f"{k} {left.get(k, 0)} vs {right.get(k, 0)}" for k in keys
                             if left.get(k, 0) != right.get(k, 0))
            return i, (f"unbalanced step '{step.label}': the left side has {_show(left)} but "
                       f"the right side has {_show(right)} ({diff}); fix the coefficients, "
                       "or declare what abstract species are made of with 'made-of:'")
    return None


def balance_status(mech: Mechanism) -> dict[str, str]:
    """For each step label: ``"balanced"`` or ``"not checked"`` (unknown make-up)."""
    resolve = _resolver(mech)
    out = {}
    for step in mech.steps:
        known = all(resolve(n) is not None for n in step.species)
        if not step.reactants or not step.products:
            out[step.label] = "exchange"
        else:
            out[step.label] = "balanced" if known else "not checked"
    return out
