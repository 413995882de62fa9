"""Searching a design space: a scrambled Sobol design, then local refinement.

The criterion is evaluated at ``2**m`` points of a scrambled Sobol sequence over the unit
cube of the design variables (I. M. Sobol', USSR Comput. Math. Math. Phys. 7 (1967) 86;
scipy.stats.qmc), and the best few are refined by the Nelder–Mead simplex (J. A. Nelder
and R. Mead, Comput. J. 7 (1965) 308) over the continuous variables, with the discrete
ones held at their best choice. Several runs are chosen greedily: each next run is the
one that adds most to the runs already chosen.

Examples
--------
>>> from mechfit.design.space import DesignSpace
>>> space = DesignSpace.parse(["x=0:1"])
>>> best = search(lambda d: -(d["x"] - 0.3) ** 2, space, n_initial=16, seed=1)
>>> round(best[0].values["x"], 2)
0.3
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np
from scipy.optimize import minimize
from scipy.stats import qmc

from mechfit.design.space import DesignSpace


@dataclass(frozen=True)
class Proposal:
    """A proposed run: the design ``values``, its criterion ``score`` and unit-cube ``u``."""

    values: dict[str, float]
    score: float
    u: tuple[float, ...]


def search(criterion: Callable[[dict[str, float]], float], space: DesignSpace, *,
           n_initial: int = 64, n_refine: int = 4, max_evaluations: int = 60,
           seed: int = 0,
           batch: Callable[[list[dict[str, float]]], Sequence[float]] | None = None
           ) -> list[Proposal]:
    """Maximise ``criterion(values)`` over ``space``; the best proposals first.

    Parameters
    ----------
    criterion
        Larger is better; non-finite values count as the worst.
    n_initial
        Sobol points (rounded up to a power of two).
    n_refine
        How many of the best Sobol points are refined locally.
    max_evaluations
        Criterion evaluations per local refinement.
    batch
        Optional: the criterion of many designs at once (same values as ``criterion``),
        used for the Sobol points.
    """
    d = space.dimension
    m = max(1, int(np.ceil(np.log2(max(n_initial, 2)))))
    points = qmc.Sobol(d, scramble=True, seed=seed).random_base2(m)
    seen: dict[tuple, float] = {}

    def score(u: np.ndarray) -> float:
        u = np.clip(u, 0.0, 1.0)
        values = space.decode(u)
        key = tuple(sorted(values.items()))
        if key not in seen:
            value = float(criterion(values))
            seen[key] = value if np.isfinite(value) else -np.inf
        return seen[key]

    if batch is not None:
        designs = [space.decode(np.clip(u, 0.0, 1.0)) for u in points]
        for values, value in zip(designs, batch(designs), strict=True):
            seen[tuple(sorted(values.items()))] = float(value) if np.isfinite(value) \
                else -np.inf
    scores = np.array([score(u) for u in points])
    order = np.argsort(-scores)
    proposals = [Proposal(space.decode(points[i]), float(scores[i]), tuple(points[i]))
                 for i in order]
    continuous = [i for i, v in enumerate(space.variables) if not v.discrete]
    if continuous and n_refine > 0:
        for i in order[:n_refine]:
            start = points[i].copy()

            def objective(x, start=start):
                u = start.copy()
                u[continuous] = x
                return -score(u)

            res = minimize(objective, start[continuous], method="Nelder-Mead",
                           options={"maxfev": max_evaluations, "xatol": 1e-3, "fatol": 1e-9,
                                    "initial_simplex": _simplex(start[continuous])})
            u = start.copy()
            u[continuous] = np.clip(res.x, 0.0, 1.0)
            proposals.append(Proposal(space.decode(u), -float(res.fun), tuple(u)))
    # best first, one entry per distinct design
    proposals.sort(key=lambda p: -p.score)
    unique: list[Proposal] = []
    for p in proposals:
        if all(p.values != q.values for q in unique):
            unique.append(p)
    return unique


def _simplex(x: np.ndarray) -> np.ndarray:
    step = 0.1
    out = [x]
    for k in range(len(x)):
        y = x.copy()
        y[k] = y[k] + step if y[k] + step <= 1.0 else y[k] - step
        out.append(y)
    return np.array(out)


def greedy_runs(criterion_of_set: Callable[[Sequence[dict[str, float]]], float],
                space: DesignSpace, runs: int, **options) -> list[Proposal]:
    """Choose ``runs`` runs one at a time, each maximising the criterion of the set."""
    chosen: list[Proposal] = []
    for _ in range(runs):
        fixed = [p.values for p in chosen]
        best = search(lambda values, fixed=fixed: criterion_of_set(fixed + [values]), space,
                      **options)
        chosen.append(best[0])
    return chosen
