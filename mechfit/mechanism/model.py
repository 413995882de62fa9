"""The immutable reaction-network objects: :class:`Mechanism`, :class:`Step`, :class:`Reaction`.

A :class:`Mechanism` is what a steps file says, checked: species in order of first
appearance, steps with their stoichiometry and rate constants, fixed values and the
directives. It never changes after parsing; tools that reduce or vary a mechanism
make new objects. Positions (file, line) ride along for messages but do not take
part in equality, so ``parse_mechanism(m.to_text()) == m``.
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping
from dataclasses import dataclass, field
from types import MappingProxyType

import sympy

from mechfit.mechanism import symbols
from mechfit.mechanism.expression import Expression, to_text

Side = tuple[tuple[str, int], ...]


@dataclass(frozen=True)
class Constant:
    """A rate constant as written on a step: ``name`` times a numeric ``factor``.

    ``@ 2*k1`` gives ``Constant("k1", 2.0)``: the step's rate constant is 2 k1 (a
    statistical factor); the fitted parameter is ``k1``.
    """

    name: str
    factor: float = 1.0

    def symbol(self) -> sympy.Expr:
        """``factor * k`` as sympy (the factor exact where it is a short decimal)."""
        return _exact(self.factor) * symbols.rate_constant(self.name)

    def text(self) -> str:
        return self.name if self.factor == 1.0 else f"{_number(self.factor)}*{self.name}"


@dataclass(frozen=True)
class Step:
    """One line of the steps text that describes a reaction.

    Attributes
    ----------
    label
        The label as written, or the step's 1-based position as a string.
    reactants, products
        ``((species, coefficient), ...)`` in the order written; ``()`` for ``0``.
    reversible
        ``True`` for ``<=>``.
    forward, reverse
        The rate constants (``reverse`` is ``None`` for one-way steps; ``forward`` is
        ``None`` for a step with an empirical law).
    law
        An empirical rate law (``@ rate = ...``) or ``None`` for mass action.
    """

    label: str
    reactants: Side
    products: Side
    reversible: bool
    forward: Constant | None
    reverse: Constant | None = None
    law: Expression | None = None
    labelled: bool = field(default=False, compare=False)
    line: int | None = field(default=None, compare=False)

    @property
    def species(self) -> tuple[str, ...]:
        """Species of the step, reactants first, each once."""
        seen: dict[str, None] = {}
        for name, _ in self.reactants + self.products:
            seen.setdefault(name)
        return tuple(seen)

    @property
    def molecularity(self) -> int:
        """Sum of the reactant coefficients (of each direction, the larger)."""
        fwd = sum(c for _, c in self.reactants)
        rev = sum(c for _, c in self.products) if self.reversible else 0
        return max(fwd, rev)

    def net(self) -> dict[str, int]:
        """Net stoichiometry of the forward direction: products minus reactants."""
        out: dict[str, int] = {}
        for name, c in self.reactants:
            out[name] = out.get(name, 0) - c
        for name, c in self.products:
            out[name] = out.get(name, 0) + c
        return out

    def equation(self) -> str:
        """The step written as ``2 A + B <=> C`` (no label, no constants)."""
        arrow = "<=>" if self.reversible else "->"
        return f"{_side_text(self.reactants)} {arrow} {_side_text(self.products)}"

    def to_text(self, species: tuple[str, ...] = ()) -> str:
        """The step as a line of the steps text."""
        head = f"{self.label}: " if self.labelled else ""
        if self.law is not None:
            tail = f"@ rate = {to_text(self.law.sympy, species)}"
        else:
            names = [self.forward.text()] if self.forward else []
            if self.reverse is not None:
                names.append(self.reverse.text())
            tail = "@ " + ", ".join(names)
        return f"{head}{self.equation()}  {tail}"


@dataclass(frozen=True)
class Reaction:
    """One direction of a step, as mass-action kinetics sees it.

    A reversible step gives two reactions (``direction`` ``"forward"`` and
    ``"reverse"``); a one-way step gives one.
    """

    step: str
    direction: str
    reactants: Side
    products: Side
    constant: Constant | None
    law: Expression | None = None

    def rate(self) -> sympy.Expr:
        """The rate of this reaction as sympy: ``factor*k*prod([X]^nu)`` or the law.

        Rate convention (IUPAC Gold Book, "rate of reaction"; common practice for
        elementary steps): the rate of an elementary reaction is its rate constant
        times the product of the reactant concentrations, each to the power of its
        stoichiometric coefficient.
        """
        if self.law is not None:
            return self.law.sympy
        value = self.constant.symbol() if self.constant else sympy.Integer(1)
        for name, c in self.reactants:
            value *= symbols.concentration(name) ** c
        return value


def _exact(x: float) -> sympy.Expr:
    if float(x).is_integer():
        return sympy.Integer(int(x))
    return sympy.Rational(repr(float(x)))


def _number(x: float) -> str:
    if float(x).is_integer() and abs(x) < 1e15:
        return str(int(x))
    return repr(float(x))


def _side_text(side: Side) -> str:
    if not side:
        return "0"
    return " + ".join(name if c == 1 else f"{c} {name}" for name, c in side)


@dataclass(frozen=True)
class Mechanism:
    """A checked reaction mechanism, parsed from the steps text.

    Build one with :func:`mechfit.parse_mechanism` or :func:`mechfit.load_mechanism`.

    Attributes
    ----------
    species
        Species in order of first appearance.
    steps
        The steps in file order.
    fixed
        Rate constants (or law parameters) given a value with ``= number``.
    steady, fast
        Directive defaults: species for the steady-state approximation, labels of
        steps taken at equilibrium.
    made_of
        Declared compositions: ``{species: ((part, count), ...)}``.
    name
        A short name (the file's stem), not part of equality.

    Examples
    --------
    >>> from mechfit import parse_mechanism
    >>> m = parse_mechanism("E + S <=> ES @ k1, k_1\\nES -> E + P @ k2")
    >>> m.species
    ('E', 'S', 'ES', 'P')
    >>> m.constants
    ('k1', 'k_1', 'k2')
    >>> parse_mechanism(m.to_text()) == m
    True
    """

    species: tuple[str, ...]
    steps: tuple[Step, ...]
    fixed_items: tuple[tuple[str, float], ...] = ()
    steady: tuple[str, ...] = ()
    fast: tuple[str, ...] = ()
    made_of_items: tuple[tuple[str, Side], ...] = ()
    name: str = field(default="mechanism", compare=False)
    source: str = field(default="<text>", compare=False)
    warnings: tuple[str, ...] = field(default=(), compare=False)

    # ---- views -------------------------------------------------------------
    @property
    def fixed(self) -> Mapping[str, float]:
        """Fixed values, name -> value (read-only)."""
        return MappingProxyType(dict(self.fixed_items))

    @property
    def made_of(self) -> Mapping[str, Side]:
        """Declared compositions, species -> ((part, count), ...) (read-only)."""
        return MappingProxyType(dict(self.made_of_items))

    @property
    def constants(self) -> tuple[str, ...]:
        """Rate-constant names in order of first use (forward before reverse)."""
        seen: dict[str, None] = {}
        for step in self.steps:
            for c in (step.forward, step.reverse):
                if c is not None:
                    seen.setdefault(c.name)
        return tuple(seen)

    @property
    def law_parameters(self) -> tuple[str, ...]:
        """Free names of empirical laws that are not rate constants of other steps."""
        consts = set(self.constants)
        seen: dict[str, None] = {}
        for step in self.steps:
            if step.law is not None:
                for name in sorted(step.law.parameters):
                    if name not in consts:
                        seen.setdefault(name)
        return tuple(seen)

    @property
    def parameters(self) -> tuple[str, ...]:
        """All parameter names: rate constants, then free names of empirical laws."""
        return self.constants + self.law_parameters

    @property
    def free_parameters(self) -> tuple[str, ...]:
        """Parameters without a fixed value."""
        fixed = self.fixed
        return tuple(p for p in self.parameters if p not in fixed)

    def step(self, label: str) -> Step:
        """The step with this label (or 1-based position as a string)."""
        for s in self.steps:
            if s.label == label:
                return s
        raise KeyError(label)

    def reactions(self) -> tuple[Reaction, ...]:
        """Every direction of every step as a :class:`Reaction`, in file order."""
        out = []
        for s in self.steps:
            out.append(Reaction(s.label, "forward", s.reactants, s.products, s.forward, s.law))
            if s.reversible:
                out.append(Reaction(s.label, "reverse", s.products, s.reactants, s.reverse))
        return tuple(out)

    def __iter__(self) -> Iterator[Step]:
        return iter(self.steps)

    def __len__(self) -> int:
        return len(self.steps)

    # ---- text --------------------------------------------------------------
    def to_text(self) -> str:
        """The mechanism as steps text; :func:`parse_mechanism` gives back an equal one."""
        lines = [step.to_text(self.species) for step in self.steps]
        fixed = dict(self.fixed_items)
        if fixed:
            # fixed values are written on a step's constant in the grammar; put them
            # on the first use of each name
            lines = []
            done: set[str] = set()
            for step in self.steps:
                text = step.to_text(self.species)
                if step.law is None:
                    parts = []
                    for c in (step.forward, step.reverse):
                        if c is None:
                            continue
                        t = c.text()
                        if c.name in fixed and c.name not in done:
                            t += f" = {_number(fixed[c.name])}"
                            done.add(c.name)
                        parts.append(t)
                    head = f"{step.label}: " if step.labelled else ""
                    text = f"{head}{step.equation()}  @ " + ", ".join(parts)
                lines.append(text)
            rest = [n for n in fixed if n not in done]
            if rest:
                raise ValueError(
                    f"fixed values for {', '.join(rest)} cannot be written: they are not "
                    "rate constants of a mass-action step"
                )
        if self.steady:
            lines.append("steady: " + ", ".join(self.steady))
        if self.fast:
            lines.append("fast: " + ", ".join(self.fast))
        for sp, parts in self.made_of_items:
            lines.append(f"made-of: {sp} = {_side_text(parts)}")
        return "\n".join(lines) + "\n"

    def summary(self) -> dict:
        """A JSON-safe summary of the parsed text (no network analysis)."""
        return {
            "name": self.name,
            "species": list(self.species),
            "steps": [
                {
                    "label": s.label,
                    "equation": s.equation(),
                    "reversible": s.reversible,
                    "forward": s.forward.text() if s.forward else None,
                    "reverse": s.reverse.text() if s.reverse else None,
                    "law": to_text(s.law.sympy, self.species) if s.law else None,
                }
                for s in self.steps
            ],
            "constants": list(self.constants),
            "law_parameters": list(self.law_parameters),
            "fixed": dict(self.fixed_items),
            "steady": list(self.steady),
            "fast": list(self.fast),
        }
