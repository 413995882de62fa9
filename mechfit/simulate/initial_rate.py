"""Initial rates: ``d[X]/dt`` at t = 0, for initial-rate data.

For an integrated species the initial rate is the right-hand side at the initial
state; for a species given by an algebraic expression ``X = g(y, p, [.]0)`` (a
steady-state intermediate, a species in pre-equilibrium) it is the chain rule
``d[X]/dt = sum_l (dg/dy_l) dy_l/dt`` (common practice). Computed by the compiled
library (``native/initial_rate.c``).
"""

from __future__ import annotations

import ctypes

import numpy as np

from mechfit.simulate import compiled
from mechfit.simulate.kernel import ModelTables


def initial_rates_batch(tables: ModelTables, state_index: np.ndarray, y0: np.ndarray,
                        params: np.ndarray, x0: np.ndarray, out: np.ndarray) -> None:
    """``out[s, column] = d[X]/dt`` at t = 0 for each system ``s``.

    Parameters
    ----------
    tables
        The model tables (:func:`mechfit.simulate.kernel.build_tables`).
    state_index
        Output column of each state species (int64).
    y0, params, x0
        Initial state, parameters and initial concentrations of all species, one row
        per system (float64, C order).
    out
        ``(systems, species)``, written.

    Examples
    --------
    >>> from mechfit import parse_mechanism
    >>> from mechfit.derive import mass_action_model
    >>> from mechfit.simulate.kernel import build_tables
    >>> tables = build_tables(mass_action_model(parse_mechanism("A + B -> C @ k")))
    >>> y0, out = np.array([[2.0, 3.0, 0.0]]), np.zeros((1, 3))
    >>> initial_rates_batch(tables, np.arange(3), y0, np.array([[0.5]]), y0, out)
    >>> out.tolist()
    [[-3.0, -3.0, 3.0]]
    """
    f64 = np.float64
    model = compiled.model_struct(tables)
    pointers = [compiled.pointer(y0, "initial state", f64, (None, tables.n_state))]
    n_sys = y0.shape[0]
    pointers += [
        compiled.pointer(params, "parameters", f64, (n_sys, tables.n_parameters)),
        compiled.pointer(x0, "initial concentrations", f64, (n_sys, tables.n_species)),
        compiled.pointer(state_index, "state_index", np.int64, (tables.n_state,))]
    if np.any(state_index < 0) or np.any(state_index >= tables.n_species):
        raise compiled.SimulationInputError(
            f"state_index must hold output columns 0..{tables.n_species - 1}")
    pointers.append(compiled.pointer(out, "out", f64, (n_sys, tables.n_species),
                                     writeable=True))
    compiled.run(compiled.library().mf_initial_rates, ctypes.byref(model), n_sys, *pointers)
