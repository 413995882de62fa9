"""The space of runs a chemist could do next: what may vary, and between which limits.

A design variable is written ``NAME=LOW:HIGH`` (a continuous range) or ``NAME=A,B,C``
(a list of choices). ``NAME`` is a species (its initial concentration, in the study's
concentration unit), ``temperature`` (in the study's temperature unit), ``duration``
(the run length, in the study's time unit) or ``points`` (number of samples, a list).
Ranges whose upper limit is at least ten times the lower are searched on a log scale.

Examples
--------
>>> space = DesignSpace.parse(["S=1:100", "temperature=25:45", "points=10,20"])
>>> [v.name for v in space.variables], space.variables[0].log
(['S', 'temperature', 'points'], True)
>>> {k: round(v, 9) for k, v in space.decode([0.5, 0.5, 0.9]).items()}
{'S': 10.0, 'temperature': 35.0, 'points': 20.0}
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence
from dataclasses import dataclass

from mechfit.errors import MechfitError


class DesignSpaceError(MechfitError):
    """A ``--vary`` entry that cannot be read."""


@dataclass(frozen=True)
class Variable:
    """One design variable: a range ``(low, high)`` or a tuple of ``choices``."""

    name: str
    low: float | None = None
    high: float | None = None
    choices: tuple[float, ...] = ()
    log: bool = False

    @property
    def discrete(self) -> bool:
        return bool(self.choices)

    def decode(self, u: float) -> float:
        """Map ``u`` in [0, 1] to a value of the variable."""
        u = min(max(float(u), 0.0), 1.0)
        if self.choices:
            return self.choices[min(int(u * len(self.choices)), len(self.choices) - 1)]
        if self.log:
            return float(math.exp(math.log(self.low) + u * (math.log(self.high)
                                                             - math.log(self.low))))
        return float(self.low + u * (self.high - self.low))


def _number(text: str, entry: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise DesignSpaceError(f"--vary {entry!r}: {text!r} is not a number") from None
    if not math.isfinite(value):
        raise DesignSpaceError(f"--vary {entry!r}: {text!r} is not a finite number")
    return value


@dataclass(frozen=True)
class DesignSpace:
    """The variables of a design, in the order given."""

    variables: tuple[Variable, ...]

    @classmethod
    def parse(cls, entries: Iterable[str]) -> DesignSpace:
        """Read ``NAME=LOW:HIGH`` and ``NAME=A,B,C`` entries (see the module docstring)."""
        out: list[Variable] = []
        for entry in entries:
            name, sep, spec = entry.partition("=")
            name = name.strip()
            if not sep or not name or not spec.strip():
                raise DesignSpaceError(f"--vary {entry!r}: expected NAME=LOW:HIGH or "
                                       "NAME=A,B,C")
            if any(v.name == name for v in out):
                raise DesignSpaceError(f"--vary {entry!r}: {name} is given twice")
            if ":" in spec:
                lo_text, _, hi_text = spec.partition(":")
                low, high = _number(lo_text, entry), _number(hi_text, entry)
                if not high > low:
                    raise DesignSpaceError(f"--vary {entry!r}: the upper limit must exceed "
                                           "the lower")
                if name != "temperature" and low < 0:
                    raise DesignSpaceError(f"--vary {entry!r}: {name} cannot be negative")
                if name == "points":
                    raise DesignSpaceError(f"--vary {entry!r}: give points as a list, e.g. "
                                           "points=10,20,40")
                out.append(Variable(name, low, high, log=low > 0 and high >= 10 * low))
            else:
                choices = tuple(_number(t, entry) for t in spec.split(","))
                if name == "points" and any(c < 2 or c != int(c) for c in choices):
                    raise DesignSpaceError(f"--vary {entry!r}: points must be whole numbers "
                                           ">= 2")
                out.append(Variable(name, choices=choices))
        if not out:
            raise DesignSpaceError("no design variables: give at least one --vary NAME=LOW:HIGH")
        return cls(tuple(out))

    @property
    def dimension(self) -> int:
        return len(self.variables)

    def decode(self, u: Sequence[float]) -> dict[str, float]:
        """Map a point of the unit cube to ``{name: value}``."""
        return {v.name: v.decode(x) for v, x in zip(self.variables, u, strict=True)}
