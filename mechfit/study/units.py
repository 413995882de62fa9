"""Units of a study: parsing with pint and conversion to mechfit's canonical units.

Every number a study holds internally is in a *canonical* unit, whatever the file
said: concentrations in mol/L, times in s, temperatures in K, molar energies in
J/mol, molar entropies in J/(mol K), volumes in L, heat flows in W and rates in
mol/(L s). The units the file used are kept for display. A quantity of any other
kind made of amount, length and time (a second-order rate constant, an
absorptivity) is expressed in mol, L and s: ``1/(mM*min)`` becomes L/(mol s).

Examples
--------
>>> to_canonical(2.5, "mM", "concentration")
0.0025
>>> to_canonical(40, "degC", "temperature")
313.15
>>> canonical_factor("1/(mM*min)")
(16.666666666666668, 'L/(mol*s)')
"""

from __future__ import annotations

from collections.abc import Callable
from fractions import Fraction

import numpy as np
import pint

from mechfit.errors import StudyError

#: the one unit registry of mechfit (pint's default definitions, CODATA-based)
REGISTRY = pint.UnitRegistry(autoconvert_offset_to_baseunit=True)

#: canonical unit of each kind of quantity a study uses
CANONICAL: dict[str, str] = {
    "concentration": "mol/L",
    "time": "s",
    "temperature": "K",
    "energy": "J/mol",
    "entropy": "J/(mol*K)",
    "volume": "L",
    "heat_flow": "W",
    "rate": "mol/(L*s)",
    "dimensionless": "dimensionless",
}

#: a word for each kind, used in error messages ("a time such as s, min or h")
EXAMPLES: dict[str, str] = {
    "concentration": "mol/L, M, mM or uM",
    "time": "s, min or h",
    "temperature": "K or degC",
    "energy": "J/mol or kJ/mol",
    "entropy": "J/(mol*K)",
    "volume": "L or mL",
    "heat_flow": "W or mW",
    "rate": "mM/min or M/s",
    "dimensionless": "1, % or AU",
}

_SPELLINGS = {"µ": "u", "μ": "u", "°C": "degC", "℃": "degC", "°F": "degF"}


def _normalise(text: str) -> str:
    out = text.strip()
    for old, new in _SPELLINGS.items():
        out = out.replace(old, new)
    return out or "dimensionless"


def parse_unit(text: str, kind: str | None = None, *, where: str = "") -> pint.Unit:
    """Parse a unit with pint and check that it is of the expected ``kind``.

    Parameters
    ----------
    text
        The unit as written (``"mM"``, ``"min"``, ``"degC"``, ``"kJ/mol"``; ``µ``
        and ``°C`` are accepted).
    kind
        A key of :data:`CANONICAL`, or ``None`` for any unit.
    where
        The place the unit was read from (``"study.toml: units.time"``), for errors.

    Raises
    ------
    StudyError
        If pint does not know the unit or it is of another kind (time in grams).

    Examples
    --------
    >>> parse_unit("mM", "concentration")
    <Unit('millimolar')>
    """
    prefix = f"{where}: " if where else ""
    if not isinstance(text, str):
        raise StudyError(f"{prefix}a unit must be text such as 'mM', got {text!r}")
    try:
        unit = REGISTRY.parse_units(_normalise(text))
    except (pint.errors.UndefinedUnitError, pint.errors.DefinitionSyntaxError,
            AttributeError, TypeError, ValueError, AssertionError) as err:
        raise StudyError(f"{prefix}unknown unit '{text}' ({err})") from None
    if kind is not None:
        expected = REGISTRY.parse_units(CANONICAL[kind])
        if unit.dimensionality != expected.dimensionality:
            raise StudyError(
                f"{prefix}'{text}' is not a unit of {kind.replace('_', ' ')} "
                f"(it has dimension {unit.dimensionality}); expected a unit such as "
                f"{EXAMPLES[kind]}"
            )
    return unit


def to_canonical(values, unit: str | pint.Unit, kind: str, *, where: str = ""):
    """Convert ``values`` (a number or array) from ``unit`` to the canonical unit of ``kind``.

    Offset units (degC) are converted as absolute temperatures.

    Examples
    --------
    >>> to_canonical([1.0, 2.0], "min", "time")
    array([ 60., 120.])
    """
    u = unit if isinstance(unit, pint.Unit) else parse_unit(unit, kind, where=where)
    scalar = np.ndim(values) == 0
    arr = np.asarray(values, dtype=float)
    out = REGISTRY.Quantity(arr, u).to(CANONICAL[kind]).magnitude
    return float(out) if scalar else np.asarray(out, dtype=float)


def canonical_factor(unit: str, *, where: str = "") -> tuple[float, str]:
    """The factor that takes a value in ``unit`` to mechfit's canonical unit of its kind.

    Quantities made of amount, length and time are expressed in mol, L and s (so a
    rate constant in ``L/(mmol*min)`` gets the factor 1000/60); others in SI base
    units, with energies per mole in J/mol. Offset units (degC) have no factor and
    are refused here; use :func:`to_canonical` for temperatures.

    Returns
    -------
    factor, canonical
        ``value_canonical = factor * value`` and the canonical unit as text.

    Examples
    --------
    >>> canonical_factor("kJ/mol")
    (1000.0, 'J/mol')
    >>> canonical_factor("L/mmol")
    (1000.0, 'L/mol')
    """
    u = parse_unit(unit, where=where)
    if REGISTRY.Quantity(0.0, u).to_base_units().magnitude != 0.0:  # degC, degF
        prefix = f"{where}: " if where else ""
        raise StudyError(f"{prefix}'{unit}' is an offset unit; give this quantity in K")
    dims = dict(u.dimensionality)
    substance = Fraction(dims.pop("[substance]", 0)).limit_denominator(12)
    length = Fraction(dims.pop("[length]", 0)).limit_denominator(12)
    time = Fraction(dims.pop("[time]", 0)).limit_denominator(12)
    parts: list[tuple[str, Fraction]] = []
    if dims:  # mass, temperature...: SI base units, energies per mole as J/mol
        target = REGISTRY.Quantity(1.0, u).to_base_units()
        factor = float(target.magnitude)
        text = f"{target.units:~}".replace(" ", "")
        if text == "kg*m**2/mol/s**2":
            text = "J/mol"
        elif text == "kg*m**2/K/mol/s**2":
            text = "J/(mol*K)"
        return factor, text
    # length**3 as litres; what is left over (length**1 or **2) in decimetres
    whole = length.numerator // length.denominator if length.denominator == 1 else None
    if whole is None:
        litres, rest = Fraction(0), length
    else:
        litres, rest = Fraction(whole // 3), Fraction(whole % 3)
    for name, power in (("mol", substance), ("L", litres), ("dm", rest), ("s", time)):
        if power:
            parts.append((name, power))
    target = REGISTRY.parse_units("dimensionless")
    for name, power in parts:
        target = target * REGISTRY.parse_units(name) ** float(power)
    factor = float(REGISTRY.Quantity(1.0, u).to(target).magnitude)
    return factor, _unit_text(parts)


def _unit_text(parts: list[tuple[str, Fraction]]) -> str:
    def power(name: str, p: Fraction) -> str:
        p = abs(p)
        return name if p == 1 else f"{name}^{p}"

    up = [power(n, p) for n, p in parts if p > 0]
    down = [power(n, p) for n, p in parts if p < 0]
    num = "*".join(up) or "1"
    if not down:
        return num
    den = down[0] if len(down) == 1 else "(" + "*".join(down) + ")"
    return f"{num}/{den}"


def converter(unit: str, kind: str, *, where: str = "") -> Callable[[np.ndarray], np.ndarray]:
    """A function converting arrays from ``unit`` to the canonical unit of ``kind``.

    Examples
    --------
    >>> converter("mM", "concentration")(np.array([1.0, 20.0]))
    array([0.001, 0.02 ])
    """
    u = parse_unit(unit, kind, where=where)

    def convert(values: np.ndarray) -> np.ndarray:
        return to_canonical(values, u, kind)

    return convert


def display(unit: str | pint.Unit) -> str:
    """A short display form of a unit (``mM``, ``min``, ``degC``).

    Examples
    --------
    >>> display("millimolar")
    'mM'
    """
    u = unit if isinstance(unit, pint.Unit) else parse_unit(unit)
    text = f"{u:~}".replace(" ", "")
    return text or "1"
