"""Observables: what a column of data measures, as a function of the concentrations.

Every observable has a *kind* and turns into a sympy expression in the symbols of
:mod:`mechfit.mechanism.symbols` (concentrations ``[X]``, initial concentrations
``[X]0``, free parameters). Concentrations in these expressions are canonical
(mol/L); the observable's values are stored in the canonical unit of its kind.

========================  ===================================================  ==========
kind                      value                                                canonical
========================  ===================================================  ==========
``concentration``         ``[X]``                                              mol/L
``expression``            any expression of our grammar, e.g. Beer–Lambert     its unit in
                          ``eps_S*[S] + eps_P*[P] + base``                     mol, L, s
``conversion``            ``1 - [X]/[X]0``                                     1
``yield``                 ``ratio*([P] - [P]0)/[X]0`` (``of`` = X)             1
``initial_rate``          ``sign*d[X]/dt`` at the run's single time point      mol/(L s)
                          (t = 0), or ``sign*([X] - [X]0)/window`` at
                          t = window when a window is given
``heat_flow``             ``-V * sum_j dH_j * r_j`` over the named steps j,    W
                          ``r_j`` the net rate (forward minus reverse) of step
                          j in mol/(L s), ``dH_j`` the reaction enthalpy in
                          J/mol, ``V`` the run's volume in L (exothermic > 0)
========================  ===================================================  ==========

``sign`` is +1 for ``direction = "formation"`` and -1 for ``"consumption"``. The two
kinds that need the mechanism (a derivative, step rates) are turned into one
expression in the model's state by :func:`observable_expression`.

Examples
--------
>>> obs = build_observable("A400", {"kind": "expression",
...     "expression": "eps*[S] + base", "fitted": ["eps", "base"], "sigma": 0.003},
...     file="study.toml", units={})
>>> obs.expression
S*eps + base
>>> obs.noise.kind, obs.noise.sigma
('known', 0.003)
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType

import numpy as np
import sympy

from mechfit.errors import ExpressionError, StudyError
from mechfit.mechanism import parse_expression, symbols
from mechfit.study import units as unitmod

#: the kinds of observable a study may declare
KINDS = ("concentration", "expression", "conversion", "yield", "initial_rate", "heat_flow")

#: canonical kind of quantity of each observable kind (``None``: given by its unit)
QUANTITY = {
    "concentration": "concentration",
    "expression": None,
    "conversion": "dimensionless",
    "yield": "dimensionless",
    "initial_rate": "rate",
    "heat_flow": "heat_flow",
}

#: the symbol of a run's volume in heat-flow expressions (L, positive)
VOLUME = sympy.Symbol("V__run", positive=True)

_KEYS = {
    "concentration": {"species", "unit", "sigma", "allow_negative"},
    "expression": {"expression", "unit", "sigma", "fitted", "fixed"},
    "conversion": {"species", "unit", "sigma"},
    "yield": {"species", "of", "ratio", "unit", "sigma"},
    "initial_rate": {"species", "direction", "window", "unit", "sigma"},
    "heat_flow": {"steps", "unit", "enthalpy_unit", "sigma"},
}


@dataclass(frozen=True)
class Noise:
    """The noise model of an observable (Gaussian, one standard deviation per point).

    Attributes
    ----------
    kind
        ``"known"`` (``sigma`` given, canonical unit of the observable) or
        ``"fitted"`` (one standard deviation fitted per observable, named
        ``parameter``). A ``NAME_sd`` column in a table gives known per-point values
        that take precedence over either (see :attr:`Series.sigma`).
    """

    kind: str
    sigma: float | None = None
    parameter: str | None = None

    def summary(self) -> dict:
        return {"kind": self.kind, "sigma": self.sigma, "parameter": self.parameter}


@dataclass(frozen=True)
class Observable:
    """One observed quantity of a study.

    Attributes
    ----------
    name
        The observable's name, also its column name in the tables.
    kind
        One of :data:`KINDS`.
    expression
        The sympy expression (``None`` for ``heat_flow``, which needs the mechanism's
        steps). For ``derivative`` observables it is the quantity whose time
        derivative is observed (``sign*[X]``).
    text
        The expression in mechfit's grammar, for display.
    species
        Species whose concentration or initial concentration is used.
    fitted
        Free parameters fitted globally (absorptivities, baseline, enthalpies).
    fixed
        Free parameters with a given value (canonical units).
    unit
        The display unit (what the file said, or the default).
    quantity
        The canonical kind of its values (a key of :data:`mechfit.study.units.CANONICAL`),
        or ``None`` for expressions of another dimension.
    canonical_unit
        The unit the stored values are in.
    derivative
        True if the observed value is d(expression)/dt at the time point.
    window
        For ``initial_rate`` with a window: its length in s.
    steps
        For ``heat_flow``: ``((step label, enthalpy), ...)``; the enthalpy is a
        parameter name (fitted) or a number in J/mol.
    noise
        The :class:`Noise` model.
    allow_negative
        Negative values are allowed (baseline-corrected concentrations).
    """

    name: str
    kind: str
    expression: sympy.Expr | None
    text: str
    species: frozenset[str]
    fitted: tuple[str, ...]
    fixed: Mapping[str, float] = field(default_factory=dict)
    unit: str = "1"
    quantity: str | None = None
    canonical_unit: str = "1"
    derivative: bool = False
    window: float | None = None
    steps: tuple[tuple[str, str | float], ...] = ()
    noise: Noise = field(default_factory=lambda: Noise("fitted"))
    allow_negative: bool = True

    @property
    def parameters(self) -> tuple[str, ...]:
        """Fitted parameter names of this observable, noise standard deviation included."""
        extra = (self.noise.parameter,) if self.noise.parameter else ()
        return self.fitted + extra

    def to_canonical(self, values, unit: str | None = None, *, where: str = ""):
        """Convert values given in ``unit`` (default: :attr:`unit`) to :attr:`canonical_unit`."""
        u = unit or self.unit
        if self.quantity is not None:
            return unitmod.to_canonical(values, u, self.quantity, where=where)
        factor, target = unitmod.canonical_factor(u, where=where)
        if target != self.canonical_unit:
            raise StudyError(f"{where}: unit '{u}' does not match the unit '{self.unit}' "
                             f"of observable '{self.name}'")
        return np.asarray(values, dtype=float) * factor if np.ndim(values) else (
            float(values) * factor)

    def summary(self) -> dict:
        """JSON-safe description."""
        out = {
            "name": self.name,
            "kind": self.kind,
            "expression": self.text,
            "species": sorted(self.species),
            "fitted": list(self.fitted),
            "fixed": dict(self.fixed),
            "unit": self.unit,
            "canonical_unit": self.canonical_unit,
            "derivative": self.derivative,
            "noise": self.noise.summary(),
        }
        if self.window is not None:
            out["window_s"] = self.window
        if self.steps:
            out["steps"] = {label: dh for label, dh in self.steps}
        return out


def _fail(file: str, name: str, message: str) -> StudyError:
    return StudyError(f"{file}: observable.{name}: {message}")


def _species(spec: Mapping, key: str, default: str | None, file: str, name: str) -> str:
    value = spec.get(key, default)
    if not isinstance(value, str) or not value.strip():
        raise _fail(file, name, f"'{key}' must name a species, e.g. {key} = \"P\"")
    return value.strip()


def _noise(spec: Mapping, name: str, obs: Observable, file: str) -> Noise:
    sigma = spec.get("sigma", "fit")
    if sigma == "fit":
        return Noise("fitted", None, f"sigma_{name}")
    if isinstance(sigma, bool) or not isinstance(sigma, int | float):
        raise _fail(file, name, f"sigma must be a positive number (in {obs.unit}) or "
                                f"\"fit\", got {sigma!r}")
    if not np.isfinite(sigma) or sigma <= 0:
        raise _fail(file, name, f"sigma must be a positive number, got {sigma!r}")
    value = obs.to_canonical(float(sigma), where=f"{file}: observable.{name}.unit")
    if obs.quantity == "temperature":  # pragma: no cover - no observable is a temperature
        raise _fail(file, name, "a temperature observable is not supported")
    return Noise("known", float(abs(value)), None)


def build_observable(name: str, spec: Mapping, *, file: str,
                     units: Mapping[str, str]) -> Observable:
    """Build an :class:`Observable` from its table in the study file.

    Parameters
    ----------
    name
        The key of ``[observable.NAME]``.
    spec
        The TOML table.
    file
        The study file name, for errors.
    units
        The study's ``units`` table (display units per kind).

    Raises
    ------
    StudyError
        With ``file: observable.NAME: ...`` for an unknown kind or key, a bad
        expression, an undeclared parameter, or a unit of the wrong kind.
    """
    if not isinstance(spec, Mapping):
        raise _fail(file, name, "expected a table of keys such as kind = \"concentration\"")
    kind = spec.get("kind", "concentration")
    if kind not in KINDS:
        raise _fail(file, name, f"unknown kind '{kind}'; expected one of {', '.join(KINDS)}")
    extra = set(spec) - _KEYS[kind] - {"kind"}
    if extra:
        raise _fail(file, name, f"unknown key(s) {', '.join(sorted(extra))} for kind "
                                f"'{kind}'; expected {', '.join(sorted(_KEYS[kind]))}")
    conc_unit = units.get("concentration", "mol/L")
    time_unit = units.get("time", "s")
    default_unit = {
        "concentration": conc_unit,
        "expression": "1",
        "conversion": "1",
        "yield": "1",
        "initial_rate": f"({conc_unit})/({time_unit})",
        "heat_flow": units.get("heat_flow", "W"),
    }[kind]
    unit = spec.get("unit", default_unit)
    where = f"{file}: observable.{name}.unit"
    quantity = QUANTITY[kind]
    if quantity is not None:
        unitmod.parse_unit(unit, quantity, where=where)
        canonical = unitmod.CANONICAL[quantity]
    else:
        parsed = unitmod.parse_unit(unit, where=where)
        if parsed.dimensionless:
            quantity, canonical = "dimensionless", "dimensionless"
        else:
            canonical = unitmod.canonical_factor(unit, where=where)[1]
    c = symbols.concentration
    c0 = symbols.initial_concentration
    fitted: tuple[str, ...] = ()
    fixed: dict[str, float] = {}
    derivative = False
    window = None
    steps: tuple[tuple[str, str | float], ...] = ()
    allow_negative = True
    if kind == "concentration":
        sp = _species(spec, "species", name, file, name)
        expr, used, text = c(sp), {sp}, f"[{sp}]"
        allow_negative = bool(spec.get("allow_negative", False))
    elif kind == "conversion":
        sp = _species(spec, "species", None, file, name)
        expr, used, text = 1 - c(sp) / c0(sp), {sp}, f"1 - [{sp}]/[{sp}]0"
    elif kind == "yield":
        sp = _species(spec, "species", None, file, name)
        of = _species(spec, "of", None, file, name)
        ratio = spec.get("ratio", 1)
        if isinstance(ratio, bool) or not isinstance(ratio, int | float) or ratio <= 0:
            raise _fail(file, name, f"ratio must be a positive number, got {ratio!r}")
        r = sympy.Rational(str(ratio))
        expr = r * (c(sp) - c0(sp)) / c0(of)
        used = {sp, of}
        text = f"{ratio}*([{sp}] - [{sp}]0)/[{of}]0" if ratio != 1 else \
            f"([{sp}] - [{sp}]0)/[{of}]0"
    elif kind == "initial_rate":
        sp = _species(spec, "species", None, file, name)
        direction = spec.get("direction", "formation")
        if direction not in ("formation", "consumption"):
            raise _fail(file, name, f"direction must be \"formation\" or \"consumption\", "
                                    f"got {direction!r}")
        sign = 1 if direction == "formation" else -1
        used = {sp}
        if "window" in spec:
            w = spec["window"]
            if isinstance(w, bool) or not isinstance(w, int | float) or not w > 0:
                raise _fail(file, name, f"window must be a positive time in {time_unit}, "
                                        f"got {w!r}")
            window = unitmod.to_canonical(float(w), time_unit, "time",
                                          where=f"{file}: units.time")
            expr = sign * (c(sp) - c0(sp)) / sympy.Float(window)
            text = f"{'' if sign > 0 else '-'}([{sp}] - [{sp}]0)/{window:g}"
        else:
            derivative = True
            expr = sign * c(sp)
            text = f"{'' if sign > 0 else '-'}d[{sp}]/dt at t = 0"
    elif kind == "heat_flow":
        raw = spec.get("steps")
        if not isinstance(raw, Mapping) or not raw:
            raise _fail(file, name, "steps must be a table of step label = reaction "
                                    "enthalpy (a number, or a parameter name to fit), "
                                    "e.g. steps = { cat = \"dH_cat\" }")
        e_unit = spec.get("enthalpy_unit", units.get("energy", "kJ/mol"))
        built = []
        for label, value in raw.items():
            if isinstance(value, str):
                _check_name(value, file, name)
                built.append((str(label), value))
                fitted += (value,)
            elif isinstance(value, int | float) and not isinstance(value, bool):
                built.append((str(label), unitmod.to_canonical(
                    float(value), e_unit, "energy",
                    where=f"{file}: observable.{name}.enthalpy_unit")))
            else:
                raise _fail(file, name, f"steps.{label} must be a number or a parameter "
                                        f"name, got {value!r}")
        steps = tuple(built)
        expr = None
        used = set()
        text = "-V*(" + " + ".join(f"{dh}*r({lab})" for lab, dh in steps) + ")"
    else:  # expression
        source = spec.get("expression")
        if not isinstance(source, str) or not source.strip():
            raise _fail(file, name, "expression must be text in mechfit's grammar, e.g. "
                                    "expression = \"eps_P*[P] + base\"")
        try:
            parsed_expr = parse_expression(source, file=f"{file}: observable.{name}")
        except ExpressionError as err:
            raise StudyError(str(err)) from None
        names_fitted = spec.get("fitted", [])
        names_fixed = spec.get("fixed", {})
        if not isinstance(names_fitted, list) or not all(isinstance(x, str)
                                                          for x in names_fitted):
            raise _fail(file, name, "fitted must be a list of parameter names")
        if not isinstance(names_fixed, Mapping):
            raise _fail(file, name, "fixed must be a table of parameter = value")
        for pname, value in names_fixed.items():
            if isinstance(value, bool) or not isinstance(value, int | float) or \
                    not np.isfinite(value):
                raise _fail(file, name, f"fixed.{pname} must be a finite number, "
                                        f"got {value!r}")
            fixed[pname] = float(value)
        both = set(names_fitted) & set(fixed)
        if both:
            raise _fail(file, name, f"{', '.join(sorted(both))} is both fitted and fixed")
        declared = set(names_fitted) | set(fixed)
        unknown = parsed_expr.parameters - declared
        if unknown:
            raise _fail(file, name, f"the expression names unknown parameter(s) "
                                    f"{', '.join(sorted(unknown))}: list each in 'fitted' "
                                    "or give it a value in 'fixed'")
        unused = declared - parsed_expr.parameters
        if unused:
            raise _fail(file, name, f"{', '.join(sorted(unused))} declared but not used in "
                                    "the expression")
        fitted = tuple(names_fitted)
        expr = parsed_expr.sympy
        if fixed:
            expr = expr.subs({symbols.parameter(p): sympy.Float(v) for p, v in fixed.items()})
        used = set(parsed_expr.species) | set(parsed_expr.initial)
        text = parsed_expr.text
    obs = Observable(name=name, kind=kind, expression=expr, text=text,
                     species=frozenset(used), fitted=fitted,
                     fixed=MappingProxyType(fixed), unit=unit, quantity=quantity,
                     canonical_unit=canonical, derivative=derivative, window=window,
                     steps=steps, allow_negative=allow_negative)
    return _replace_noise(obs, _noise(spec, name, obs, file))


def _replace_noise(obs: Observable, noise: Noise) -> Observable:
    from dataclasses import replace

    return replace(obs, noise=noise)


def _check_name(value: str, file: str, name: str) -> None:
    if not value.replace("_", "a").isalnum() or value[0].isdigit():
        raise _fail(file, name, f"'{value}' is not a parameter name (letters, digits and "
                                "underscores, not starting with a digit)")


def observable_expression(observable: Observable, model) -> sympy.Expr:
    """The observable as one sympy expression in a kinetic model's state.

    The result uses the concentrations of ``model.state``, initial concentrations
    ``X__0``, rate constants, the observable's fitted parameters and, for heat flow,
    :data:`VOLUME`. Species the model eliminates (``model.algebraic``) are replaced
    by their expressions; a derivative observable is differentiated along the model:
    ``d f/dt = sum_i (df/d[x_i]) * rhs_i`` over the state.

    Parameters
    ----------
    observable
        An :class:`Observable` of the study.
    model
        A :class:`mechfit.derive.model.KineticModel`.

    Examples
    --------
    >>> from mechfit import parse_mechanism
    >>> from mechfit.derive.model import mass_action_model
    >>> model = mass_action_model(parse_mechanism("A -> P @ k1"))
    >>> rate = build_observable("v0", {"kind": "initial_rate", "species": "P"},
    ...                         file="s.toml", units={})
    >>> observable_expression(rate, model)
    A*k1
    """
    algebraic = {symbols.concentration(s): e for s, e in model.algebraic.items()}
    if observable.kind == "heat_flow":
        mech = model.mechanism
        labels = {s.label for s in mech.steps}
        total = sympy.Integer(0)
        for label, dh in observable.steps:
            if label not in labels:
                raise StudyError(f"observable '{observable.name}': the mechanism "
                                 f"'{mech.name}' has no step '{label}' (steps: "
                                 f"{', '.join(sorted(labels))})")
            rate = sympy.Integer(0)
            for reaction in mech.reactions():
                if reaction.step == label:
                    sign = 1 if reaction.direction == "forward" else -1
                    rate += sign * reaction.rate()
            enthalpy = symbols.parameter(dh) if isinstance(dh, str) else sympy.Float(dh)
            total += enthalpy * rate
        return (-VOLUME * total).xreplace(algebraic)
    expr = observable.expression.xreplace(algebraic)
    if not observable.derivative:
        return expr
    out = sympy.Integer(0)
    for species, rhs in zip(model.state, model.rhs, strict=True):
        out += sympy.diff(expr, symbols.concentration(species)) * rhs
    return out
