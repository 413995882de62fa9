"""Printing derived expressions: sympy-parsable text, mechfit text and LaTeX.

Plain text for machines (the ``rate`` of ``mechfit derive --json``) uses the
operators ``* / + - **`` and ``sqrt`` and one name per symbol. A species or constant
name is kept as it is when it is a Python identifier, not a keyword and not a
name sympy's parser already means something by (``E``, ``S``, ``I``, ``N``, ``Q``,
``O``, ``pi``, ``beta``...). Other names get a safe spelling: ``+`` becomes ``_p``,
``-`` becomes ``_m``, brackets become ``_``, and a trailing ``_`` is added to a name
that clashes (``S`` -> ``S_``); more ``_`` are appended until the name is unique.
:func:`safe_names` returns the mapping; ``--json`` prints it as ``names``
(safe -> original) so a reader can map back. Initial concentrations print as
``X__0`` (safe spelling of ``X`` plus ``__0``).

Examples
--------
>>> from mechfit.mechanism import symbols
>>> e = symbols.rate_constant("k2") * symbols.concentration("S") / symbols.concentration("H+")
>>> plain_text(e)
'S_*k2/H_p'
>>> latex_text(e, species=("S", "H+"))
'\\\\frac{[\\\\mathrm{S}] k_{2}}{[\\\\mathrm{H^{+}}]}'
"""

from __future__ import annotations

import keyword
import re
from collections.abc import Iterable

import sympy

from mechfit.mechanism import symbols

_SYMPY_NAMES = set(dir(sympy)) | {"lambda", "sqrt", "exp", "log"}


def safe_name(name: str, taken: set[str] | None = None) -> str:
    """A spelling of ``name`` that sympy's parser reads as a plain symbol.

    Examples
    --------
    >>> safe_name("Fe(CN)6-3"), safe_name("S"), safe_name("k_1")
    ('Fe_CN_6_m3', 'S_', 'k_1')
    """
    taken = taken if taken is not None else set()
    base, tail = name, ""
    if name.endswith(symbols.INITIAL_SUFFIX):
        base, tail = name[: -len(symbols.INITIAL_SUFFIX)], symbols.INITIAL_SUFFIX
    out = base.replace("+", "_p").replace("-", "_m")
    out = re.sub(r"[()\[\]]", "_", out)
    out = re.sub(r"[^A-Za-z0-9_]", "_", out)
    out = re.sub(r"_+$", "", out) if out != base else out
    if not out or not (out[0].isalpha() or out[0] == "_"):
        out = "x_" + out
    if not tail and (keyword.iskeyword(out) or out in _SYMPY_NAMES):
        out += "_"
    out += tail
    while out in taken:
        out += "_"
    return out


def safe_names(expr_symbols: Iterable[sympy.Symbol]) -> dict[sympy.Symbol, str]:
    """Symbol -> safe printed name for every symbol given (unique names)."""
    ordered = sorted(set(expr_symbols), key=lambda x: x.name)
    out = {s: s.name for s in ordered if safe_name(s.name) == s.name}
    taken = set(out.values())
    for s in ordered:
        if s not in out:
            out[s] = safe_name(s.name, taken)
            taken.add(out[s])
    return out


def plain_text(expr: sympy.Expr) -> str:
    """The expression as sympy-parsable text with safe names (see module notes)."""
    names = safe_names(expr.free_symbols)
    renamed = expr.xreplace({s: sympy.Symbol(n, **s.assumptions0) for s, n in names.items()})
    return sympy.sstr(renamed, order="none")


def _latex_name(name: str, species: set[str]) -> str:
    if name in species:
        return r"[\mathrm{" + _latex_species(name) + "}]"
    if name.endswith(symbols.INITIAL_SUFFIX):
        base = name[: -len(symbols.INITIAL_SUFFIX)]
        if base in species:
            return r"[\mathrm{" + _latex_species(base) + "}]_0"
    m = re.fullmatch(r"([A-Za-z]+)_(\w+)", name)
    if m:  # k_1 is the reverse constant k_{-1}
        return f"{m.group(1)}_{{-{m.group(2)}}}"
    m = re.fullmatch(r"([A-Za-z]+)(\d+)", name)
    if m:
        return f"{m.group(1)}_{{{m.group(2)}}}"
    return sympy.latex(sympy.Symbol(name))


def _latex_species(name: str) -> str:
    m = re.fullmatch(r"(.*?)([+-])(\d*)", name)
    body, charge = (m.group(1), m.group(3) + m.group(2)) if m and m.group(1) else (name, "")
    body = re.sub(r"(\d+)", r"_{\1}", body)
    return body + (f"^{{{charge}}}" if charge else "")


def latex_concentration(species: str) -> str:
    """``[\\mathrm{X}]`` for a species, with digits as subscripts and charges raised."""
    return r"[\mathrm{" + _latex_species(species) + "}]"


def latex_text(expr: sympy.Expr, species: Iterable[str] = ()) -> str:
    """LaTeX with ``[\\mathrm{X}]`` for concentrations and ``k_{-1}`` for ``k_1``."""
    sp = set(species)
    names = {s: _latex_name(s.name, sp) for s in expr.free_symbols}
    return sympy.latex(expr, symbol_names=names)
