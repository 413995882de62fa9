"""RODAS4 for batches of stiff chemical systems, with forward sensitivities.

The method is RODAS4 of Hairer and Wanner (E. Hairer and G. Wanner, *Solving
Ordinary Differential Equations II: Stiff and Differential-Algebraic Problems*,
2nd ed., Springer 1996, section IV.7, with the coefficients of their code RODAS):
a six-stage, L-stable, stiffly accurate Rosenbrock method of order 4 with an
embedded order-3 solution for error control and a continuous extension of order 3
for output between steps. Each step needs one exact Jacobian and one LU
factorisation, no Newton iteration; linear invariants (conservation laws) are kept
to round-off because every stage is a linear combination of right-hand sides and
solves with the same matrix. With sensitivities the augmented system is integrated
with the same LU (``docs/simulate.md``). The integrator is C
(``native/rodas4.c``), compiled when mechfit is installed; :func:`solve_batch`
checks the arrays and calls it.

Every system of a batch is integrated on its own: its own step sizes, its own error
norm (a weighted RMS norm over its components only), its own step count. Nothing
raises: each system ends with a status code (see :data:`REASONS`).
"""

from __future__ import annotations

import ctypes

import numpy as np

from mechfit.simulate import compiled
from mechfit.simulate.kernel import ModelTables

STATUS_OK = 0
STATUS_STEP_CAP = 1
STATUS_STEP_TOO_SMALL = 2
STATUS_NOT_FINITE = 3
STATUS_INVALID_INPUT = 4

#: status code -> the reason reported for a system
REASONS = {
    STATUS_OK: "",
    STATUS_STEP_CAP: "step cap reached before the last output time (raise max_steps, or "
                     "the parameters make the system extremely stiff or explosive)",
    STATUS_STEP_TOO_SMALL: "step size fell below round-off (a singularity or blow-up)",
    STATUS_NOT_FINITE: "rates not finite (overflow, or a law undefined at these values)",
    STATUS_INVALID_INPUT: "invalid input",
}


def solve_batch(tables: ModelTables, state_index: np.ndarray, times: np.ndarray,
                counts: np.ndarray, y0: np.ndarray, params: np.ndarray, x0: np.ndarray,
                rtol: np.ndarray, atol: np.ndarray, sens_init: np.ndarray,
                sens_atol: np.ndarray, dirpos: np.ndarray, max_steps: int,
                out: np.ndarray, sens_out: np.ndarray, status: np.ndarray,
                steps: np.ndarray, t_end_reached: np.ndarray) -> None:
    """Integrate every system of a batch with RODAS4; results go into the output arrays.

    Parameters
    ----------
    tables
        The model tables (:func:`mechfit.simulate.kernel.build_tables`; with
        sensitivity terms when directions are selected on the program path).
    state_index
        Output column of each state species (int64).
    times, counts
        ``times[s, :counts[s]]`` are the (sorted, non-negative) output times of system s.
    y0, params, x0
        Initial state, parameters (linear values) and initial concentrations of all
        mechanism species, one row per system.
    rtol, atol
        Relative tolerance per system; absolute tolerance per system and state.
    sens_init, sens_atol, dirpos
        Initial sensitivities (state x directions), absolute tolerance per system and
        direction, and the position of each global direction (-1 when not wanted).
    max_steps
        Hard cap on the steps (accepted plus rejected) of one system.
    out, sens_out
        ``(systems, times, species)`` and ``(systems, times, species, directions)``;
        pre-filled with NaN, written up to where each system got.
    status, steps, t_end_reached
        Per system: status code (systems whose status is not 0 are skipped), steps
        taken, last time reached.

    Raises
    ------
    SimulationInputError
        An array of the wrong type, order or shape (nothing is computed).

    Examples
    --------
    >>> from mechfit import parse_mechanism
    >>> from mechfit.derive import mass_action_model
    >>> from mechfit.simulate.kernel import build_tables
    >>> tables = build_tables(mass_action_model(parse_mechanism("A -> B @ k")))
    >>> times, y0 = np.array([[1.0]]), np.array([[1.0, 0.0]])
    >>> out, status = np.full((1, 1, 2), np.nan), np.zeros(1, dtype=np.int64)
    >>> solve_batch(tables, np.arange(2), times, np.array([1]), y0, np.array([[2.0]]), y0,
    ...             np.array([1e-10]), np.full((1, 2), 1e-14), np.zeros((2, 0)),
    ...             np.zeros((1, 0)), np.full(3, -1), 1000, out, np.zeros((1, 1, 2, 0)),
    ...             status, np.zeros(1, dtype=np.int64), np.zeros(1))
    >>> bool(abs(out[0, 0, 0] - np.exp(-2.0)) < 1e-9), status.tolist()
    (True, [0])
    """
    model = compiled.model_struct(tables)
    batch = compiled.batch_struct(
        tables, times=times, counts=counts, y0=y0, params=params, x0=x0, rtol=rtol,
        atol=atol, max_steps=max_steps, state_index=state_index, out=out, status=status,
        steps=steps, t_reached=t_end_reached, dirpos=dirpos, sens_init=sens_init,
        sens_atol=sens_atol, sens_out=sens_out)
    compiled.run(compiled.library().mf_solve_rodas4, ctypes.byref(model), ctypes.byref(batch))
