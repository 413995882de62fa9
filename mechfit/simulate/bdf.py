"""Variable-order backward differentiation (NDF/BDF) for batches of mass-action systems.

The multistep method of orders 1 to 5 in the quasi-constant step-size form of
L. F. Shampine and M. W. Reichelt, "The MATLAB ODE Suite", SIAM J. Sci. Comput.
18 (1997) 1-22 (numerical differentiation formulas with the kappa coefficients
given there; the same scheme as ``scipy.integrate.BDF``), with step and order
selection from the estimated local errors of orders k-1, k and k+1 (E. Hairer and
G. Wanner, Solving ODEs II, 1996, section III.7 for the backward difference
form). A simplified Newton iteration reuses the Jacobian across steps (refreshed
when the iteration fails to converge, or after 50 steps on one Jacobian when the LU
factors are next renewed; the LU factors when the step changes),
and stops with the convergence test of CVODE (A. C. Hindmarsh et al., ACM TOMS 31
(2005) 363-396): so a step costs one or two right-hand sides and triangular
solves, which is what makes long, tightly toleranced, stiff runs cheap.

Linear invariants are kept: every Newton correction solves with ``I - c J`` where
``w^T J = 0`` and ``w^T f = 0`` for a conservation law ``w``, so ``w^T y`` never
changes beyond round-off. The integrator is C (``native/bdf.c``), compiled when
mechfit is installed; :func:`solve_mass_action_bdf` checks the arrays and calls it.
"""

from __future__ import annotations

import ctypes

import numpy as np

from mechfit.simulate import compiled
from mechfit.simulate.kernel import KIND_MASS_ACTION, ModelTables


def solve_mass_action_bdf(tables: ModelTables, times: np.ndarray, counts: np.ndarray,
                          y0: np.ndarray, params: np.ndarray, rtol: np.ndarray,
                          atol: np.ndarray, max_steps: int, out: np.ndarray,
                          status: np.ndarray, steps: np.ndarray,
                          t_end_reached: np.ndarray) -> None:
    """Integrate a batch of mass-action systems (all species are state) with the NDF.

    Parameters
    ----------
    tables
        Mass-action tables (:func:`mechfit.simulate.kernel.build_tables`).
    times, counts, y0, params, rtol, atol, max_steps, out, status, steps, t_end_reached
        As :func:`mechfit.simulate.integrator.solve_batch`; ``out`` is ``(systems, T,
        species)`` pre-filled with NaN.

    Raises
    ------
    SimulationInputError
        Tables that are not mass action, or an array of the wrong type, order or shape.

    Examples
    --------
    >>> from mechfit import parse_mechanism
    >>> from mechfit.derive import mass_action_model
    >>> from mechfit.simulate.kernel import build_tables
    >>> tables = build_tables(mass_action_model(parse_mechanism("2 A -> B @ k")))
    >>> out, status = np.full((1, 1, 2), np.nan), np.zeros(1, dtype=np.int64)
    >>> solve_mass_action_bdf(tables, np.array([[1.0]]), np.array([1]),
    ...                       np.array([[1.0, 0.0]]), np.array([[0.5]]), np.array([1e-10]),
    ...                       np.full((1, 2), 1e-14), 1000, out, status,
    ...                       np.zeros(1, dtype=np.int64), np.zeros(1))
    >>> round(float(out[0, 0, 0]), 8), status.tolist()   # 1 / (1 + 2 k t)
    (0.5, [0])
    """
    if tables.kind != KIND_MASS_ACTION or tables.n_state != tables.n_species:
        raise compiled.SimulationInputError("the BDF integrator takes plain mass-action "
                                            "tables only (every species a state)")
    model = compiled.model_struct(tables)
    identity = np.arange(tables.n_state, dtype=np.int64)
    batch = compiled.batch_struct(
        tables, times=times, counts=counts, y0=y0, params=params, x0=y0, rtol=rtol,
        atol=atol, max_steps=max_steps, state_index=identity, out=out, status=status,
        steps=steps, t_reached=t_end_reached)
    compiled.run(compiled.library().mf_solve_bdf, ctypes.byref(model), ctypes.byref(batch))
