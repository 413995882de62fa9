"""Generating candidate schemes from a base mechanism.

From one base mechanism a chemist often wants every variation of a few kinds: each
two-way step kept two-way or made one-way, and a few optional extra steps (catalyst
deactivation, product inhibition, an off-cycle reservoir) added or not. Each scheme gets
a stable name built from what was changed, so reruns and reports line up.

Examples
--------
>>> from mechfit import parse_mechanism
>>> base = parse_mechanism("bind: E + S <=> ES @ k1, k_1\\nturn: ES -> E + P @ k2", name="mm")
>>> [s.name for s in enumerate_schemes(base)]
['mm', 'mm__oneway-bind']
>>> extra = parse_mechanism("die: E -> Edead @ kd", name="extras")
>>> [s.name for s in enumerate_schemes(base, extras=extra, one_way=False)]
['mm', 'mm__plus-die']
"""

from __future__ import annotations

from dataclasses import dataclass
from itertools import combinations, product

from mechfit.errors import MechanismError, MechfitError
from mechfit.mechanism import Mechanism, intermediates, parse_mechanism
from mechfit.mechanism.model import Step


@dataclass(frozen=True)
class Scheme:
    """One generated candidate: a stable ``name``, its steps ``text`` and ``mechanism``."""

    name: str
    text: str
    mechanism: Mechanism
    changes: tuple[str, ...]


def _step_line(step: Step, species: tuple[str, ...], *, one_way: bool) -> str:
    if not one_way or not step.reversible:
        line = step.to_text(species)
    else:
        head = f"{step.label}: " if step.labelled else ""
        fwd = step.forward.text()
        line = f"{head}{step.equation().replace('<=>', '->')}  @ {fwd}"
    return line


def _fixed_suffix(mech: Mechanism, line: str, step: Step, done: set[str]) -> str:
    # keep fixed values: append '= value' to the first use of each fixed name
    if step.law is not None:
        return line
    head, _, names = line.partition("@ ")
    parts = []
    for part in names.split(", "):
        name = part.split("*")[-1].strip()
        if name in mech.fixed and name not in done:
            part = f"{part} = {mech.fixed[name]!r}"
            done.add(name)
        parts.append(part)
    return head + "@ " + ", ".join(parts)


def scheme_text(base: Mechanism, *, one_way: tuple[str, ...] = (),
                extra_steps: tuple[Step, ...] = (), extra_fixed: dict | None = None) -> str:
    """Steps text of ``base`` with the steps in ``one_way`` made one-way and
    ``extra_steps`` appended; directives that no longer apply are dropped."""
    lines: list[str] = []
    done: set[str] = set()
    species = base.species + tuple(s for st in extra_steps for s in st.species
                                   if s not in base.species)
    fixed = dict(base.fixed)
    fixed.update(extra_fixed or {})
    holder = Mechanism(species=species, steps=base.steps + extra_steps,
                       fixed_items=tuple(fixed.items()))
    for step in base.steps + tuple(extra_steps):
        line = _step_line(step, species, one_way=step.label in one_way)
        lines.append(_fixed_suffix(holder, line, step, done))
    draft = parse_mechanism("\n".join(lines) + "\n")
    inter = set(intermediates(draft))
    steady = [s for s in base.steady if s in inter]
    fast = [f for f in base.fast if f not in one_way]
    if steady:
        lines.append("steady: " + ", ".join(steady))
    if fast:
        lines.append("fast: " + ", ".join(fast))
    for sp, parts in base.made_of_items:
        lines.append("made-of: " + sp + " = " + " + ".join(
            p if c == 1 else f"{c} {p}" for p, c in parts))
    return "\n".join(lines) + "\n"


def enumerate_schemes(base: Mechanism, *, one_way: bool = True,
                      extras: Mechanism | None = None, max_extras: int | None = None
                      ) -> list[Scheme]:
    """Every scheme made from ``base`` by one-way choices and optional extra steps.

    Parameters
    ----------
    base
        The base mechanism (its name starts every scheme name).
    one_way
        Also make each two-way step one-way (all combinations). Steps named in ``fast``
        are kept two-way: a step at equilibrium cannot be one-way.
    extras
        A mechanism whose steps are the optional extra steps (a steps file of its own:
        catalyst deactivation, product inhibition, an off-cycle reservoir...). Every
        subset of at most ``max_extras`` of them is added in turn. Extra steps must be
        labelled, and their labels must not clash with the base's.
    max_extras
        Largest number of extra steps added at once (default: all of them).

    Returns
    -------
    list of Scheme
        The base first; names like ``mm__oneway-bind__plus-die``.
    """
    reversible = [s.label for s in base.steps if s.reversible and s.label not in base.fast]
    extra_steps = tuple(extras.steps) if extras is not None else ()
    for st in extra_steps:
        if not st.labelled:
            raise MechanismError(f"{extras.source}: extra step '{st.equation()}' (line "
                                 f"{st.line}) needs a label: scheme names are built from it")
        if any(st.label == b.label for b in base.steps):
            raise MechanismError(f"{extras.source}: extra step label '{st.label}' is also a "
                                 "step of the base mechanism; rename it")
    limit = len(extra_steps) if max_extras is None else max_extras
    subsets = [c for r in range(limit + 1) for c in combinations(extra_steps, r)]
    choices = [(False, True)] * len(reversible) if one_way else [(False,)] * len(reversible)
    out: list[Scheme] = []
    seen: set[str] = set()
    for flags in product(*choices):
        made = tuple(lab for lab, f in zip(reversible, flags, strict=True) if f)
        for subset in subsets:
            changes = tuple(f"oneway-{lab}" for lab in made) + tuple(
                f"plus-{st.label}" for st in subset)
            name = "__".join((base.name,) + changes)
            try:
                text = scheme_text(base, one_way=made, extra_steps=subset,
                                   extra_fixed=dict(extras.fixed) if extras else None)
                mech = parse_mechanism(text, file=f"<scheme {name}>", name=name)
            except MechfitError as exc:
                raise MechanismError(f"scheme {name} is not a valid mechanism: {exc}") from None
            if text in seen:
                continue
            seen.add(text)
            out.append(Scheme(name, text, mech, changes))
    return out
