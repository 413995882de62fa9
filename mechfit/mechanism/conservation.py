"""Conservation laws: the left null space of the stoichiometric matrix.

A conservation law is a vector ``c`` with ``c @ N = 0``: the weighted total
``sum(c_i [X_i])`` never changes (total enzyme, total of an element or moiety). We
look for a basis of non-negative integer vectors first, with the Farkas algorithm
for semi-positive invariants (J. M. Colom and M. Silva, "Convex geometry and
semiflows in P/T nets", Advances in Petri Nets 1990, LNCS 483), and complete it with
integer vectors of mixed sign only where no non-negative basis exists.

Examples
--------
>>> from mechfit import parse_mechanism
>>> m = parse_mechanism("E + S <=> ES @ k1, k_1\\nES -> E + P @ k2")
>>> [law.as_text(m.species) for law in conservation_laws(m)]
['E + ES', 'S + ES + P']
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import reduce
from math import gcd

import numpy as np
import sympy

from mechfit.mechanism.model import Mechanism
from mechfit.mechanism.network import stoichiometric_matrix

_MAX_ROWS = 20000


@dataclass(frozen=True)
class ConservationLaw:
    """Integer weights per species (in the mechanism's species order)."""

    weights: tuple[int, ...]

    @property
    def nonnegative(self) -> bool:
        return all(w >= 0 for w in self.weights)

    def as_dict(self, species) -> dict[str, int]:
        return {s: w for s, w in zip(species, self.weights, strict=True) if w}

    def as_text(self, species) -> str:
        parts = []
        for s, w in self.as_dict(species).items():
            term = s if abs(w) == 1 else f"{abs(w)} {s}"
            if not parts:
                parts.append(term if w > 0 else f"-{term}")
            else:
                parts.append(("+ " if w > 0 else "- ") + term)
        return " ".join(parts)


def _normalise(v) -> tuple[int, ...]:
    ints = [int(x) for x in v]
    g = reduce(gcd, (abs(x) for x in ints if x), 0) or 1
    return tuple(x // g for x in ints)


def semipositive_invariants(n: np.ndarray) -> list[tuple[int, ...]]:
    """Minimal-support non-negative integer vectors ``y`` with ``y @ n = 0``.

    The Farkas algorithm: start from ``[n | I]`` and eliminate the columns of ``n``
    one by one, combining rows of opposite sign.
    """
    rows = [(list(map(int, n[i])), [1 if k == i else 0 for k in range(n.shape[0])])
            for i in range(n.shape[0])]
    for j in range(n.shape[1]):
        keep = [r for r in rows if r[0][j] == 0]
        pos = [r for r in rows if r[0][j] > 0]
        neg = [r for r in rows if r[0][j] < 0]
        for a in pos:
            for b in neg:
                fa, fb = -b[0][j], a[0][j]
                c = [fa * x + fb * y for x, y in zip(a[0], b[0], strict=True)]
                y = [fa * x + fb * yy for x, yy in zip(a[1], b[1], strict=True)]
                g = reduce(gcd, (abs(t) for t in c + y if t), 0) or 1
                keep.append(([t // g for t in c], [t // g for t in y]))
                if len(keep) > _MAX_ROWS:
                    return []
        # drop rows whose support contains another row's support (not minimal)
        supports = [frozenset(i for i, t in enumerate(r[1]) if t) for r in keep]
        minimal = []
        seen = set()
        for i, r in enumerate(keep):
            if any(supports[k] < supports[i] for k in range(len(keep))):
                continue
            key = tuple(r[1])
            if key in seen:
                continue
            seen.add(key)
            minimal.append(r)
        rows = minimal
    return [tuple(r[1]) for r in rows]


def conservation_laws(mech: Mechanism) -> tuple[ConservationLaw, ...]:
    """A basis of the conservation laws, non-negative where one exists.

    The basis spans the whole left null space of the stoichiometric matrix; laws
    with small support come first.
    """
    n = stoichiometric_matrix(mech)
    dim = n.shape[0] - (np.linalg.matrix_rank(n) if n.size else 0)
    if dim == 0:
        return ()
    candidates = sorted(semipositive_invariants(n), key=lambda v: (sum(1 for t in v if t), sum(v)))
    chosen: list[tuple[int, ...]] = []
    for v in candidates:
        trial = chosen + [v]
        if np.linalg.matrix_rank(np.array(trial, dtype=float)) == len(trial):
            chosen.append(v)
        if len(chosen) == dim:
            break
    if len(chosen) < dim:
        for vec in sympy.Matrix(n.T.tolist()).nullspace():
            den = reduce(lambda a, b: a * b // gcd(a, b), (sympy.fraction(x)[1] for x in vec), 1)
            v = _normalise([x * den for x in vec])
            if sum(v) < 0:
                v = tuple(-t for t in v)
            trial = chosen + [v]
            if np.linalg.matrix_rank(np.array(trial, dtype=float)) == len(trial):
                chosen.append(v)
            if len(chosen) == dim:
                break
    # present species in file order of their first nonzero weight
    chosen.sort(key=lambda v: next(i for i, t in enumerate(v) if t))
    return tuple(ConservationLaw(v) for v in chosen)
