"""Reading the steps text into a checked :class:`~mechfit.mechanism.model.Mechanism`.

The text is parsed one line at a time with the grammar of ``steps.lark``; then the
rules that a grammar cannot say are checked here, each error pointing at the token
that breaks it (coefficients, rate-constant counts, fixed values, labels,
directives, balance). See ``docs/format.md`` for the format.
"""

from __future__ import annotations

import math
import os
from dataclasses import dataclass, field
from pathlib import Path

from lark import Token, Tree

from mechfit.errors import MechanismSyntaxError, SourceError, UnbalancedStepError
from mechfit.mechanism import symbols
from mechfit.mechanism.expression import Expression, build_expression
from mechfit.mechanism.grammar import parse_rule
from mechfit.mechanism.model import Constant, Mechanism, Side, Step

__all__ = ["parse_mechanism", "load_mechanism"]


@dataclass
class _Line:
    number: int
    text: str  # the whole line as written (comment included)


@dataclass
class _Pending:
    """What has been read so far, with positions for later checks."""

    file: str
    steps: list[Step] = field(default_factory=list)
    step_lines: list[_Line] = field(default_factory=list)
    default_named: list[tuple[int, str, _Line]] = field(default_factory=list)
    explicit: dict[str, tuple[_Line, Token]] = field(default_factory=dict)
    fixed: dict[str, tuple[float, _Line, Token]] = field(default_factory=dict)
    species: dict[str, None] = field(default_factory=dict)
    labels: dict[str, _Line] = field(default_factory=dict)
    steady: list[tuple[str, _Line, Token]] = field(default_factory=list)
    fast: list[tuple[str, _Line, Token]] = field(default_factory=list)
    made_of: dict[str, tuple[Side, _Line, Token]] = field(default_factory=dict)
    law_species: list[tuple[str, _Line]] = field(default_factory=list)

    def error(self, cls: type[SourceError], message: str, line: _Line,
              column: int | None) -> SourceError:
        return cls(message, file=self.file, line=line.number, column=column,
                   text=line.text.rstrip("\n"))


def _strip_comment(text: str) -> str:
    cut = text.find("#")
    return text if cut < 0 else text[:cut]


def _coefficient(tok: Token, p: _Pending, line: _Line) -> int:
    raw = str(tok)
    try:
        value = float(raw)
    except ValueError:  # pragma: no cover - the grammar only lets numbers through
        value = math.nan
    if not math.isfinite(value) or value != int(value) or "." in raw or "e" in raw.lower():
        raise p.error(MechanismSyntaxError,
                      f"coefficient '{raw}' is not allowed: coefficients are positive "
                      "integers (write '2 A', not '1.5 A')", line, tok.column)
    if value <= 0:
        raise p.error(MechanismSyntaxError,
                      f"coefficient '{raw}' is not allowed: coefficients are positive "
                      "integers (write '0' alone for nothing)", line, tok.column)
    return int(value)


def _side(tree: Tree, p: _Pending, line: _Line, *, allow_nothing: bool = True) -> Side:
    terms: dict[str, int] = {}
    nothing: Token | None = None
    for term in tree.children:
        if term.data == "nothing_term":
            tok = term.children[0]
            if str(tok).lstrip("+") not in {"0"}:
                raise p.error(MechanismSyntaxError,
                              f"a number alone is not a species: expected a species after "
                              f"'{tok}', or '0' for nothing", line, tok.column + len(tok))
            if not allow_nothing:
                raise p.error(MechanismSyntaxError,
                              "'0' (nothing) cannot be part of a composition", line,
                              tok.column)
            nothing = tok
            continue
        toks = term.children
        name_tok = toks[-1]
        coef = _coefficient(toks[0], p, line) if len(toks) == 2 else 1
        terms[str(name_tok)] = terms.get(str(name_tok), 0) + coef
    if nothing is not None and terms:
        raise p.error(MechanismSyntaxError,
                      "'0' (nothing) must stand alone on its side of the arrow", line,
                      nothing.column)
    return tuple(terms.items())


def _number(tok: Token, p: _Pending, line: _Line, what: str) -> float:
    value = float(str(tok))
    if not math.isfinite(value):
        raise p.error(MechanismSyntaxError, f"{what} '{tok}' is not a finite number", line,
                      tok.column)
    return value


def _constant(tree: Tree, p: _Pending, line: _Line) -> tuple[Constant, Token]:
    toks = list(tree.children)
    name_i = next(i for i, t in enumerate(toks) if t.type == "NAME")
    name_tok = toks[name_i]
    factor = 1.0
    if name_i == 1:
        factor = _number(toks[0], p, line, "factor")
        if factor <= 0:
            raise p.error(MechanismSyntaxError,
                          f"factor '{toks[0]}' must be positive", line, toks[0].column)
    name = str(name_tok)
    if name_i + 1 < len(toks):
        vtok = toks[name_i + 1]
        value = _number(vtok, p, line, "value")
        if value <= 0:
            raise p.error(MechanismSyntaxError,
                          f"fixed value of '{name}' must be positive, got '{vtok}'", line,
                          vtok.column)
        if name in p.fixed and p.fixed[name][0] != value:
            first = p.fixed[name][1]
            raise p.error(MechanismSyntaxError,
                          f"'{name}' is fixed to {p.fixed[name][0]:g} on line {first.number} "
                          f"and to {value:g} here: a shared constant has one value", line,
                          vtok.column)
        p.fixed.setdefault(name, (value, line, vtok))
    p.explicit.setdefault(name, (line, name_tok))
    return Constant(name, factor), name_tok


def _read_step(tree: Tree, p: _Pending, line: _Line) -> None:
    children = list(tree.children)
    label_tok = None
    if isinstance(children[0], Token) and children[0].type == "LABEL":
        label_tok = children.pop(0)
    left, arrow, right = children[0], children[1], children[2]
    rate = children[3] if len(children) > 3 else None
    reactants = _side(left, p, line)
    products = _side(right, p, line)
    if not reactants and not products:
        raise p.error(MechanismSyntaxError,
                      "a step needs at least one species: both sides are '0'", line,
                      arrow.column)
    reversible = str(arrow) in {"<=>", "⇌"}
    position = len(p.steps) + 1
    if label_tok is not None:
        label = str(label_tok)
        if label in p.labels:
            raise p.error(MechanismSyntaxError,
                          f"duplicate label '{label}': already used on line "
                          f"{p.labels[label].number}", line, label_tok.column)
    else:
        label = str(position)
    p.labels[label] = line
    for name, _ in reactants + products:
        p.species.setdefault(name)

    forward = reverse = None
    law: Expression | None = None
    if rate is None:
        forward = Constant(f"k{position}")
        p.default_named.append((position, forward.name, line))
        if reversible:
            reverse = Constant(f"k_{position}")
            p.default_named.append((position, reverse.name, line))
    elif rate.data == "law":
        rate_tok = rate.children[0]
        if reversible:
            raise p.error(MechanismSyntaxError,
                          "an empirical rate law needs a one-way step ('->'): write the "
                          "reverse direction as a step of its own", line, rate_tok.column)
        expr_tree = rate.children[1]
        meta = expr_tree.meta if isinstance(expr_tree, Tree) else None
        law_text = (line.text[meta.start_pos:meta.end_pos] if meta and not meta.empty
                    else str(expr_tree))
        law = build_expression(expr_tree, law_text, file=p.file, line=line.number,
                               line_text=line.text.rstrip("\n"))
        if law.initial:
            col = line.text.find("]0") + 1
            raise p.error(MechanismSyntaxError,
                          "a rate law cannot use an initial concentration '[X]0': it "
                          "depends on the present concentrations only", line, col or None)
        for sp in sorted(law.species):
            p.law_species.append((sp, line))
    else:
        consts = [_constant(c, p, line) for c in rate.children[0].children]
        if not reversible and len(consts) > 1:
            tok = consts[1][1]
            raise p.error(MechanismSyntaxError,
                          f"a one-way step ('->') takes one rate constant, but a reverse "
                          f"constant '{tok}' follows: use '<=>' or remove it", line,
                          tok.column)
        if reversible and len(consts) == 1:
            tok = consts[0][1]
            raise p.error(MechanismSyntaxError,
                          f"a two-way step ('<=>') needs a forward and a reverse constant: "
                          f"expected '@ {tok}, <reverse name>'", line, tok.column + len(tok))
        if reversible and len(consts) > 2:
            tok = consts[2][1]
            raise p.error(MechanismSyntaxError,
                          "a two-way step takes two rate constants (forward, reverse); "
                          f"found a third, '{tok}'", line, tok.column)
        forward = consts[0][0]
        reverse = consts[1][0] if reversible else None
        if reversible and forward.name == reverse.name:
            tok = consts[1][1]
            raise p.error(MechanismSyntaxError,
                          f"forward and reverse constants of a step must differ: "
                          f"'{tok}' is both", line, tok.column)
    p.steps.append(Step(label=label, reactants=reactants, products=products,
                        reversible=reversible, forward=forward, reverse=reverse, law=law,
                        labelled=label_tok is not None, line=line.number))
    p.step_lines.append(line)


def _read_directive(tree: Tree, p: _Pending, line: _Line) -> None:
    kind = tree.data
    toks = tree.children[1:]
    if kind == "steady":
        p.steady.extend((str(t), line, t) for t in toks)
    elif kind == "fast":
        for ref in toks:
            tok = ref.children[0]
            p.fast.append((str(tok), line, tok))
    else:  # made_of
        sp_tok, side = toks[0], toks[1]
        name = str(sp_tok)
        if name in p.made_of:
            raise p.error(MechanismSyntaxError,
                          f"'{name}' already has a composition (line "
                          f"{p.made_of[name][1].number})", line, sp_tok.column)
        p.made_of[name] = (_side(side, p, line, allow_nothing=False), line, sp_tok)


def _known(names) -> str:
    names = list(names)
    shown = ", ".join(names[:12]) + (", ..." if len(names) > 12 else "")
    return shown or "none"


def parse_mechanism(text: str, *, file: str = "<text>", name: str | None = None) -> Mechanism:
    """Parse steps text into a checked :class:`Mechanism`.

    Parameters
    ----------
    text
        The steps text (see ``docs/format.md``).
    file
        The file name to show in messages.
    name
        A short name for the mechanism (default: the file's stem).

    Raises
    ------
    MechanismSyntaxError, UnbalancedStepError, ExpressionError
        With file, line and column and the line shown under a caret.

    Examples
    --------
    >>> m = parse_mechanism("A -> B @ k1\\nB -> C @ k2")
    >>> [s.equation() for s in m.steps]
    ['A -> B', 'B -> C']
    """
    from mechfit.mechanism.balance import check_balance
    from mechfit.mechanism.network import intermediates

    p = _Pending(file=file)
    for number, raw in enumerate(text.splitlines(), start=1):
        body = _strip_comment(raw)
        if not body.strip():
            continue
        line = _Line(number, raw)
        tree = parse_rule(body.rstrip(), "line", file=file, line=number,
                          error=MechanismSyntaxError, shown=raw.rstrip("\n"))
        if tree.data == "step":
            _read_step(tree, p, line)
        else:
            _read_directive(tree, p, line)
    if not p.steps:
        raise MechanismSyntaxError(
            "no steps found: expected at least one step such as 'A -> B @ k1'",
            file=file, line=1, column=1, text=(text.splitlines() or [""])[0])

    # species that appear only in empirical laws are run conditions held constant
    for sp, _line in p.law_species:
        p.species.setdefault(sp)

    # default names must not collide with names written elsewhere
    for position, default, line in p.default_named:
        if default in p.explicit:
            other = p.explicit[default][0]
            raise p.error(MechanismSyntaxError,
                          f"step {position} has no '@', so its constant defaults to "
                          f"'{default}', but '{default}' is written on line {other.number}: "
                          "name this step's constants after '@'", line, 1)
    constants = {c.name for s in p.steps for c in (s.forward, s.reverse) if c is not None}
    species = tuple(p.species)
    for sname in species:
        if sname in constants:
            line, tok = p.explicit.get(sname, (p.step_lines[0], None))
            raise p.error(MechanismSyntaxError,
                          f"'{sname}' is both a species and a rate constant: rename one",
                          line, tok.column if tok is not None else None)
    steps = list(p.steps)
    for i, step in enumerate(steps):
        if step.law is None:
            continue
        clash = sorted(step.law.parameters & set(species))
        if clash:
            line = p.step_lines[i]
            col = line.text.find(clash[0], line.text.find("rate")) + 1
            raise p.error(MechanismSyntaxError,
                          f"'{clash[0]}' in the rate law is a species: write [{clash[0]}] "
                          "for its concentration", line, col or None)
        shared = step.law.parameters & constants
        if shared:
            subs = {symbols.parameter(n): symbols.rate_constant(n) for n in shared}
            law = step.law
            steps[i] = _replace_law(step, Expression(law.text, law.sympy.xreplace(subs),
                                                     law.species, law.initial, law.parameters))

    # directives
    order = {c: i for i, c in enumerate(dict.fromkeys(
        c.name for st in steps for c in (st.forward, st.reverse) if c is not None))}
    fixed_items = tuple(sorted(((k, v[0]) for k, v in p.fixed.items()),
                               key=lambda kv: order.get(kv[0], len(order))))
    base = Mechanism(species=species, steps=tuple(steps), fixed_items=fixed_items)
    inter = set(intermediates(base))
    steady: dict[str, None] = {}
    for sname, line, tok in p.steady:
        if sname not in p.species:
            raise p.error(MechanismSyntaxError,
                          f"steady: unknown species '{sname}': the mechanism has "
                          f"{_known(species)}", line, tok.column)
        if sname not in inter:
            raise p.error(MechanismSyntaxError,
                          f"steady: '{sname}' is not an intermediate (it must be formed by "
                          "one step and consumed by another); intermediates here: "
                          f"{_known(s for s in species if s in inter)}", line, tok.column)
        steady.setdefault(sname)
    fast: dict[str, None] = {}
    for ref, line, tok in p.fast:
        step = _find_step(steps, ref)
        if step is None:
            raise p.error(MechanismSyntaxError,
                          f"fast: unknown step '{ref}': expected a label or a step number; "
                          f"steps here: {_known(s.label for s in steps)}", line, tok.column)
        if not step.reversible:
            raise p.error(MechanismSyntaxError,
                          f"fast: step '{ref}' is one-way; only two-way ('<=>') steps can be "
                          "at equilibrium", line, tok.column)
        fast.setdefault(step.label)
    for sname, (_parts, line, tok) in p.made_of.items():
        if sname not in p.species:
            raise p.error(MechanismSyntaxError,
                          f"made-of: unknown species '{sname}': the mechanism has "
                          f"{_known(species)}", line, tok.column)

    mech = Mechanism(species=species, steps=tuple(steps), fixed_items=base.fixed_items,
                     steady=tuple(steady), fast=tuple(fast),
                     made_of_items=tuple((k, v[0]) for k, v in p.made_of.items()),
                     name=name or (Path(file).stem if file != "<text>" else "mechanism"),
                     source=file)
    problem = check_balance(mech)
    if problem is not None:
        index, message = problem
        if isinstance(index, str):
            _parts, line, tok = p.made_of[index]
            raise p.error(MechanismSyntaxError, message, line, tok.column)
        line = p.step_lines[index]
        arrow_col = _arrow_column(line.text)
        raise p.error(UnbalancedStepError, message, line, arrow_col)
    warnings = _warnings(mech, p)
    return Mechanism(species=mech.species, steps=mech.steps, fixed_items=mech.fixed_items,
                     steady=mech.steady, fast=mech.fast, made_of_items=mech.made_of_items,
                     name=mech.name, source=file, warnings=tuple(warnings))


def _replace_law(step: Step, law: Expression) -> Step:
    return Step(step.label, step.reactants, step.products, step.reversible, step.forward,
                step.reverse, law, step.labelled, step.line)


def _find_step(steps: list[Step], ref: str) -> Step | None:
    for s in steps:
        if s.label == ref:
            return s
    if ref.isdigit() and 1 <= int(ref) <= len(steps):
        return steps[int(ref) - 1]
    return None


def _arrow_column(text: str) -> int | None:
    for arrow in ("<=>", "->", "⇌", "→"):
        i = text.find(arrow)
        if i >= 0:
            return i + 1
    return None


def _warnings(mech: Mechanism, p: _Pending) -> list[str]:
    out = []
    where = f"{p.file}:" if p.file != "<text>" else "line "
    seen: dict[tuple, Step] = {}
    for step, line in zip(mech.steps, p.step_lines, strict=True):
        key = (tuple(sorted(step.reactants)), tuple(sorted(step.products)))
        keys = [key]
        if step.reversible:
            keys.append((key[1], key[0]))
        for k in keys:
            if k in seen:
                first = seen[k]
                out.append(f"{where}{line.number}: step '{step.label}' repeats step "
                           f"'{first.label}' (line {first.line}): {step.equation()}")
                break
        for k in keys:
            seen.setdefault(k, step)
        if step.law is None and step.molecularity > 2:
            out.append(f"{where}{line.number}: step '{step.label}' has molecularity "
                       f"{step.molecularity}; elementary steps of molecularity above 2 are "
                       "rare (common practice)")
    consumed = set()
    for r in mech.reactions():
        net = {}
        for n, c in r.reactants:
            net[n] = net.get(n, 0) - c
        for n, c in r.products:
            net[n] = net.get(n, 0) + c
        consumed.update(n for n, v in net.items() if v < 0)
    for sname in mech.species:
        if sname not in consumed:
            out.append(f"species '{sname}' is never consumed (a final product or a "
                       "spectator); check the spelling if it should react further")
    return out


def load_mechanism(path: str | os.PathLike[str]) -> Mechanism:
    """Read and parse a steps file (``.mech``).

    Raises
    ------
    MechanismSyntaxError
        Also when the file is missing or unreadable (with the path).

    Examples
    --------
    >>> import mechfit, pathlib, tempfile
    >>> f = pathlib.Path(tempfile.mkdtemp()) / "ab.mech"
    >>> _ = f.write_text("A -> B @ k1\\n")
    >>> mechfit.load_mechanism(f).name
    'ab'
    """
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise MechanismSyntaxError("file not found: expected a steps file (.mech)",
                                   file=str(path)) from None
    except IsADirectoryError:
        raise MechanismSyntaxError("is a folder: expected a steps file (.mech)",
                                   file=str(path)) from None
    except UnicodeDecodeError as exc:
        raise MechanismSyntaxError(f"not UTF-8 text (byte {exc.start}): expected a steps "
                                   "file", file=str(path)) from None
    except OSError as exc:
        raise MechanismSyntaxError(f"cannot read the file: {exc.strerror}",
                                   file=str(path)) from None
    return parse_mechanism(text, file=str(path), name=path.stem)

