"""The result of a derivation: a rate law with its lumped parameters and orders.

For a variant (a :class:`~mechfit.derive.model.KineticModel`) and a species X,
:func:`derive_rate_law` takes ``d[X]/dt`` from the variant's ODEs (``-d[X]/dt``, the
rate of consumption, when X is a reactant), simplifies it into one fraction
``N/D`` and reads off

* **lumped parameters**: N and D are sums of monomials in the concentrations
  (powers may be fractional) with coefficients in the rate constants. Dividing both
  by one coefficient of D (that of its concentration-free term when there is one,
  else that of its first term, ordered by degree) leaves coefficients that are the
  combinations of rate constants the rate law can identify: ``a1, a2, ...`` in the
  numerator, ``b1, b2, ...`` in the denominator (a name already used by the
  mechanism gets ``_`` appended). A negative coefficient is written as ``-a2`` so
  every lumped parameter is positive for positive rate constants.
* **apparent orders** in each concentration c at its low and high limits: the
  limits of :math:`\\partial \\ln|r| / \\partial \\ln c` for c -> 0 and c -> infinity,
  the other concentrations fixed and positive. For a ratio of sums of power terms
  they are (lowest exponent in N) - (lowest in D) and (highest in N) - (highest in
  D) (common practice). A concentration inside ``exp`` or ``ln`` has no limiting
  order (``None``).

In the rate law every intermediate starts at zero except the first form of each
conserved catalyst, so that its initial concentration ``[E]0`` is the total
(the usual run condition); the assumptions say so.

Examples
--------
>>> from mechfit import parse_mechanism
>>> from mechfit.derive.steady_state import steady_state_model
>>> m = parse_mechanism("E + S <=> ES @ k1, k_1\\nES -> E + P @ k2")
>>> law = derive_rate_law(steady_state_model(m))
>>> law.rate
E__0*S*k1*k2/(S*k1 + k2 + k_1)
>>> {k: str(v) for k, v in law.lumped.items()}
{'a1': 'k1*k2/(k2 + k_1)', 'b1': 'k1/(k2 + k_1)'}
>>> law.orders["S"], law.orders["E__0"]
((1, 0), (1, 1))
"""

from __future__ import annotations

from dataclasses import dataclass, field

import sympy

from mechfit.derive.errors import DerivationError
from mechfit.derive.model import KineticModel
from mechfit.derive.printing import latex_concentration, latex_text, plain_text, safe_names
from mechfit.derive.simplification import BUDGET, tidy
from mechfit.derive.steady_state import catalyst_laws
from mechfit.mechanism import intermediates, symbols
from mechfit.mechanism.expression import to_text
from mechfit.mechanism.network import formed_and_consumed


@dataclass(frozen=True)
class LumpedParameter:
    """One identifiable combination: ``name`` = ``expression`` (elementary constants),
    multiplying ``monomial`` in the ``part`` (numerator or denominator)."""

    name: str
    expression: sympy.Expr
    monomial: sympy.Expr
    part: str
    sign: int = 1


@dataclass(frozen=True)
class RateLaw:
    """A derived rate law (see the module notes for what each part means).

    Attributes
    ----------
    model
        The variant it came from.
    species
        The species whose rate it is.
    consumption
        True when the rate is ``-d[X]/dt``, else ``d[X]/dt``. X counts as a reactant
        when the written direction of some step uses it up and none forms it.
    rate
        The simplified rate (sympy); written in the implicit species when there is no
        closed form.
    numerator, denominator
        ``rate = numerator / denominator``, polynomials in the concentrations.
    parameters
        The lumped parameters, in order (``a...`` then ``b...``).
    lumped_rate
        The rate written in the lumped parameters.
    orders
        Concentration symbol name -> (low, high) apparent orders (sympy Rationals),
        or ``None`` where there is no limiting power law.
    assumptions
        What the variant and the rate law assumed.
    """

    model: KineticModel
    species: str
    consumption: bool
    rate: sympy.Expr
    numerator: sympy.Expr
    denominator: sympy.Expr
    parameters: tuple[LumpedParameter, ...] = ()
    lumped_rate: sympy.Expr | None = None
    orders: dict[str, tuple[sympy.Rational, sympy.Rational] | None] = field(default_factory=dict)
    assumptions: tuple[str, ...] = ()

    @property
    def variant(self) -> str:
        return self.model.name

    @property
    def closed_form(self) -> bool:
        return not self.model.numerical_steady_state

    @property
    def lumped(self) -> dict[str, sympy.Expr]:
        """Lumped parameter name -> expression in the elementary constants."""
        return {p.name: p.expression for p in self.parameters}

    @property
    def quantity(self) -> str:
        """``d[P]/dt`` or ``-d[S]/dt``: what :attr:`rate` is the rate of."""
        return f"{'-' if self.consumption else ''}d[{self.species}]/dt"

    def text(self) -> str:
        """The rate in mechfit's expression grammar (``[X]`` for concentrations)."""
        return to_text(self.rate, self.model.mechanism.species)

    def plain(self) -> str:
        """The rate as sympy-parsable text (safe names, see :mod:`~mechfit.derive.printing`)."""
        return plain_text(self.rate)

    def latex(self) -> str:
        """The rate law as a LaTeX equation."""
        sp = self.model.mechanism.species
        head = r"\frac{d" + latex_concentration(self.species) + "}{dt}"
        return f"{'-' if self.consumption else ''}{head} = {latex_text(self.rate, sp)}"

    def summary(self) -> dict:
        """A JSON-safe dictionary (the ``mechfit derive --json`` object)."""
        sp = self.model.mechanism.species
        names = safe_names(self.rate.free_symbols)
        out = {
            "variant": self.variant,
            "species": self.species,
            "quantity": self.quantity,
            "closed_form": self.closed_form,
            "rate": self.plain() if self.closed_form else None,
            "text": self.text(),
            "latex": self.latex(),
            "numerator": plain_text(self.numerator),
            "denominator": plain_text(self.denominator),
            "lumped": {p.name: plain_text(p.expression) for p in self.parameters},
            "lumped_terms": {p.name: {"part": p.part, "sign": p.sign,
                                      "multiplies": plain_text(p.monomial)}
                             for p in self.parameters},
            "lumped_rate": plain_text(self.lumped_rate) if self.lumped_rate is not None
            else None,
            "orders": {k: (None if v is None else {"low": _number(v[0]), "high": _number(v[1])})
                       for k, v in self.orders.items()},
            "assumptions": list(self.assumptions),
            "names": {v: k.name for k, v in names.items()},
            "state": list(self.model.state),
            "algebraic": {s: to_text(e, sp) for s, e in self.model.algebraic.items()},
            "numerical_steady_state": self.model.numerical_steady_state,
        }
        if self.model.numerical_steady_state:
            out["implicit_species"] = list(self.model.implicit_species)
            out["implicit"] = [to_text(e, sp) for e in self.model.implicit]
            out["rate_in_implicit_species"] = self.plain()
        return out

    def report(self) -> str:
        """A readable multi-line account of the derivation."""
        lines = [f"variant: {self.variant}", "assumptions:"]
        lines += [f"  - {a}" for a in self.assumptions]
        if not self.closed_form:
            lines.append(f"no closed form: {', '.join(self.model.implicit_species)} solve")
            lines += [f"  0 = {to_text(e, self.model.mechanism.species)}"
                      for e in self.model.implicit]
        lines.append(f"{self.quantity} = {self.text()}")
        if self.parameters:
            lines.append("lumped parameters (identifiable combinations):")
            lines += [f"  {p.name} = {to_text(p.expression)}" for p in self.parameters]
            shown = to_text(self.lumped_rate, self.model.mechanism.species)
            lines.append(f"  {self.quantity} = {shown}")
        if self.orders:
            lines.append("apparent orders (low limit, high limit):")
            for k, v in self.orders.items():
                shown = "no power-law limit" if v is None else f"{v[0]}, {v[1]}"
                label = to_text(sympy.Symbol(k), self.model.mechanism.species)
                lines.append(f"  {label}: {shown}")
        return "\n".join(lines)


def _number(x: sympy.Rational) -> int | float:
    return int(x) if x.is_integer else float(x)


def default_species(model: KineticModel) -> str:
    """The species whose rate is reported by default: the first final product
    (formed, never consumed, not an intermediate) among the state species, else the
    state species formed by the most steps net of those consuming it (first in
    mechanism order on ties)."""
    mech = model.mechanism
    inter = set(intermediates(mech))
    fc = formed_and_consumed(mech)
    for s in model.state:
        formed, consumed = fc[s]
        if formed and not consumed and s not in inter:
            return s
    return max(model.state, key=lambda s: (len(fc[s][0]) - len(fc[s][1]),
                                           -model.state.index(s)))


def _variables(mech) -> set[sympy.Symbol]:
    return ({symbols.concentration(s) for s in mech.species}
            | {symbols.initial_concentration(s) for s in mech.species})


def _terms(expr: sympy.Expr, variables: set[sympy.Symbol]):
    """Split an expanded sum into {monomial: coefficient}; also the variables found
    outside plain powers."""
    out: dict[sympy.Expr, sympy.Expr] = {}
    odd: set[sympy.Symbol] = set()
    for term in sympy.Add.make_args(sympy.expand(expr)):
        mono, coef = sympy.Integer(1), sympy.Integer(1)
        for f in sympy.Mul.make_args(term):
            if f.free_symbols & variables:
                base, exp = f.as_base_exp()
                if not (base in variables and exp.is_Rational):
                    odd |= f.free_symbols & variables
                mono *= f
            else:
                coef *= f
        out[mono] = out.get(mono, sympy.Integer(0)) + coef
    return {m: c for m, c in out.items() if c != 0}, odd


def _degree(mono: sympy.Expr) -> sympy.Expr:
    return sum((e for _, e in mono.as_powers_dict().items()), sympy.Integer(0))


def _order_key(mono: sympy.Expr):
    d = _degree(mono)
    return (float(d) if d.is_number else 0.0, sympy.default_sort_key(mono))


def _catalyst_initials(model: KineticModel) -> dict[sympy.Symbol, sympy.Expr]:
    """Initial concentrations set to zero in the rate law: every eliminated species
    except the first form of each catalyst."""
    mech = model.mechanism
    elim = set(model.eliminated)
    keep = {next(iter(law)) for law in catalyst_laws(mech) if set(law) <= elim}
    return {symbols.initial_concentration(s): sympy.Integer(0) for s in elim if s not in keep}


def derive_rate_law(model: KineticModel, species: str | None = None, *,
                    seconds: float = BUDGET) -> RateLaw:
    """The rate law of ``species`` in a variant (default :func:`default_species`).

    Raises
    ------
    DerivationError
        When ``species`` is not in the mechanism, or is eliminated by the variant
        (its rate is not an ODE of the variant).
    """
    mech = model.mechanism
    species = species or default_species(model)
    if species not in mech.species:
        raise DerivationError(f"unknown species '{species}' for the rate: the mechanism has "
                              f"{', '.join(mech.species)}", names=(species,))
    if species not in model.state:
        raise DerivationError(
            f"'{species}' is eliminated in variant {model.name} (steady state or "
            f"equilibrium); ask for the rate of one of {', '.join(model.state)}",
            names=(species,))
    net = [st.net().get(species, 0) for st in mech.steps]
    consumption = any(v < 0 for v in net) and not any(v > 0 for v in net)
    expr = model.rhs[model.state.index(species)]
    if consumption:
        expr = -expr
    zero = _catalyst_initials(model)
    assumptions = list(model.assumptions)
    if any(s in expr.free_symbols for s in zero):
        assumptions.append("intermediates start at zero, except the first form of each "
                           "catalyst, whose initial concentration is the total")
    substituted = expr.xreplace(zero)
    # reduced models come tidied already; only tidy again what the substitution changed
    tidied = model.mass_action or substituted != expr
    rate = tidy(substituted, seconds) if tidied else substituted
    num, den = sympy.fraction(sympy.together(rate))
    if not model.numerical_steady_state and den.could_extract_minus_sign():
        num, den = -num, -den
    if model.numerical_steady_state:
        return RateLaw(model, species, consumption, rate, num, den, (), None, {},
                       tuple(assumptions))
    variables = _variables(mech)
    nterms, odd_n = _terms(num, variables)
    dterms, odd_d = _terms(den, variables)
    odd = odd_n | odd_d
    # normalise by one coefficient of the denominator
    norm = sympy.Integer(1) if sympy.Integer(1) in dterms else min(dterms, key=_order_key)
    c0 = dterms[norm]
    taken = set(mech.parameters) | set(mech.species)
    params: list[LumpedParameter] = []
    top, bottom = sympy.Integer(0), norm
    for part, prefix, terms in (("numerator", "a", nterms), ("denominator", "b", dterms)):
        index = 0
        for mono in sorted(terms, key=_order_key):
            if part == "denominator" and mono == norm:
                continue
            value = tidy(terms[mono] / c0, seconds)
            if value.free_symbols:
                sign = -1 if value.could_extract_minus_sign() else 1
                index += 1
                name = f"{prefix}{index}"
                while name in taken:
                    name += "_"
                taken.add(name)
                params.append(LumpedParameter(name, sign * value, mono, part, sign))
                term = sign * symbols.parameter(name) * mono
            else:
                term = value * mono
            if part == "numerator":
                top += term
            else:
                bottom += term
    orders: dict[str, tuple | None] = {}
    present = sorted(rate.free_symbols & variables, key=lambda s: s.name)
    order_names = [s for s in mech.species]
    present.sort(key=lambda s: (order_names.index(s.name) if s.name in order_names
                                else len(order_names), s.name))
    for var in present:
        if var in odd:
            orders[var.name] = None
            continue
        en = [m.as_powers_dict().get(var, sympy.Integer(0)) for m in nterms]
        ed = [m.as_powers_dict().get(var, sympy.Integer(0)) for m in dterms]
        orders[var.name] = (min(en) - min(ed), max(en) - max(ed))
    return RateLaw(model, species, consumption, rate, num, den, tuple(params), top / bottom,
                   orders, tuple(assumptions))
