"""How good is an approximation for given rate constants and run conditions?

Two measures:

* :func:`time_scale_separation`: the eigenvalues of the full mass-action Jacobian at
  a state. A variant that eliminates m species (less the conservation laws among
  them) assumes m fast modes; the separation is the ratio of the slowest of those
  fast relaxation rates to the fastest remaining slow one,
  :math:`|\\mathrm{Re}\\,\\lambda_m| / |\\mathrm{Re}\\,\\lambda_{m+1}|` with the modes sorted
  fast to slow and the zero modes of the conservation laws removed. Steady-state
  and pre-equilibrium treatments are trustworthy when it is large; a ratio of ten
  or more is the usual rule of thumb (common practice; see L. A. Segel and M.
  Slemrod, SIAM Review 31 (1989) 446, for the enzyme case).
* :func:`largest_relative_deviation`: given trajectories of the full model and of
  the variant (from any simulator), the largest difference of a species'
  concentration, relative to that species' largest value in the full trajectory.
  :func:`algebraic_values` evaluates the eliminated species along the variant's
  state trajectory so that they can be compared too.

Examples
--------
>>> from mechfit import parse_mechanism
>>> from mechfit.derive.steady_state import steady_state_model
>>> m = parse_mechanism("E + S <=> ES @ k1, k_1\\nES -> E + P @ k2")
>>> v = steady_state_model(m)
>>> t = time_scale_separation(v, {"k1": 1e3, "k_1": 1.0, "k2": 1.0}, {"E": 1e-3, "S": 1.0})
>>> t.fast_modes, t.separated()
(1, True)
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np
import sympy

from mechfit.derive.errors import DerivationError
from mechfit.derive.model import KineticModel, mass_action_model
from mechfit.mechanism import conservation_laws, symbols


@dataclass(frozen=True)
class TimeScaleSeparation:
    """Relaxation rates of the full model at one state, and what the variant assumes.

    Attributes
    ----------
    variant
        The variant's name.
    rates
        ``|Re(lambda)|`` of the non-conserved modes, fastest first (1/time).
    fast_modes
        How many of them the variant takes as instantaneous.
    separation
        ``rates[fast_modes - 1] / rates[fast_modes]`` (``inf`` when no slow mode is
        left, ``nan`` when the variant eliminates nothing).
    """

    variant: str
    rates: tuple[float, ...]
    fast_modes: int
    separation: float

    def separated(self, threshold: float = 10.0) -> bool:
        """True when ``separation >= threshold`` (ten by common practice)."""
        return bool(self.separation >= threshold)

    def summary(self) -> dict:
        return {"variant": self.variant, "rates": list(self.rates),
                "fast_modes": self.fast_modes,
                "separation": None if np.isnan(self.separation) else float(self.separation),
                "separated": self.separated()}


def _numeric_values(model: KineticModel, values: Mapping[str, float]) -> dict:
    mech = model.mechanism
    missing = [p for p in mech.parameters if p not in values and p not in mech.fixed]
    if missing:
        raise DerivationError(f"no value for {', '.join(missing)}: give every rate constant",
                              names=tuple(missing))
    out = {}
    for name in mech.parameters:
        v = float(values[name]) if name in values else float(mech.fixed[name])
        out[symbols.rate_constant(name)] = v
        out[symbols.parameter(name)] = v
    return out


def _fast_mode_count(model: KineticModel) -> int:
    mech = model.mechanism
    elim = set(model.eliminated)
    inside = sum(1 for law in conservation_laws(mech)
                 if set(law.as_dict(mech.species)) <= elim)
    return len(elim) - inside


def time_scale_separation(model: KineticModel, values: Mapping[str, float],
                          concentrations: Mapping[str, float]) -> TimeScaleSeparation:
    """Time-scale separation of ``model``'s assumption at a state of the full model.

    Parameters
    ----------
    model
        The variant to judge (its mechanism gives the full model).
    values
        Rate constants (and law parameters) by name; fixed values fill gaps.
    concentrations
        Species -> concentration at the state (missing species are 0, as
        intermediates are at the start of a run).
    """
    mech = model.mechanism
    full = mass_action_model(mech)
    point = _numeric_values(model, values)
    for s in mech.species:
        point[symbols.concentration(s)] = float(concentrations.get(s, 0.0))
    jac = np.array(full.jacobian().xreplace(point).evalf(), dtype=float)
    eig = np.linalg.eigvals(jac)
    order = np.argsort(-np.abs(eig.real))
    rates = np.abs(eig.real[order])
    zero = len(conservation_laws(mech))
    kept = rates[: len(rates) - zero] if zero else rates
    m = _fast_mode_count(model)
    if m == 0 or m > len(kept):
        sep = float("nan") if m == 0 else float("inf")
    elif m == len(kept):
        sep = float("inf")
    else:
        sep = float(kept[m - 1] / kept[m]) if kept[m] > 0 else float("inf")
    return TimeScaleSeparation(model.name, tuple(float(r) for r in kept), m, sep)


def algebraic_values(model: KineticModel, state: Mapping[str, np.ndarray],
                     values: Mapping[str, float],
                     initial: Mapping[str, float]) -> dict[str, np.ndarray]:
    """The eliminated species along a trajectory of ``model``'s state species.

    ``state`` maps each state species to its concentrations; ``initial`` gives the
    initial concentrations (``[X]0``) the algebraic expressions use.
    """
    if model.numerical_steady_state:
        raise DerivationError(f"variant {model.name} has no closed form for "
                              f"{', '.join(model.implicit_species)}; solve them numerically")
    point = _numeric_values(model, values)
    for s in model.mechanism.species:
        point[symbols.initial_concentration(s)] = float(initial.get(s, 0.0))
    arrays = {symbols.concentration(s): np.asarray(state[s], float) for s in model.state}
    n = len(next(iter(arrays.values())))
    return {s: np.broadcast_to(evaluate(expr.xreplace(point), arrays), (n,)).astype(float)
            for s, expr in model.algebraic.items()}


_FUNCTIONS = {sympy.exp: np.exp, sympy.log: np.log, sympy.Abs: np.abs}


def evaluate(expr: sympy.Expr, arrays: Mapping[sympy.Symbol, np.ndarray]) -> np.ndarray:
    """Evaluate a sympy expression on numpy arrays by walking its tree (no code
    generation): numbers, symbols, sums, products, powers, exp, log and abs.

    Examples
    --------
    >>> x = sympy.Symbol("x")
    >>> evaluate(2 * x**2 + sympy.sqrt(x), {x: np.array([1.0, 4.0])}).tolist()
    [3.0, 34.0]
    """
    if expr.is_Number:
        return np.asarray(float(expr))
    if expr.is_Symbol:
        if expr not in arrays:
            raise DerivationError(f"no value for '{expr.name}'", names=(expr.name,))
        return arrays[expr]
    args = [evaluate(a, arrays) for a in expr.args]
    if expr.is_Add:
        return sum(args[1:], args[0])
    if expr.is_Mul:
        out = args[0]
        for a in args[1:]:
            out = out * a
        return out
    if expr.is_Pow:
        return np.power(args[0], args[1])
    fn = _FUNCTIONS.get(expr.func)
    if fn is None:
        raise DerivationError(f"cannot evaluate {expr.func.__name__} numerically here")
    return fn(*args)


def largest_relative_deviation(full: Mapping[str, np.ndarray],
                               reduced: Mapping[str, np.ndarray]) -> tuple[float, str]:
    """Largest ``|reduced - full| / max|full|`` over time, for species in both.

    Returns the deviation and the species where it occurs.

    Examples
    --------
    >>> largest_relative_deviation({"A": np.array([1.0, 0.5])}, {"A": np.array([1.0, 0.45])})
    (0.05, 'A')
    """
    worst, where = 0.0, ""
    for s, f in full.items():
        if s not in reduced:
            continue
        f = np.asarray(f, float)
        scale = float(np.max(np.abs(f))) or 1.0
        dev = float(np.max(np.abs(np.asarray(reduced[s], float) - f))) / scale
        if dev > worst or not where:
            worst, where = round(dev, 12), s
    return worst, where
