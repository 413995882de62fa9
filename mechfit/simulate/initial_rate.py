"""Initial rates: ``d[X]/dt`` at t = 0, for initial-rate data.

For an integrated species the initial rate is the right-hand side at the initial
state; for a species given by an algebraic expression ``X = g(y, p, [.]0)`` (a
steady-state intermediate, a species in pre-equilibrium) it is the chain rule
``d[X]/dt = sum_l (dg/dy_l) dy_l/dt`` (common practice).
"""

from __future__ import annotations

import numba
import numpy as np

from mechfit.simulate.kernel import model_rhs
from mechfit.simulate.program import evaluate


@numba.njit(cache=True)
def initial_rates_batch(kind, ma, pg, state_index, y0, params, x0, stack_size,
                        out):  # pragma: no cover - compiled
    """``out[s, column] = d[X]/dt`` at t = 0 for each system ``s``."""
    n_sys, n = y0.shape
    stack = np.zeros(stack_size)
    rates = np.zeros(max(ma[0].shape[1], 1))
    f = np.zeros(n)
    ops, args, consts, alg_tab, dy_tab = pg[0], pg[1], pg[2], pg[8], pg[9]
    for s in range(n_sys):
        y = y0[s]
        model_rhs(kind, ma, pg, y, params[s], x0[s], stack, rates, f)
        for k in range(n):
            out[s, state_index[k]] = f[k]
        for a in range(alg_tab.shape[0]):
            out[s, alg_tab[a, 0]] = 0.0
        for e in range(dy_tab.shape[0]):
            v = evaluate(ops, args, consts, dy_tab[e, 2], dy_tab[e, 3], y, params[s], x0[s],
                         stack)
            out[s, alg_tab[dy_tab[e, 0], 0]] += v * f[dy_tab[e, 1]]
