"""Chemical formulas in species names: element counts and charge.

A species name such as ``H2O``, ``OH-``, ``CH3CHO``, ``Fe+3``, ``SO4-2`` or
``Ca(OH)2`` is read as a formula when every symbol in it is a real element (IUPAC
periodic table, elements 1-118). ``e-`` is the electron. A name of one capital
letter alone (``A``, ``B``, ``C``, ``P``, ``S``) is the textbook's placeholder, not
an element: those are abstract species unless ``made-of`` says otherwise (common
practice in kinetics texts, where A, B, C... stand for unnamed species).

Examples
--------
>>> composition("CH3CHO")
Composition(atoms=(('C', 2), ('H', 4), ('O', 1)), charge=0)
>>> composition("Fe+3").charge
3
>>> composition("ES") is None   # E is not an element
True
"""

from __future__ import annotations

import re
from dataclasses import dataclass

#: element symbols by atomic number (IUPAC, 2016 names of 113, 115, 117, 118)
ELEMENTS = frozenset("""
H He Li Be B C N O F Ne Na Mg Al Si P S Cl Ar K Ca Sc Ti V Cr Mn Fe Co Ni Cu Zn Ga Ge
As Se Br Kr Rb Sr Y Zr Nb Mo Tc Ru Rh Pd Ag Cd In Sn Sb Te I Xe Cs Ba La Ce Pr Nd Pm Sm
Eu Gd Tb Dy Ho Er Tm Yb Lu Hf Ta W Re Os Ir Pt Au Hg Tl Pb Bi Po At Rn Fr Ra Ac Th Pa U
Np Pu Am Cm Bk Cf Es Fm Md No Lr Rf Db Sg Bh Hs Mt Ds Rg Cn Nh Fl Mc Lv Ts Og
""".split())

_CHARGE = re.compile(r"([+-])([0-9]*)$")
_TOKEN = re.compile(r"([A-Z][a-z]?)([0-9]*)|(\()|(\))([0-9]*)")


@dataclass(frozen=True)
class Composition:
    """Element counts (sorted by symbol) and net charge of a species."""

    atoms: tuple[tuple[str, int], ...]
    charge: int = 0

    def as_dict(self) -> dict[str, int]:
        out = dict(self.atoms)
        if self.charge:
            out["charge"] = self.charge
        return out


def _split_charge(name: str) -> tuple[str, int]:
    m = _CHARGE.search(name)
    if not m:
        return name, 0
    sign = 1 if m.group(1) == "+" else -1
    size = int(m.group(2)) if m.group(2) else 1
    return name[: m.start()], sign * size


def charge_of(name: str) -> int:
    """The charge written at the end of a species name (``0`` if none)."""
    return _split_charge(name)[1]


def composition(name: str, *, allow_single_letter: bool = False) -> Composition | None:
    """The element composition of a species name, or ``None`` if it is not a formula.

    Parameters
    ----------
    name
        The species name as written in the steps text.
    allow_single_letter
        Read a one-letter name (``S``) as the element; off by default because such
        names are usually placeholders.
    """
    body, charge = _split_charge(name)
    if body == "e":
        return Composition((), charge if charge else -1)
    if not body:
        return None
    if len(body) == 1 and not allow_single_letter:
        return None
    stack: list[dict[str, int]] = [{}]
    pos = 0
    while pos < len(body):
        m = _TOKEN.match(body, pos)
        if not m:
            return None
        if m.group(1):
            if m.group(1) not in ELEMENTS:
                return None
            n = int(m.group(2)) if m.group(2) else 1
            if n == 0:
                return None
            stack[-1][m.group(1)] = stack[-1].get(m.group(1), 0) + n
        elif m.group(3):
            stack.append({})
        else:
            if len(stack) == 1:
                return None
            group = stack.pop()
            n = int(m.group(5)) if m.group(5) else 1
            for el, c in group.items():
                stack[-1][el] = stack[-1].get(el, 0) + c * n
        pos = m.end()
    if len(stack) != 1 or not stack[0]:
        return None
    return Composition(tuple(sorted(stack[0].items())), charge)
