"""A named parameter collection: values, priors, bounds, fixed flags, ties and transforms.

:class:`Parameters` is the one place that knows how the vector a sampler or an
optimiser moves (the *free* vector ``u``) maps to the values a model needs (the
*natural* vector ``x`` over every parameter name):

* a free parameter with ``transform="log"`` (every rate constant) has ``x = exp(u)``;
  with ``"identity"``, ``x = u``;
* a fixed parameter keeps its value;
* a tied parameter is an expression of other parameters (for example a reverse rate
  constant set by a Wegscheider condition of the network,
  :func:`mechfit.mechanism.dependent_constants`).

Every function takes a whole batch ``u`` of shape ``(m, q)`` at once.

Examples
--------
>>> import numpy as np
>>> from mechfit import parse_mechanism
>>> m = parse_mechanism("A <=> B @ k1, k_1\\nB <=> C @ k2, k_2\\nC <=> A @ k3, k_3")
>>> p = Parameters.from_mechanism(m)
>>> p.free_names
('k1', 'k_1', 'k2', 'k_2', 'k3')
>>> p["k_3"].tie
k1*k2*k3/(k_1*k_2)
>>> x = p.natural(p.free_vector())
>>> bool(np.isclose(x[0, p.index("k_3")], x[0, p.index("k3")]))
True
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Iterator, Mapping
from dataclasses import dataclass, field, replace

import numpy as np
import sympy
from scipy.stats import qmc

from mechfit.infer.errors import ParameterError
from mechfit.infer.priors import (
    STANDARD_TEMPERATURE,
    Fixed,
    LogUniform,
    Prior,
    Uniform,
    rate_constant_bounds,
)
from mechfit.mechanism import Expression, Mechanism, dependent_constants, parse_expression

TRANSFORMS = ("log", "identity")
#: default prior of an empirical-law parameter (an order, an exponent): a mechfit convention
LAW_PARAMETER_PRIOR = Uniform(-5.0, 5.0)


@dataclass(frozen=True)
class Parameter:
    """One named parameter.

    Attributes
    ----------
    name
        The name the model uses.
    value
        Current (natural) value: the start of a fit, or the fixed value.
    prior
        The prior (a :class:`~mechfit.infer.priors.Fixed` prior fixes the value);
        ``None`` for a tied parameter.
    transform
        ``"log"`` (sampled as ln x; needs x > 0) or ``"identity"``.
    tie
        A sympy expression of other parameters' names, or ``None``.
    kind
        ``"rate constant"``, ``"law parameter"``, ``"noise"`` or ``"other"``.
    order
        Reaction order of a rate constant (``None`` otherwise).
    note
        Where the prior or tie came from (shown in reports).
    """

    name: str
    value: float
    prior: Prior | None = None
    transform: str = "identity"
    tie: sympy.Expr | None = None
    kind: str = "other"
    order: int | None = None
    note: str = ""

    def __post_init__(self) -> None:
        if self.transform not in TRANSFORMS:
            raise ParameterError(
                f"parameter {self.name!r}: transform must be one of {TRANSFORMS}, "
                f"got {self.transform!r}", (self.name,))
        if self.tie is None and self.prior is None:
            raise ParameterError(f"parameter {self.name!r} needs a prior, a fixed value or a tie",
                                 (self.name,))
        if self.tie is None and self.transform == "log" and not self.fixed:
            low, _ = self.prior.support
            if low < 0:
                raise ParameterError(
                    f"parameter {self.name!r} is sampled in log space but its prior "
                    f"{self.prior.text()} allows negative values", (self.name,))

    @property
    def fixed(self) -> bool:
        return isinstance(self.prior, Fixed)

    @property
    def free(self) -> bool:
        """True when the sampler and optimiser move this parameter."""
        return self.tie is None and not self.fixed

    @property
    def bounds(self) -> tuple[float, float]:
        """Natural-space support of the prior (the tie's value range is not bounded)."""
        if self.prior is None:
            return -math.inf, math.inf
        return self.prior.support

    def describe(self) -> dict:
        """JSON-safe description."""
        return {
            "value": float(self.value), "kind": self.kind, "transform": self.transform,
            "fixed": self.fixed, "free": self.free,
            "prior": self.prior.describe() if self.prior is not None else None,
            "tie": sympy.sstr(self.tie) if self.tie is not None else None,
            "order": self.order, "note": self.note,
        }


def _to_space(x: np.ndarray, transform: str) -> np.ndarray:
    if transform == "log":
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.log(x)
    return np.asarray(x, dtype=float)


@dataclass
class Parameters:
    """An ordered, named collection of :class:`Parameter`.

    Build with :meth:`from_mechanism` or from a list; change with :meth:`set`, which
    returns a new collection (the object is treated as a value).
    """

    items: tuple[Parameter, ...]
    _tie_functions: dict = field(default_factory=dict, init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        names = [p.name for p in self.items]
        dup = sorted({n for n in names if names.count(n) > 1})
        if dup:
            raise ParameterError(f"parameter names given twice: {', '.join(dup)}", tuple(dup))
        self.items = tuple(self.items)
        self._compile_ties()

    # ---- construction --------------------------------------------------------------
    @classmethod
    def from_mechanism(
        cls,
        mech: Mechanism,
        *,
        temperature: float = STANDARD_TEMPERATURE,
        concentration_unit: float = 1.0,
        time_unit: float = 1.0,
        priors: Mapping[str, Prior] | None = None,
        wegscheider: bool = True,
        names: Iterable[str] | None = None,
    ) -> Parameters:
        """Parameters of a mechanism with the default priors of :mod:`mechfit.infer.priors`.

        Parameters
        ----------
        mech
            The mechanism; its fixed values become :class:`Fixed` priors.
        temperature
            The highest study temperature in K (sets the first-order bound).
        concentration_unit, time_unit
            The study's units in mol/L and s.
        priors
            User priors by name (from the study file); they replace the defaults.
        wegscheider
            Tie one constant per thermodynamic cycle (detailed balance).
        names
            Restrict to these names (the parameters a model variant uses), in this order.
        """
        priors = dict(priors or {})
        orders: dict[str, int] = {}
        for reaction in mech.reactions():
            if reaction.constant is not None:
                orders.setdefault(reaction.constant.name, sum(c for _, c in reaction.reactants))
        ties = dependent_constants(mech) if wegscheider else {}
        wanted = tuple(names) if names is not None else mech.parameters
        unknown = sorted(set(priors) - set(mech.parameters) - set(wanted))
        if unknown:
            raise ParameterError(
                f"priors name unknown parameters: {', '.join(unknown)}; the mechanism has "
                + ", ".join(mech.parameters), tuple(unknown))
        out = []
        for name in wanted:
            is_constant = name in orders
            kind = "rate constant" if is_constant else "law parameter"
            order = orders.get(name)
            if name in ties and name not in priors:
                out.append(Parameter(name, 1.0, None, "log", ties[name], kind, order,
                                     "Wegscheider condition (detailed balance)"))
                continue
            if name in mech.fixed:
                prior, note = Fixed(float(mech.fixed[name])), "fixed in the mechanism"
            elif name in priors:
                prior, note = priors[name], "user prior"
            elif is_constant:
                prior = LogUniform(*rate_constant_bounds(order, temperature, concentration_unit,
                                                         time_unit))
                note = f"default: log-uniform, order-{order} bounds (common practice)"
            else:
                prior, note = LAW_PARAMETER_PRIOR, "default: uniform(-5, 5) (a mechfit convention)"
            transform = "log" if is_constant else "identity"
            value = _central_value(prior, transform)
            out.append(Parameter(name, value, prior, transform, None, kind, order, note))
        return cls(tuple(out))

    def set(self, name: str, **changes) -> Parameters:
        """A copy with fields of one parameter changed (``value=``, ``prior=``, ``tie=``...).

        ``tie`` may be a sympy expression, an :class:`~mechfit.mechanism.Expression` or
        text in mechfit's expression grammar.
        """
        if name not in self.names:
            raise ParameterError(f"no parameter named {name!r}; known: {', '.join(self.names)}",
                                 (name,))
        if "tie" in changes:
            changes["tie"] = _as_sympy(changes["tie"], name)
            if changes["tie"] is not None:
                changes.setdefault("prior", None)
        if "prior" in changes and changes["prior"] is not None and "value" not in changes:
            prior = changes["prior"]
            changes["value"] = _central_value(prior, changes.get("transform",
                                                                 self[name].transform))
        items = tuple(replace(p, **changes) if p.name == name else p for p in self.items)
        return Parameters(items)

    def add(self, parameter: Parameter) -> Parameters:
        """A copy with one more parameter at the end."""
        return Parameters((*self.items, parameter))

    def with_values(self, values: Mapping[str, float]) -> Parameters:
        """A copy with the values of free parameters replaced (fixed and tied kept)."""
        items = tuple(replace(p, value=float(values[p.name])) if p.name in values and p.free
                      else p for p in self.items)
        return Parameters(items)

    # ---- views ---------------------------------------------------------------------
    def __getitem__(self, name: str) -> Parameter:
        for p in self.items:
            if p.name == name:
                return p
        raise ParameterError(f"no parameter named {name!r}; known: {', '.join(self.names)}",
                             (name,))

    def __iter__(self) -> Iterator[Parameter]:
        return iter(self.items)

    def __len__(self) -> int:
        return len(self.items)

    def __contains__(self, name: object) -> bool:
        return name in self.names

    @property
    def names(self) -> tuple[str, ...]:
        return tuple(p.name for p in self.items)

    @property
    def free_names(self) -> tuple[str, ...]:
        return tuple(p.name for p in self.items if p.free)

    @property
    def tied_names(self) -> tuple[str, ...]:
        return tuple(p.name for p in self.items if p.tie is not None)

    @property
    def fixed_names(self) -> tuple[str, ...]:
        return tuple(p.name for p in self.items if p.fixed)

    def index(self, name: str) -> int:
        """Position of ``name`` in :attr:`names` (the natural vector)."""
        return self.names.index(name)

    @property
    def free_parameters(self) -> tuple[Parameter, ...]:
        return tuple(p for p in self.items if p.free)

    # ---- the maps between spaces ---------------------------------------------------
    def free_vector(self, values: Mapping[str, float] | None = None) -> np.ndarray:
        """The free vector ``u`` of the current values (or of ``values`` by name), shape (q,)."""
        values = values or {}
        return np.array([float(_to_space(values.get(p.name, p.value), p.transform))
                         for p in self.free_parameters])

    def free_bounds(self) -> tuple[np.ndarray, np.ndarray]:
        """Lower and upper bounds of ``u`` (the prior supports, transformed)."""
        low, high = [], []
        for p in self.free_parameters:
            a, b = p.bounds
            if p.transform == "log":
                a = math.log(a) if a > 0 else -math.inf
                b = math.log(b) if b < math.inf else math.inf
            low.append(a)
            high.append(b)
        return np.array(low), np.array(high)

    def natural(self, u: np.ndarray) -> np.ndarray:
        """Natural values of every parameter, shape (m, P), from ``u`` of shape (m, q) or (q,)."""
        u = np.atleast_2d(np.asarray(u, dtype=float))
        m = u.shape[0]
        x = np.empty((m, len(self.items)))
        j = 0
        for i, p in enumerate(self.items):
            if p.free:
                with np.errstate(over="ignore"):
                    x[:, i] = np.exp(u[:, j]) if p.transform == "log" else u[:, j]
                j += 1
            elif p.fixed:
                x[:, i] = p.prior.value
        for i, (args, function, _) in self._tie_functions.items():
            with np.errstate(all="ignore"):
                x[:, i] = np.broadcast_to(function(*(x[:, a] for a in args)), (m,))
        return x

    def natural_jacobian(self, u: np.ndarray) -> np.ndarray:
        """d x / d u, shape (m, P, q): how each natural value moves with each free coordinate."""
        u = np.atleast_2d(np.asarray(u, dtype=float))
        x = self.natural(u)
        m, q = u.shape[0], u.shape[1]
        jac = np.zeros((m, len(self.items), q))
        column = {}
        j = 0
        for i, p in enumerate(self.items):
            if p.free:
                jac[:, i, j] = x[:, i] if p.transform == "log" else 1.0
                column[i] = j
                j += 1
        for i, (args, _, derivatives) in self._tie_functions.items():
            for a, derivative in zip(args, derivatives, strict=True):
                if a in column:
                    with np.errstate(all="ignore"):
                        d = np.broadcast_to(derivative(*(x[:, b] for b in args)), (m,))
                    jac[:, i, column[a]] += d * jac[:, a, column[a]]
        return jac

    def log_prior(self, u: np.ndarray) -> np.ndarray:
        """Log prior density of ``u`` (m, q) in the free space, Jacobian term included.

        For ``x = exp(u)``: ``log p_u(u) = log p_x(exp u) + u``.
        """
        u = np.atleast_2d(np.asarray(u, dtype=float))
        total = np.zeros(u.shape[0])
        for j, p in enumerate(self.free_parameters):
            if p.transform == "log":
                with np.errstate(over="ignore"):
                    x = np.exp(u[:, j])
                total += p.prior.logpdf(x) + u[:, j]
            else:
                total += p.prior.logpdf(u[:, j])
        total[~np.isfinite(total)] = -np.inf
        return total

    def sample_prior(self, rng: np.random.Generator, size: int) -> np.ndarray:
        """``size`` prior draws of ``u``, shape (size, q)."""
        cols = [_to_space(p.prior.sample(rng, size), p.transform) for p in self.free_parameters]
        return np.column_stack(cols) if cols else np.empty((size, 0))

    def start_design(
        self, n: int, *, method: str = "sobol", mass: float = 0.999, seed: int | None = 0,
    ) -> np.ndarray:
        """``n`` space-filling starting points of ``u`` within the priors, shape (n, q).

        A scrambled Sobol sequence (or a Latin hypercube, ``method="lhs"``) from
        :mod:`scipy.stats.qmc` on the unit cube, mapped through each prior's quantile
        function restricted to its central interval of probability ``mass``. For a
        log-uniform prior this is uniform in log k, so every decade gets starts.
        """
        q = len(self.free_parameters)
        if q == 0:
            return np.empty((n, 0))
        if method == "sobol":
            engine = qmc.Sobol(d=q, scramble=True, seed=seed)
            m = max(int(math.ceil(math.log2(max(n, 1)))), 0)
            cube = engine.random_base2(m)[:n]
        elif method == "lhs":
            cube = qmc.LatinHypercube(d=q, seed=seed).random(n)
        else:
            raise ParameterError(f"start design must be 'sobol' or 'lhs', got {method!r}")
        tail = (1.0 - mass) / 2.0
        cube = tail + cube * (1.0 - 2.0 * tail)
        cols = [_to_space(p.prior.quantile(cube[:, j]), p.transform)
                for j, p in enumerate(self.free_parameters)]
        return np.column_stack(cols)

    def values(self, u: np.ndarray) -> dict[str, float]:
        """Natural values by name for one free vector ``u``."""
        x = self.natural(u)[0]
        return {n: float(v) for n, v in zip(self.names, x, strict=True)}

    def describe(self) -> dict:
        """JSON-safe description of every parameter."""
        return {p.name: p.describe() for p in self.items}

    def report(self) -> str:
        """A plain-text table of the parameters, their priors and ties."""
        lines = [f"{'name':<12} {'kind':<14} {'value':>12}  prior / tie"]
        for p in self.items:
            how = (f"= {sympy.sstr(p.tie)}" if p.tie is not None else p.prior.text())
            lines.append(f"{p.name:<12} {p.kind:<14} {p.value:>12.5g}  {how}"
                         + (f"  [{p.note}]" if p.note else ""))
        return "\n".join(lines)

    # ---- ties ----------------------------------------------------------------------
    def _compile_ties(self) -> None:
        names = self.names
        tied = {p.name: p.tie for p in self.items if p.tie is not None}
        resolved: dict[str, sympy.Expr] = {}

        def resolve(name: str, stack: tuple[str, ...]) -> sympy.Expr:
            if name in resolved:
                return resolved[name]
            if name in stack:
                raise ParameterError("ties form a loop: " + " -> ".join((*stack, name)),
                                     (*stack, name))
            expr = tied[name]
            subs = {}
            for sym in expr.free_symbols:
                if sym.name not in names:
                    raise ParameterError(
                        f"the tie of {name!r} uses {sym.name!r}, which is not a parameter; "
                        f"known: {', '.join(names)}", (name, sym.name))
                if sym.name in tied:
                    subs[sym] = resolve(sym.name, (*stack, name))
            resolved[name] = expr.xreplace(subs) if subs else expr
            return resolved[name]

        functions = {}
        for name in tied:
            expr = resolve(name, ())
            symbols = sorted(expr.free_symbols, key=lambda s: names.index(s.name))
            args = tuple(names.index(s.name) for s in symbols)
            function = sympy.lambdify(symbols, expr, modules="numpy")
            derivatives = tuple(sympy.lambdify(symbols, sympy.diff(expr, s), modules="numpy")
                                for s in symbols)
            functions[names.index(name)] = (args, function, derivatives)
        self._tie_functions = functions


def _central_value(prior: Prior, transform: str) -> float:
    """A starting value: the prior's median (geometric middle for log-uniform)."""
    if isinstance(prior, Fixed):
        return float(prior.value)
    return float(prior.quantile(0.5))


def _as_sympy(tie, name: str) -> sympy.Expr | None:
    if tie is None or isinstance(tie, sympy.Expr):
        return tie
    if isinstance(tie, Expression):
        expr = tie
    elif isinstance(tie, str):
        expr = parse_expression(tie, file=f"tie of {name}")
    else:
        raise ParameterError(f"the tie of {name!r} must be an expression, got {type(tie).__name__}",
                             (name,))
    if expr.species or expr.initial:
        raise ParameterError(f"the tie of {name!r} may only use parameter names, not "
                             "concentrations", (name,))
    return expr.sympy
