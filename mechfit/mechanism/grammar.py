"""Loading the grammar of ``steps.lark`` and turning lark's errors into ours.

The grammar lives in one file, ``steps.lark`` beside this module (``docs/format.md``
quotes it). Two start rules are used: ``line`` for a line of a steps file and
``expression`` for an expression.
"""

from __future__ import annotations

import re
from functools import cache
from importlib import resources

from lark import Lark, Tree
from lark.exceptions import UnexpectedCharacters, UnexpectedEOF, UnexpectedInput, UnexpectedToken

from mechfit.errors import SourceError

#: what each token of the grammar is, in words, for "expected ..." messages
TOKEN_WORDS: dict[str, str] = {
    "ARROW": "an arrow ('->' or '<=>')",
    "SPECIES": "a species",
    "COEF": "a coefficient",
    "NAME": "a name",
    "NUMBER": "a number",
    "LABEL": "a step label",
    "RATE": "'rate'",
    "STEADY": "'steady:'",
    "FAST": "'fast:'",
    "MADE_OF": "'made-of:'",
    "INITIAL": "'0' (initial concentration)",
    "AT": "'@'",
    "PLUS": "'+'",
    "MINUS": "'-'",
    "STAR": "'*'",
    "SLASH": "'/'",
    "CIRCUMFLEX": "'^'",
    "__ANON_0": "'**'",
    "COMMA": "','",
    "COLON": "':'",
    "EQUAL": "'='",
    "LPAR": "'('",
    "RPAR": "')'",
    "LSQB": "'['",
    "RSQB": "']'",
    "$END": "the end of the line",
}

_DIRECTIVE_LINE = re.compile(r"^\s*(steady|fast|made-of)\s*:")
_LABEL_ONLY = re.compile(r"^\s*[A-Za-z_][A-Za-z0-9_]*\s*:\s*$")
_BAD_NUMBER = re.compile(r"[0-9.]+(?:[eE][+-]?[0-9]+)?(?:[.eE][0-9.eE+-]*)+")
_ARROW_LIKE = re.compile(r"<?[-=~]+>|<[-=~]+>?|⟶|↔|⇄|→|⇌|=")


def grammar_text() -> str:
    """The text of ``steps.lark`` (the one definition of the format)."""
    return resources.files("mechfit.mechanism").joinpath("steps.lark").read_text("utf-8")


@cache
def _parser(start: str) -> Lark:
    return Lark(grammar_text(), start=start, parser="lalr", lexer="contextual",
                propagate_positions=True, maybe_placeholders=False)


def _describe(expected: set[str]) -> str:
    words = []
    for name in sorted(expected):
        word = TOKEN_WORDS.get(name)
        if word is None:
            continue
        if word not in words:
            words.append(word)
    if not words:
        return "something else"
    if len(words) == 1:
        return words[0]
    return ", ".join(words[:-1]) + " or " + words[-1]


def _message(err: UnexpectedInput, text: str, start: str) -> tuple[str, int]:
    """A message in words for a lark error, and the 1-based column it points at."""
    if isinstance(err, UnexpectedCharacters):
        col = err.column
        rest = text[col - 1:]
        expected = set(err.allowed or ())
        arrow = _ARROW_LIKE.match(rest)
        if "ARROW" in expected or (arrow and start == "line" and "->" not in text[: col - 1]):
            if arrow:
                return (f"unknown arrow '{arrow.group(0)}': expected '->' (one-way) or "
                        "'<=>' (two-way) after the reactants", col)
        ch = rest[:1]
        return f"unexpected character '{ch}': expected {_describe(expected)}", col
    if isinstance(err, UnexpectedEOF):
        return f"the line ends too early: expected {_describe(set(err.expected))}", len(text) + 1
    if isinstance(err, UnexpectedToken):
        tok = err.token
        expected = set(err.expected)
        if tok.type == "$END":
            col = len(text.rstrip()) + 1
            directive = _DIRECTIVE_LINE.match(text)
            if directive:
                what = {"steady": "a species", "fast": "a step label or number",
                        "made-of": "a species, '=' and its parts"}[directive.group(1)]
                return f"{directive.group(1)}: expected {what} after ':'", col
            if _LABEL_ONLY.match(text):
                return "expected a step after the label", col
            if "RSQB" in expected:
                return "unclosed '[': expected ']' before the end of the line", col
            if "RPAR" in expected:
                return "unclosed '(': expected ')' before the end of the line", col
            if "SPECIES" in expected or "COEF" in expected:
                return ("the step is missing a side: expected a species (or 0 for nothing) "
                        "before the end of the line", col)
            return f"the line ends too early: expected {_describe(expected)}", col
        col = tok.column
        if "ARROW" in expected and tok.type in {"EQUAL", "COLON"}:
            arrow = _ARROW_LIKE.match(text[col - 1:])
            shown = arrow.group(0) if arrow else str(tok)
            return (f"unknown arrow '{shown}': expected '->' (one-way) or '<=>' (two-way) "
                    "after the reactants", col)
        if tok.type in {"NUMBER", "COEF", "NAME"}:
            start = col - 1
            while start > 0 and (text[start - 1].isdigit() or text[start - 1] in ".eE"):
                start -= 1
            bad = _BAD_NUMBER.match(text, start)
            if bad and start < col - 1:
                return (f"bad number '{bad.group(0)}': expected a number such as 2, 0.5 "
                        "or 2.5e3", start + 1)
        if tok.type in {"ARROW", "AT"} and ("SPECIES" in expected or "COEF" in expected):
            return ("the step is missing a side: expected a species (or 0 for nothing) "
                    f"before '{tok}'", col)
        if tok.type == "SPECIES" and "ARROW" in expected:
            return (f"expected '+', '->' or '<=>' before '{tok}' (separate species with ' + ')",
                    col)
        return f"unexpected '{tok}': expected {_describe(expected)}", col
    return str(err), 1


def parse_rule(text: str, start: str, *, file: str, line: int,
               error: type[SourceError] = SourceError, shown: str | None = None) -> Tree:
    """Parse ``text`` from the start rule ``start``; raise ``error`` with the position.

    Examples
    --------
    >>> str(parse_rule("A -> B", "line", file="x.mech", line=1).data)
    'step'
    """
    try:
        return _parser(start).parse(text)
    except UnexpectedInput as err:
        message, col = _message(err, text, start)
        raise error(message, file=file, line=line, column=col,
                    text=text if shown is None else shown) from None
