"""The public simulator: compile a model once, solve batches of systems in one call.

A *system* is one run under one parameter set (its own initial concentrations,
rate constants and output times). Inference stacks walkers x runs into one batch;
each system keeps its own step sizes and error norm, and ends with its own ``ok``
flag and ``reason``: nothing raises mid-batch.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np

from mechfit.derive.model import KineticModel, mass_action_model
from mechfit.errors import MechfitError
from mechfit.mechanism.model import Mechanism
from mechfit.simulate import integrator, linear
from mechfit.simulate.bdf import solve_mass_action_bdf
from mechfit.simulate.compiled import SimulationInputError
from mechfit.simulate.initial_rate import initial_rates_batch
from mechfit.simulate.kernel import KIND_MASS_ACTION, KIND_PROGRAM, build_tables, check_model

__all__ = ["Result", "SimulationInputError", "Simulator"]


@dataclass
class Result:
    """Concentrations (and sensitivities) of a batch of systems at their output times.

    Attributes
    ----------
    species
        Column order of the last axis of ``concentrations``: every species of the
        mechanism (integrated ones and those given by algebraic expressions).
    times
        Output times ``(systems, T)``, padded with NaN beyond ``counts``.
    counts
        Number of output times of each system.
    concentrations
        ``(systems, T, species)``; NaN where a system has no output (padding, or
        after a failure).
    ok
        Per system: True when it reached its last output time.
    status
        Per system: integer code (``0`` ok; see :data:`integrator.REASONS`).
    reason
        Per system: ``""`` when ok, else why it failed.
    steps
        Per system: steps taken (accepted and rejected; 0 for exact solutions).
    method
        Per system: ``"bdf"``, ``"rosenbrock"`` (integrated), ``"eigen"`` or ``"expm"``
        (exact first-order solution), ``"exact"`` for a system not solved because its
        input was invalid.
    sensitivities
        ``(systems, T, species, directions)`` or None: ``d[X](t)/d ln p`` for
        positive parameters (rate constants), ``d[X](t)/d p`` for other parameters,
        ``d[X](t)/d[Y]0`` for initial concentrations.
    sensitivity_names
        One label per direction: ``"ln k1"``, ``"a"``, ``"[A]0"``.
    """

    species: tuple[str, ...]
    times: np.ndarray
    counts: np.ndarray
    concentrations: np.ndarray
    ok: np.ndarray
    status: np.ndarray
    reason: list[str]
    steps: np.ndarray
    method: list[str]
    sensitivities: np.ndarray | None = None
    sensitivity_names: tuple[str, ...] = field(default=())

    @property
    def n_systems(self) -> int:
        return int(self.concentrations.shape[0])

    def concentration(self, species: str, system: int = 0) -> np.ndarray:
        """The concentration of ``species`` at the output times of one system."""
        col = self.species.index(species)
        return self.concentrations[system, : self.counts[system], col]

    def summary(self) -> dict:
        """A JSON-safe summary: systems solved, failures and their reasons."""
        failed = [{"system": int(i), "reason": self.reason[i]}
                  for i in np.flatnonzero(~self.ok)]
        return {
            "systems": self.n_systems,
            "solved": int(self.ok.sum()),
            "failed": failed,
            "steps": int(self.steps.sum()),
            "methods": sorted(set(self.method)),
            "species": list(self.species),
        }


class Simulator:
    """A kinetic model compiled for fast batched simulation.

    Parameters
    ----------
    model
        A :class:`~mechfit.derive.model.KineticModel` (any variant: full mass
        action, steady state, pre-equilibrium, empirical laws) or a
        :class:`~mechfit.mechanism.Mechanism` (its full mass-action model is used).
    rtol
        Relative tolerance of the per-system error control.
    atol
        Absolute tolerance: a scalar, one value per mechanism species, or None for
        ``1e-4 * rtol * max(initial concentrations of the system)``.
    max_steps
        Hard cap on the steps of one system (accepted plus rejected); a system that
        reaches it is flagged, never left running.
    method
        ``"auto"``: exact solution for first-order networks, variable-order BDF for
        other mass-action models, RODAS4 for everything else and for sensitivities;
        or force ``"exact"``, ``"bdf"`` (mass action only; sensitivities and other
        models still use RODAS4) or ``"rosenbrock"``.

    Notes
    -----
    Plain mass-action models drive one compiled kernel with their stoichiometry
    and reactant-order tables; other models are translated into opcode programs
    for one compiled evaluator. Neither costs a compile per model: the C code is
    compiled once, when mechfit is installed. The integrators are RODAS4
    (Hairer & Wanner, Solving ODEs II, 1996, section IV.7) and the variable-order
    NDF/BDF of Shampine & Reichelt (SIAM J. Sci. Comput. 18, 1997); see
    ``docs/simulate.md``.

    Examples
    --------
    >>> import numpy as np
    >>> from mechfit import parse_mechanism
    >>> sim = Simulator(parse_mechanism("E + S <=> ES @ k1, k_1\\nES -> E + P @ k2"))
    >>> sim.species, sim.parameters
    (('E', 'S', 'ES', 'P'), ('k1', 'k_1', 'k2'))
    >>> initial = np.array([[1.0, 10.0, 0.0, 0.0], [1.0, 5.0, 0.0, 0.0]])
    >>> k = np.array([[10.0, 1.0, 2.0], [10.0, 1.0, 2.0]])
    >>> result = sim.solve(np.linspace(0.0, 5.0, 11), initial, k)
    >>> result.ok.tolist(), result.concentrations.shape
    ([True, True], (2, 11, 4))
    >>> total = result.concentrations[:, :, 1:].sum(axis=2)   # S + ES + P is conserved
    >>> bool(np.allclose(total, initial[:, 1:2], rtol=1e-10))
    True
    """

    def __init__(self, model: KineticModel | Mechanism, *, rtol: float = 1e-6,
                 atol: float | Sequence[float] | None = None, max_steps: int = 50_000,
                 method: str = "auto") -> None:
        if isinstance(model, Mechanism):
            model = mass_action_model(model)
        check_model(model)
        if method not in ("auto", "exact", "rosenbrock", "bdf"):
            raise MechfitError(f"unknown method {method!r}; expected 'auto', 'exact', "
                               "'bdf' or 'rosenbrock'")
        self.model = model
        self.species: tuple[str, ...] = tuple(model.mechanism.species)
        self.state: tuple[str, ...] = tuple(model.state)
        self.parameters: tuple[str, ...] = tuple(model.parameters)
        self.rtol = float(rtol)
        self.atol = atol
        self.max_steps = int(max_steps)
        self.tables = build_tables(model)
        self.first_order = linear.is_first_order(self.tables)
        if method == "exact" and not self.first_order:
            raise MechfitError(f"model {model.name!r} is not a first-order network; the "
                               "exact solution needs every reaction to have one reactant")
        self.method = method
        self._state_index = np.array([self.species.index(s) for s in self.state],
                                     dtype=np.int64)

    # ---- vectors from names ------------------------------------------------
    def parameter_vector(self, values: Mapping[str, float]) -> np.ndarray:
        """Parameters in model order from a mapping; fixed values of the mechanism fill
        the names not given.

        Raises
        ------
        MechfitError
            Naming the parameters that have no value, or unknown names.
        """
        fixed = dict(self.model.mechanism.fixed)
        unknown = sorted(set(values) - set(self.parameters))
        if unknown:
            raise MechfitError(f"unknown parameter(s) {', '.join(unknown)}; the model has "
                               + ", ".join(self.parameters))
        missing = [p for p in self.parameters if p not in values and p not in fixed]
        if missing:
            raise MechfitError("no value for parameter(s) " + ", ".join(missing))
        return np.array([float(values.get(p, fixed.get(p, np.nan))) for p in self.parameters])

    def initial_vector(self, values: Mapping[str, float]) -> np.ndarray:
        """Initial concentrations of all mechanism species (0 for names not given)."""
        unknown = sorted(set(values) - set(self.species))
        if unknown:
            raise MechfitError(f"unknown species {', '.join(unknown)}; the mechanism has "
                               + ", ".join(self.species))
        return np.array([float(values.get(s, 0.0)) for s in self.species])

    # ---- solving ------------------------------------------------------------
    def solve(self, times, initial, parameters, *, counts=None,
              sensitivities: bool | str = False, rtol: float | None = None,
              atol=None, max_steps: int | None = None) -> Result:
        """Solve every system of a batch.

        Parameters
        ----------
        times
            Output times: one 1-D array shared by all systems; a 2-D array
            ``(systems, T)`` (with ``counts`` for ragged rows); or a list of 1-D
            arrays, one per system. Times are >= 0 and non-decreasing; t = 0 is the
            start, where ``initial`` holds.
        initial
            ``(systems, species)`` initial concentrations of every mechanism species
            (in :attr:`species` order), or one row for all systems.
        parameters
            ``(systems, parameters)`` *linear* values in :attr:`parameters` order, or
            one row for all systems. Temperature dependence is the caller's: give each
            system its constants.
        counts
            With 2-D ``times``: how many leading entries of each row are used.
        sensitivities
            False; True or ``"all"`` (every parameter and every initial
            concentration); ``"parameters"``; ``"initial"``.
        rtol, atol, max_steps
            Override the simulator's settings for this call.

        Returns
        -------
        Result
        """
        times, counts = _output_times(times, counts)
        initial = _rows(initial, len(self.species), "initial")
        parameters = _rows(parameters, len(self.parameters), "parameters")
        n_sys = max(times.shape[0], initial.shape[0], parameters.shape[0])
        times = _broadcast(times, n_sys, "times")
        counts = _broadcast(counts[:, None], n_sys, "times")[:, 0].copy()
        initial = _broadcast(initial, n_sys, "initial")
        parameters = _broadcast(parameters, n_sys, "parameters")
        rtol = _numbers(self.rtol if rtol is None else rtol, "rtol")
        if rtol.ndim != 0 or not (np.isfinite(rtol) and rtol > 0):
            raise SimulationInputError(f"rtol must be one positive number; got {rtol!r:.80}")
        rtol = float(rtol)
        atol_rows = self._absolute_tolerance(initial, rtol, self.atol if atol is None else atol)
        status, reasons = self._validate(initial, parameters)
        directions = self._directions(sensitivities)
        use_exact = (self.first_order and not directions
                     and self.method in ("auto", "exact"))
        if use_exact:
            return self._solve_exact(times, counts, initial, parameters, status, reasons)
        return self._solve_integrated(times, counts, initial, parameters, rtol, atol_rows,
                                      status, reasons, directions,
                                      self.max_steps if max_steps is None else int(max_steps))

    def initial_rates(self, initial, parameters) -> np.ndarray:
        """``d[X]/dt`` at t = 0 for every species, one row per system.

        For an algebraic species ``X = g(y)`` the rate is ``grad g . dy/dt``.

        Examples
        --------
        >>> import numpy as np
        >>> from mechfit import parse_mechanism
        >>> sim = Simulator(parse_mechanism("A + B -> P @ k"))
        >>> sim.initial_rates(np.array([[2.0, 3.0, 0.0]]), np.array([[0.5]])).tolist()
        [[-3.0, -3.0, 3.0]]
        """
        initial = _rows(initial, len(self.species), "initial")
        parameters = _rows(parameters, len(self.parameters), "parameters")
        n_sys = max(initial.shape[0], parameters.shape[0])
        initial = _broadcast(initial, n_sys, "initial")
        parameters = _broadcast(parameters, n_sys, "parameters")
        out = np.zeros((n_sys, len(self.species)))
        initial_rates_batch(self.tables, self._state_index,
                            np.ascontiguousarray(initial[:, self._state_index]),
                            parameters, initial, out)
        return out

    # ---- internals ------------------------------------------------------------
    def _absolute_tolerance(self, initial, rtol, atol) -> np.ndarray:
        n_sys = initial.shape[0]
        if atol is None:
            scale = np.max(np.abs(np.nan_to_num(initial)), axis=1)
            scale = np.where(scale > 0, scale, 1.0)
            rows = np.repeat((1e-4 * rtol * scale)[:, None], len(self.state), axis=1)
        else:
            a = _numbers(atol, "atol")
            if a.ndim == 0:
                rows = np.full((n_sys, len(self.state)), float(a))
            elif a.shape == (len(self.species),):
                rows = np.repeat(a[self._state_index][None, :], n_sys, axis=0)
            else:
                raise SimulationInputError(
                    f"atol must be a number or one value per species ({len(self.species)})")
        if np.any(~(rows > 0)):
            raise SimulationInputError("atol must be positive")
        return np.ascontiguousarray(rows)

    def _validate(self, initial, parameters) -> tuple[np.ndarray, list[str]]:
        n_sys = initial.shape[0]
        status = np.zeros(n_sys, dtype=np.int64)
        reasons = [""] * n_sys
        positive = self.tables.log_scale
        bad_par = ~np.isfinite(parameters) | ((parameters < 0) & positive[None, :])
        bad_ini = ~np.isfinite(initial) | (initial < 0)
        for s in np.flatnonzero(bad_par.any(axis=1) | bad_ini.any(axis=1)):
            problems = [f"parameter {self.parameters[j]} = {parameters[s, j]:g}"
                        for j in np.flatnonzero(bad_par[s])]
            problems += [f"initial [{self.species[j]}] = {initial[s, j]:g}"
                         for j in np.flatnonzero(bad_ini[s])]
            status[s] = integrator.STATUS_INVALID_INPUT
            reasons[s] = ("invalid input (concentrations and rate constants must be finite "
                          "and >= 0): " + "; ".join(problems))
        return status, reasons

    def _directions(self, sensitivities) -> list[int]:
        if sensitivities is False or sensitivities is None:
            return []
        n_par = len(self.parameters)
        params = list(range(n_par))
        initial = [n_par + m for m in range(len(self.species))]
        if sensitivities is True or sensitivities == "all":
            return params + initial
        if sensitivities == "parameters":
            return params
        if sensitivities == "initial":
            return initial
        raise MechfitError(f"sensitivities={sensitivities!r}: expected False, True, 'all', "
                           "'parameters' or 'initial'")

    def direction_names(self, directions: Sequence[int]) -> tuple[str, ...]:
        """Labels of sensitivity directions: ``ln k1``, ``a``, ``[A]0``."""
        n_par = len(self.parameters)
        out = []
        for q in directions:
            if q < n_par:
                name = self.parameters[q]
                out.append(f"ln {name}" if self.tables.log_scale[q] else name)
            else:
                out.append(f"[{self.species[q - n_par]}]0")
        return tuple(out)

    def _solve_exact(self, times, counts, initial, parameters, status, reasons) -> Result:
        n_sys = times.shape[0]
        y0 = initial[:, self._state_index]
        good = status == 0
        conc = np.full((n_sys, times.shape[1], len(self.species)), np.nan)
        methods = ["exact"] * n_sys
        if good.any():
            k = linear.rate_matrices(self.tables, parameters[good])
            sol, how = linear.solve_first_order(k, y0[good], times[good], counts[good])
            block = np.full((int(good.sum()), times.shape[1], len(self.species)), np.nan)
            block[:, :, self._state_index] = np.maximum(sol, 0.0)
            conc[good] = block
            for i, s in enumerate(np.flatnonzero(good)):
                methods[s] = how[i]
                c = counts[s]
                if not np.all(np.isfinite(conc[s, :c])):
                    status[s] = integrator.STATUS_NOT_FINITE
                    reasons[s] = integrator.REASONS[integrator.STATUS_NOT_FINITE]
        return Result(self.species, _padded(times, counts), counts.copy(), conc, status == 0,
                      status, reasons, np.zeros(n_sys, dtype=np.int64), methods)

    def _solve_integrated(self, times, counts, initial, parameters, rtol, atol_rows, status,
                          reasons, directions, max_steps) -> Result:
        tables = self.tables
        if directions and tables.kind == KIND_PROGRAM and not tables.has_sensitivity_terms:
            self.tables = tables = build_tables(self.model, sensitivities=True)
        n_sys = times.shape[0]
        n_par = len(self.parameters)
        nq = len(directions)
        dirpos = np.full(n_par + len(self.species), -1, dtype=np.int64)
        for j, q in enumerate(directions):
            dirpos[q] = j
        sens_init = np.zeros((len(self.state), nq))
        for j, q in enumerate(directions):
            if q >= n_par and self.species[q - n_par] in self.state:
                sens_init[self.state.index(self.species[q - n_par]), j] = 1.0
        scale = np.max(np.abs(np.nan_to_num(initial)), axis=1)
        scale = np.where(scale > 0, scale, 1.0)
        base = atol_rows.max(axis=1)
        sens_atol = np.zeros((n_sys, nq))
        for j, q in enumerate(directions):
            sens_atol[:, j] = base if q < n_par else base / scale
        conc = np.full((n_sys, times.shape[1], len(self.species)), np.nan)
        sens = np.full((n_sys, times.shape[1], len(self.species), nq), np.nan)
        steps = np.zeros(n_sys, dtype=np.int64)
        reached = np.zeros(n_sys)
        y0 = np.ascontiguousarray(initial[:, self._state_index])
        label = "rosenbrock"
        if tables.kind == KIND_MASS_ACTION and nq == 0 and self.method in ("auto", "bdf"):
            label = "bdf"
            solve_mass_action_bdf(tables, times, counts, y0, parameters, np.full(n_sys, rtol),
                                  atol_rows, max_steps, conc, status, steps, reached)
        else:
            integrator.solve_batch(
                tables, self._state_index, times, counts, y0, parameters, initial,
                np.full(n_sys, rtol), atol_rows, sens_init, sens_atol, dirpos, max_steps,
                conc, sens, status, steps, reached)
        for s in np.flatnonzero(status):
            if not reasons[s]:
                reasons[s] = f"{integrator.REASONS[int(status[s])]}; stopped at t = " \
                             f"{reached[s]:.6g} after {steps[s]} steps"
        return Result(self.species, _padded(times, counts), counts.copy(), conc, status == 0,
                      status, reasons, steps, [label] * n_sys,
                      sens if nq else None, self.direction_names(directions))


def _numbers(values, what: str, dtype=float) -> np.ndarray:
    """``values`` as a numpy array of ``dtype``, or a clear error naming ``what``."""
    try:
        return np.asarray(values, dtype=dtype)
    except (TypeError, ValueError, OverflowError):
        kind = "integers" if dtype is np.int64 else "numbers"
        raise SimulationInputError(f"{what} must be {kind}; got {values!r:.80}") from None


def _rows(values, width: int, what: str) -> np.ndarray:
    a = _numbers(values, what)
    if a.ndim == 1:
        a = a[None, :]
    if a.ndim != 2 or a.shape[1] != width:
        raise SimulationInputError(
            f"{what} must have shape (systems, {width}); got {np.shape(values)}")
    return np.ascontiguousarray(a)


def _broadcast(a: np.ndarray, n_sys: int, what: str) -> np.ndarray:
    if a.shape[0] == n_sys:
        return a
    if a.shape[0] == 1:
        return np.ascontiguousarray(np.repeat(a, n_sys, axis=0))
    raise SimulationInputError(f"{what} has {a.shape[0]} rows but the batch has {n_sys} "
                               "systems")


def _output_times(times, counts) -> tuple[np.ndarray, np.ndarray]:
    if isinstance(times, list | tuple) and times and np.ndim(times[0]) == 1:
        rows = [_numbers(t, "times") for t in times]
        width = max(len(r) for r in rows)
        padded = np.zeros((len(rows), width))
        for i, r in enumerate(rows):
            padded[i, : len(r)] = r
            if len(r):
                padded[i, len(r):] = r[-1]
        counts = np.array([len(r) for r in rows], dtype=np.int64)
        times = padded
    else:
        times = _numbers(times, "times")
        if times.ndim == 1:
            times = times[None, :]
        if times.ndim != 2:
            raise SimulationInputError("times must be 1-D, 2-D or a list of 1-D arrays")
        if counts is None:
            counts = np.full(times.shape[0], times.shape[1], dtype=np.int64)
        counts = _numbers(counts, "counts", np.int64).reshape(-1)
    if counts.shape[0] != times.shape[0] or np.any(counts < 0) or \
            np.any(counts > times.shape[1]):
        raise SimulationInputError("counts must give, per row of times, how many entries "
                                   "are used")
    used = np.arange(times.shape[1])[None, :] < counts[:, None]
    bad = np.any(used & ~(times >= 0), axis=1)  # NaN, infinite or negative
    bad |= np.any(used & np.isinf(times), axis=1)
    if times.shape[1] > 1:
        bad |= np.any(used[:, 1:] & (np.diff(times, axis=1) < 0), axis=1)
    if bad.any():
        raise SimulationInputError(
            f"output times of system {int(np.flatnonzero(bad)[0])} must be finite, >= 0 and "
            "non-decreasing")
    return np.ascontiguousarray(times), np.ascontiguousarray(counts)


def _padded(times: np.ndarray, counts: np.ndarray) -> np.ndarray:
    out = times.astype(float).copy()
    out[np.arange(out.shape[1])[None, :] >= counts[:, None]] = np.nan
    return out
