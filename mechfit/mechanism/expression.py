"""Expressions of mechfit's own grammar, built into sympy objects without ``eval``.

The grammar (start rule ``expression`` in ``steps.lark``) has numbers, parameter names,
concentrations ``[X]``, initial concentrations ``[X]0``, the operators ``+ - * / ^``
(``**`` too), parentheses and the functions ``exp``, ``ln``, ``log`` (natural),
``log10``, ``sqrt`` and ``abs``. The tree is turned into sympy here, node by node; user
text never reaches ``eval``, ``sympify`` or ``parse_expr``.

Examples
--------
>>> e = parse_expression("k*[A]^a*[B]")
>>> sorted(e.species), sorted(e.parameters)
(['A', 'B'], ['a', 'k'])
>>> to_text(e.sympy, e.species)
'k*[B]*[A]^a'
"""

from __future__ import annotations

from collections.abc import Callable, Iterable
from dataclasses import dataclass, field

import sympy
from lark import Token, Transformer, v_args
from lark.exceptions import VisitError

from mechfit.errors import ExpressionError
from mechfit.mechanism import symbols
from mechfit.mechanism.grammar import parse_rule

FUNCTIONS: dict[str, Callable[[sympy.Expr], sympy.Expr]] = {
    "exp": sympy.exp,
    "ln": sympy.log,
    "log": sympy.log,
    "log10": lambda x: sympy.log(x, 10),
    "sqrt": sympy.sqrt,
    "abs": sympy.Abs,
}


@dataclass(frozen=True, eq=False)
class Expression:
    """A parsed expression: its sympy form and the names it uses.

    Attributes
    ----------
    text
        The text as written (stripped).
    sympy
        The sympy expression. Concentrations are :func:`symbols.concentration`,
        initial concentrations :func:`symbols.initial_concentration`, other names
        :func:`symbols.parameter`.
    species
        Species whose concentration ``[X]`` appears.
    initial
        Species whose initial concentration ``[X]0`` appears.
    parameters
        The other (free) names.
    """

    text: str
    sympy: sympy.Expr = field(compare=False)
    species: frozenset[str]
    initial: frozenset[str]
    parameters: frozenset[str]

    def __eq__(self, other: object) -> bool:
        if not isinstance(other, Expression):
            return NotImplemented
        if self.sympy == other.sympy:
            return True
        return sympy.expand(self.sympy - other.sympy) == 0

    def __hash__(self) -> int:
        return hash((self.species, self.initial, self.parameters))


@v_args(inline=True)
class _Builder(Transformer):
    """Turns the lark tree of an expression into sympy, collecting the names used."""

    def __init__(self, where: Callable[[Token, str], ExpressionError]) -> None:
        super().__init__()
        self.where = where
        self.used_species: set[str] = set()
        self.used_initial: set[str] = set()
        self.used_parameters: set[str] = set()

    def number(self, tok: Token) -> sympy.Expr:
        return sympy.Rational(str(tok))

    def parameter(self, tok: Token) -> sympy.Expr:
        name = str(tok)
        if name in FUNCTIONS:
            raise self.where(tok, f"'{name}' is a function: write {name}(...)")
        self.used_parameters.add(name)
        return symbols.parameter(name)

    def concentration(self, tok: Token) -> sympy.Expr:
        self.used_species.add(str(tok))
        return symbols.concentration(str(tok))

    def initial(self, tok: Token, _zero: Token) -> sympy.Expr:
        self.used_initial.add(str(tok))
        return symbols.initial_concentration(str(tok))

    def call(self, name: Token, *args: sympy.Expr) -> sympy.Expr:
        fn = FUNCTIONS.get(str(name))
        if fn is None:
            known = ", ".join(FUNCTIONS)
            raise self.where(name, f"unknown function '{name}': expected one of {known}")
        if len(args) != 1:
            raise self.where(name, f"{name}() takes one argument, got {len(args)}")
        return fn(args[0])

    def add(self, a, b):
        return a + b

    def sub(self, a, b):
        return a - b

    def mul(self, a, b):
        return a * b

    def div(self, a, b):
        return a / b

    def neg(self, a):
        return -a

    def pow(self, a, b):
        return a**b

    def unary(self, a):  # the '+' prefix
        return a


def build_expression(tree, text: str, *, file: str = "<text>", line: int = 1,
                     line_text: str | None = None) -> Expression:
    """Build an :class:`Expression` from the parse tree of ``text``.

    ``line_text`` is the whole line the tree was parsed from (token columns count
    from its start); errors show it with a caret.
    """

    def where(tok: Token, message: str) -> ExpressionError:
        return ExpressionError(message, file=file, line=line, column=tok.column,
                               text=line_text if line_text is not None else text)

    builder = _Builder(where)
    try:
        value = builder.transform(tree)
    except VisitError as exc:  # lark wraps errors raised inside the transformer
        if isinstance(exc.orig_exc, ExpressionError):
            raise exc.orig_exc from None
        raise
    if not isinstance(value, sympy.Basic):  # a lone '+x' keeps a Tree around
        value = sympy.Integer(0)
    return Expression(
        text=text.strip(),
        sympy=value,
        species=frozenset(builder.used_species),
        initial=frozenset(builder.used_initial),
        parameters=frozenset(builder.used_parameters),
    )


def parse_expression(text: str, *, file: str = "<text>", line: int = 1) -> Expression:
    """Parse an expression of mechfit's grammar into an :class:`Expression`.

    Parameters
    ----------
    text
        For example ``"eps1*[CatAr] + eps2*[Prod] + base"``.
    file, line
        Where the text came from, for error messages.

    Raises
    ------
    ExpressionError
        With the position and what was expected, when the text does not parse or
        uses an unknown function.

    Examples
    --------
    >>> parse_expression("2*[A]0 - [A]").sympy
    -A + 2*A__0
    """
    tree = parse_rule(text, "expression", file=file, line=line, error=ExpressionError)
    return build_expression(tree, text, file=file, line=line)


class _Printer(sympy.printing.str.StrPrinter):
    """Prints sympy back into mechfit's grammar: species in brackets, '^' for powers."""

    def __init__(self, species: Iterable[str], initial: Iterable[str] = ()) -> None:
        super().__init__({"order": "none"})
        self._species = set(species)
        self._initial = set(initial)

    def _print_Symbol(self, expr):
        name = expr.name
        if name in self._species:
            return f"[{name}]"
        if name.endswith(symbols.INITIAL_SUFFIX):
            base = name[: -len(symbols.INITIAL_SUFFIX)]
            if base in self._initial or base in self._species:
                return f"[{base}]0"
        return name

    def _print_Pow(self, expr, rational=False):
        text = super()._print_Pow(expr, rational)
        return text.replace("**", "^")

    def _print_Function(self, expr):
        return super()._print_Function(expr)

    def _print_log(self, expr):
        return "ln(" + self._print(expr.args[0]) + ")"

    def _print_Abs(self, expr):
        return "abs(" + self._print(expr.args[0]) + ")"

    def _print_Float(self, expr):
        return repr(float(expr))


def to_text(expr: sympy.Expr, species: Iterable[str] = (), initial: Iterable[str] = ()) -> str:
    """Print a sympy expression in mechfit's grammar (the inverse of parsing).

    Examples
    --------
    >>> from mechfit.mechanism.symbols import concentration, parameter
    >>> to_text(parameter("k") * concentration("A") ** 2, species=["A"])
    'k*[A]^2'
    """
    return _Printer(species, initial).doprint(expr)
