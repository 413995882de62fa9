"""Nonlinear steady-state equations: solving, and choosing the admissible root.

Steady-state equations of radical chains with termination (``2 Br -> Br2``) or of
second-order intermediate reactions are polynomial, not linear, in the
intermediates, and sympy returns several roots. Exactly one is the chemistry's:

* Concentrations are real and positive, and so are rate constants and the other
  concentrations, so a root qualifies only if it is real and positive for *every*
  positive value of the other symbols.
* We test that on sampled points: every symbol other than the unknowns takes
  log-uniform values between 1e-2 and 1e2 (fixed seed, :data:`SAMPLES` points), and
  a root is kept when it evaluates to a real (imaginary part below 1e-9 of its
  size), positive number at all points, for every unknown.
* When exactly one root is kept it is chosen, and the assumptions say so. When
  several are kept, or sympy finds no closed form within the time budget, or its
  answer contains implicit roots (``CRootOf``), there is no closed form: the caller
  hands the simulator a numerical steady-state variant and says why. When explicit
  roots exist but none is admissible, the steady state does not exist for these
  species and :class:`DerivationError` says so.

For the common quadratic case this agrees with the classical argument: for
``a x^2 + b x - c = 0`` with ``a, c > 0`` the product of the roots is ``-c/a < 0``,
so exactly one root is positive (Descartes' rule of signs; common practice).

Examples
--------
>>> import sympy
>>> x = sympy.Symbol("X", positive=True)
>>> a, c = sympy.symbols("a c", positive=True)
>>> solution, note = admissible_solution([a * x**2 - c], [x])
>>> solution[x]
sqrt(c)/sqrt(a)
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import sympy

from mechfit.derive.errors import DerivationError
from mechfit.derive.simplification import BUDGET, BudgetExceeded, time_budget

#: number of sampled parameter points a root must pass
SAMPLES = 6


def _sample_points(free: Sequence[sympy.Symbol], count: int) -> list[dict]:
    rng = np.random.default_rng(20240601)
    return [{s: sympy.Float(10.0 ** rng.uniform(-2, 2)) for s in free} for _ in range(count)]


def _is_admissible(values: Sequence[sympy.Expr], points: list[dict]) -> bool:
    for point in points:
        for v in values:
            try:
                z = complex(v.xreplace(point).evalf(15))
            except (TypeError, ValueError, ZeroDivisionError):
                return False
            if not np.isfinite(z.real) or abs(z.imag) > 1e-9 * max(abs(z.real), 1e-300):
                return False
            if z.real <= 0:
                return False
    return True


def admissible_solution(
    equations: Sequence[sympy.Expr],
    unknowns: Sequence[sympy.Symbol],
    seconds: float = 4 * BUDGET,
) -> tuple[dict[sympy.Symbol, sympy.Expr] | None, str]:
    """Solve ``equations = 0`` for ``unknowns`` and pick the admissible root.

    Returns
    -------
    (solution, note)
        ``solution`` maps each unknown to its closed form, or is ``None`` when there
        is no admissible closed form; ``note`` says which root was taken and why, or
        why there is none.
    """
    plain = [sympy.Dummy(u.name) for u in unknowns]
    back = dict(zip(plain, unknowns, strict=True))
    forward = dict(zip(unknowns, plain, strict=True))
    eqs = [sympy.fraction(sympy.together(e.xreplace(forward)))[0] for e in equations]
    try:
        with time_budget(seconds):
            found = sympy.solve(eqs, plain, dict=True)
    except BudgetExceeded:
        return None, f"sympy found no closed form within {seconds:g} s"
    except (NotImplementedError, sympy.PolynomialError):
        return None, "sympy finds no closed form for these equations"
    roots = []
    for sol in found:
        if set(sol) != set(plain):
            continue
        values = [sol[p] for p in plain]
        if any(v.has(sympy.CRootOf) or v.has(sympy.RootOf) or v.free_symbols & set(plain)
               for v in values):
            continue
        roots.append(values)
    if not roots:
        return None, "sympy finds no explicit root of these equations"
    free = sorted(set().union(*(v.free_symbols for r in roots for v in r)), key=str)
    points = _sample_points(free, SAMPLES)
    good = [r for r in roots if _is_admissible(r, points)]
    if not good:
        names = tuple(u.name for u in unknowns)
        raise DerivationError(
            f"no root of the steady-state equations (of {len(roots)}) makes "
            f"{', '.join(names)} real and positive: the approximation does not apply "
            "to these species", names=names)
    if len(good) != 1:
        return None, (f"{len(good)} of {len(roots)} roots are real and positive at all "
                      f"{SAMPLES} sampled positive parameter points; none can be chosen")
    chosen = {back[p]: v for p, v in zip(plain, good[0], strict=True)}
    note = (f"root chosen: the only one of {len(roots)} real and positive at all {SAMPLES} "
            "sampled positive parameter points")
    return chosen, note
