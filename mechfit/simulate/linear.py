"""Exact solutions of first-order (linear) reaction networks.

When every reaction of a mass-action model has exactly one reactant molecule
(``A -> B``, ``A <=> B``, ``A -> B + C``), the rate equations are linear,
``dy/dt = K y``, and the solution is ``y(t) = exp(K t) y0`` (e.g. P. Atkins and
J. de Paula, *Physical Chemistry*, 9th ed., Oxford 2010, section 21.4, consecutive
and reversible first-order reactions (recalled from memory); C. Moler and C. Van
Loan, "Nineteen dubious ways to compute the exponential of a matrix, twenty-five
years later", SIAM Review 45 (2003) 3-49).

The method is chosen per system, automatically:

* **eigen-decomposition** ``K = V diag(w) V^-1``, ``y(t) = V (exp(w t) * V^-1 y0)``:
  one decomposition serves all output times; used when ``V`` is well conditioned
  (condition number below :data:`EIGEN_CONDITION_LIMIT`);
* **matrix exponential** (scipy's scaling and squaring with Pade approximants,
  ``scipy.linalg.expm``) when ``K`` is defective or nearly so, for example
  ``A -> B -> C`` with two equal rate constants.
"""

from __future__ import annotations

import numpy as np
import scipy.linalg

from mechfit.simulate.kernel import KIND_MASS_ACTION, ModelTables

#: eigenvector condition number above which the matrix exponential is used instead
EIGEN_CONDITION_LIMIT = 1e5


def is_first_order(tables: ModelTables) -> bool:
    """True for a mass-action model whose every reaction has one reactant molecule."""
    if tables.kind != KIND_MASS_ACTION:
        return False
    _, _, rord, rcnt, _, _ = tables.mass_action
    if rcnt.size == 0:
        return False
    return bool(np.all(rcnt == 1) and np.all(rord[:, 0] == 1))


def rate_matrices(tables: ModelTables, parameters: np.ndarray) -> np.ndarray:
    """The matrices ``K`` (systems x species x species) of ``dy/dt = K y``."""
    stoich, ridx, _, _, rpar, rfac = tables.mass_action
    n = stoich.shape[0]
    k = np.zeros((parameters.shape[0], n, n))
    for r in range(stoich.shape[1]):
        rate = rfac[r] * parameters[:, rpar[r]]
        k[:, :, ridx[r, 0]] += rate[:, None] * stoich[None, :, r]
    return k


def solve_first_order(matrices: np.ndarray, initial: np.ndarray, times: np.ndarray,
                      counts: np.ndarray) -> tuple[np.ndarray, list[str]]:
    """``y(t) = exp(K t) y0`` for each system at its output times.

    Parameters
    ----------
    matrices
        ``K`` per system, shape ``(systems, n, n)``.
    initial
        ``y0`` per system, shape ``(systems, n)``.
    times, counts
        Padded output times ``(systems, T)`` and how many are used per system.

    Returns
    -------
    concentrations, methods
        ``(systems, T, n)`` (NaN where unused) and, per system, ``"eigen"`` or
        ``"expm"``.

    Examples
    --------
    >>> k = np.array([[[-2.0, 0.0], [2.0, 0.0]]])       # A -> B, k = 2
    >>> y, how = solve_first_order(k, np.array([[1.0, 0.0]]), np.array([[0.5]]),
    ...                            np.array([1]))
    >>> bool(abs(y[0, 0, 0] - np.exp(-1.0)) < 1e-14), how
    (True, ['eigen'])
    """
    n_sys, n_times = times.shape
    n = matrices.shape[1]
    out = np.full((n_sys, n_times, n), np.nan)
    methods: list[str] = []
    values, vectors = np.linalg.eig(matrices)
    with np.errstate(all="ignore"):
        condition = np.linalg.cond(vectors)
    for s in range(n_sys):
        c = counts[s]
        t = times[s, :c]
        if np.isfinite(condition[s]) and condition[s] < EIGEN_CONDITION_LIMIT:
            coef = np.linalg.solve(vectors[s], initial[s].astype(complex))
            modes = np.exp(np.outer(t, values[s])) * coef[None, :]
            out[s, :c] = (modes @ vectors[s].T).real
            methods.append("eigen")
        else:
            expo = scipy.linalg.expm(matrices[s][None, :, :] * t[:, None, None])
            out[s, :c] = expo @ initial[s]
            methods.append("expm")
    return out, methods
