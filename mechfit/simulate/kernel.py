"""The compiled right-hand side, Jacobian and sensitivity terms of any kinetic model.

Two evaluation paths share one set of numba functions, compiled once and cached
on disk (``cache=True``), so a new mechanism never costs a new compile:

* **mass action** (``kind = 0``): the rates ``r_j = f_j k_j prod_i y_i^nu_ij`` come
  from integer reactant-order tables, and ``dy/dt = N r`` from the stoichiometric
  matrix ``N`` (IUPAC Gold Book, "rate of reaction"; common practice). The
  Jacobian and the second derivatives needed by forward sensitivities are exact
  power-law derivatives.
* **program** (``kind = 1``): every other model (empirical laws, steady-state and
  pre-equilibrium reductions). The right-hand side, its symbolic Jacobian (sympy
  ``diff``) and, on request, the symbolic terms of the sensitivity equations are
  translated into opcode programs (:mod:`mechfit.simulate.program`).

Sensitivity *directions* are numbered globally: ``0 .. P-1`` are the model
parameters (scaled to ``d/d ln p`` for positive parameters such as rate constants,
``d/d p`` for real-valued law parameters), ``P .. P+M-1`` the initial
concentrations of the ``M`` mechanism species (``d/d [X]0``).
"""

from __future__ import annotations

from dataclasses import dataclass

import numba
import numpy as np
import sympy

from mechfit.derive.model import KineticModel
from mechfit.errors import MechanismError
from mechfit.mechanism import symbols
from mechfit.simulate.program import ProgramBuilder, evaluate

KIND_MASS_ACTION = 0
KIND_PROGRAM = 1


@dataclass
class ModelTables:
    """Numeric tables that drive the compiled kernel for one model.

    Attributes
    ----------
    kind
        ``KIND_MASS_ACTION`` or ``KIND_PROGRAM``.
    n_state, n_parameters, n_species
        Sizes of the state vector, parameter vector and mechanism species list.
    mass_action
        ``(stoich, reactant_index, reactant_order, reactant_count, rate_parameter,
        rate_factor)``; empty arrays on the program path.
    program
        ``(ops, args, consts, rhs, jacobian, forcing, second, mixed, algebraic,
        algebraic_state, algebraic_direction)`` opcode arrays and index tables.
    stack_size
        Scratch size the programs need.
    log_scale
        Per parameter: True when its sensitivity is taken with respect to ``ln p``.
    has_sensitivity_terms
        Whether the program tables include the sensitivity terms (always True on the
        mass-action path, which computes them from its tables).
    """

    kind: int
    n_state: int
    n_parameters: int
    n_species: int
    mass_action: tuple
    program: tuple
    stack_size: int
    log_scale: np.ndarray
    has_sensitivity_terms: bool


def _empty_int(cols: int) -> np.ndarray:
    return np.zeros((0, cols), dtype=np.int64)


def _empty_mass_action() -> tuple:
    return (np.zeros((0, 0)), _empty_int(1), _empty_int(1), np.zeros(0, dtype=np.int64),
            np.zeros(0, dtype=np.int64), np.zeros(0))


def _empty_program() -> tuple:
    return (np.zeros(1, dtype=np.int64), np.zeros(1, dtype=np.int64), np.zeros(1),
            _empty_int(2), _empty_int(4), _empty_int(4), _empty_int(5), _empty_int(5),
            _empty_int(3), _empty_int(4), _empty_int(4))


def parameter_log_scale(model: KineticModel) -> np.ndarray:
    """True for each parameter whose symbol is positive (a rate constant, a lumped
    positive constant): its sensitivity is reported per unit of ``ln p``."""
    found: dict[str, sympy.Symbol] = {}
    for expr in (*model.rhs, *model.algebraic.values()):
        for s in expr.free_symbols:
            found.setdefault(s.name, s)
    constants = set(model.mechanism.constants)
    out = []
    for name in model.parameters:
        sym = found.get(name)
        out.append(bool(sym.is_positive) if sym is not None else name in constants)
    return np.asarray(out, dtype=np.bool_)


def mass_action_tables(model: KineticModel) -> tuple:
    """Stoichiometry and reactant-order tables of a plain mass-action model."""
    mech = model.mechanism
    index = {s: i for i, s in enumerate(model.state)}
    pindex = {p: i for i, p in enumerate(model.parameters)}
    reactions = mech.reactions()
    n, r_count = len(model.state), len(reactions)
    width = max([len(r.reactants) for r in reactions] + [1])
    stoich = np.zeros((n, r_count))
    ridx = np.zeros((r_count, width), dtype=np.int64)
    rord = np.zeros((r_count, width), dtype=np.int64)
    rcnt = np.zeros(r_count, dtype=np.int64)
    rpar = np.zeros(r_count, dtype=np.int64)
    rfac = np.zeros(r_count)
    for j, reaction in enumerate(reactions):
        merged: dict[str, int] = {}
        for name, c in reaction.reactants:
            merged[name] = merged.get(name, 0) + c
            stoich[index[name], j] -= c
        for name, c in reaction.products:
            stoich[index[name], j] += c
        for a, (name, c) in enumerate(merged.items()):
            ridx[j, a] = index[name]
            rord[j, a] = c
        rcnt[j] = len(merged)
        rpar[j] = pindex[reaction.constant.name]
        rfac[j] = reaction.constant.factor
    return stoich, ridx, rord, rcnt, rpar, rfac


def is_mass_action(model: KineticModel) -> bool:
    """True when the matrix kernel applies: every step mass action, every species a state."""
    mech = model.mechanism
    return (model.mass_action and tuple(model.state) == tuple(mech.species)
            and all(r.constant is not None and r.law is None for r in mech.reactions())
            and all(r.constant.name in model.parameters for r in mech.reactions()))


def build_tables(model: KineticModel, *, sensitivities: bool = False) -> ModelTables:
    """The numeric tables of ``model`` for the compiled kernel.

    Parameters
    ----------
    model
        Any :class:`~mechfit.derive.model.KineticModel`.
    sensitivities
        Also translate the symbolic terms of the sensitivity equations (program path
        only; the mass-action path computes them from its tables).
    """
    log_scale = parameter_log_scale(model)
    n_species = len(model.mechanism.species)
    if is_mass_action(model):
        return ModelTables(KIND_MASS_ACTION, len(model.state), len(model.parameters),
                           n_species, mass_action_tables(model), _empty_program(), 1,
                           log_scale, True)
    program, depth = program_tables(model, log_scale, sensitivities=sensitivities)
    return ModelTables(KIND_PROGRAM, len(model.state), len(model.parameters), n_species,
                       _empty_mass_action(), program, depth, log_scale, sensitivities)


def _symbol_lookup(model: KineticModel) -> dict[str, sympy.Symbol]:
    found: dict[str, sympy.Symbol] = {}
    for expr in (*model.rhs, *model.algebraic.values()):
        for s in expr.free_symbols:
            found.setdefault(s.name, s)
    return found


def program_tables(model: KineticModel, log_scale: np.ndarray, *,
                   sensitivities: bool) -> tuple[tuple, int]:
    """Translate rhs, Jacobian, algebraic species (and sensitivity terms) to programs."""
    species = model.mechanism.species
    builder = ProgramBuilder(
        state={s: i for i, s in enumerate(model.state)},
        parameters={p: i for i, p in enumerate(model.parameters)},
        initial={s: i for i, s in enumerate(species)},
    )
    ys = [symbols.concentration(s) for s in model.state]
    rhs = [sympy.Integer(0) + e for e in model.rhs]
    rhs_tab, jac_tab = [], []
    for e in rhs:
        rhs_tab.append(builder.add(e))
    jacobian = [[sympy.diff(e, y) for y in ys] for e in rhs]
    for i, row in enumerate(jacobian):
        for j, d in enumerate(row):
            if d != 0:
                jac_tab.append((i, j, *builder.add(d)))
    algebraic_names = [s for s in species if s in model.algebraic]
    out_index = {s: i for i, s in enumerate(species)}
    alg_tab, alg_dy_tab = [], []
    alg_exprs = [sympy.Integer(0) + model.algebraic[s] for s in algebraic_names]
    for a, (name, e) in enumerate(zip(algebraic_names, alg_exprs, strict=True)):
        alg_tab.append((out_index[name], *builder.add(e)))
        for j, y in enumerate(ys):
            d = sympy.diff(e, y)
            if d != 0:
                alg_dy_tab.append((a, j, *builder.add(d)))
    fp_tab, t_tab, jq_tab, alg_dq_tab = [], [], [], []
    if sensitivities:
        lookup = _symbol_lookup(model)
        directions: list[tuple[int, sympy.Symbol, sympy.Expr]] = []
        for q, name in enumerate(model.parameters):
            if name in lookup:
                sym = lookup[name]
                directions.append((q, sym, sym if log_scale[q] else sympy.Integer(1)))
        n_par = len(model.parameters)
        for m, name in enumerate(species):
            sym = symbols.initial_concentration(name)
            if sym.name in lookup:
                directions.append((n_par + m, lookup[sym.name], sympy.Integer(1)))
        for i, e in enumerate(rhs):
            for q, sym, scale in directions:
                d = scale * sympy.diff(e, sym)
                if d != 0:
                    fp_tab.append((i, q, *builder.add(d)))
                    for j, y in enumerate(ys):
                        dd = sympy.diff(d, y)
                        if dd != 0:
                            jq_tab.append((i, j, q, *builder.add(dd)))
            for j in range(len(ys)):
                if jacobian[i][j] == 0:
                    continue
                for m, y2 in enumerate(ys):
                    dd = sympy.diff(jacobian[i][j], y2)
                    if dd != 0:
                        t_tab.append((i, j, m, *builder.add(dd)))
        for a, e in enumerate(alg_exprs):
            for q, sym, scale in directions:
                d = scale * sympy.diff(e, sym)
                if d != 0:
                    alg_dq_tab.append((a, q, *builder.add(d)))
    ops, args, consts = builder.arrays()

    def table(rows, cols):
        return np.asarray(rows, dtype=np.int64).reshape(len(rows), cols)

    program = (ops, args, consts, table(rhs_tab, 2), table(jac_tab, 4), table(fp_tab, 4),
               table(t_tab, 5), table(jq_tab, 5), table(alg_tab, 3), table(alg_dy_tab, 4),
               table(alg_dq_tab, 4))
    return program, builder.max_depth


def check_model(model: KineticModel) -> None:
    """Raise :class:`MechanismError` when a mechanism species is neither integrated nor
    given by an algebraic expression (the simulator must return every species)."""
    implicit = tuple(getattr(model, "implicit_species", ()))
    if implicit:
        raise MechanismError(
            f"model {model.name!r} has no closed form for {', '.join(implicit)} (they are "
            "defined only implicitly); the simulator needs explicit expressions: simulate "
            "the full model or choose another steady-state/pre-equilibrium variant")
    missing = [s for s in model.mechanism.species
               if s not in model.state and s not in model.algebraic]
    if missing:
        raise MechanismError(
            f"model {model.name!r} neither integrates nor gives an expression for the "
            f"species {', '.join(missing)}; every species of the mechanism must be one or "
            "the other")
    unknown = [s for s in model.state if s not in model.mechanism.species]
    if unknown:
        raise MechanismError(f"model {model.name!r} integrates {', '.join(unknown)}, "
                             "which are not species of its mechanism")


# ---- compiled evaluation -------------------------------------------------------

@numba.njit(cache=True, inline="always")
def _power(y, order):  # pragma: no cover - compiled
    v = 1.0
    for _ in range(order):
        v *= y
    return v


@numba.njit(cache=True)
def _power_derivative(y, order, times):  # pragma: no cover - compiled
    """``d^times/dy^times y**order`` for a non-negative integer order."""
    if times > order:
        return 0.0
    c = 1.0
    for t in range(times):
        c *= order - t
    return c * _power(y, order - times)


@numba.njit(cache=True)
def mass_action_rates(ma, y, p, rates):  # pragma: no cover - compiled
    stoich, ridx, rord, rcnt, rpar, rfac = ma
    for r in range(rcnt.shape[0]):
        v = rfac[r] * p[rpar[r]]
        for a in range(rcnt[r]):
            v *= _power(y[ridx[r, a]], rord[r, a])
        rates[r] = v


@numba.njit(cache=True)
def model_rhs(kind, ma, pg, y, p, x0, stack, rates, out):  # pragma: no cover - compiled
    """``out = dy/dt`` at state ``y``."""
    n = out.shape[0]
    if kind == 0:
        stoich = ma[0]
        mass_action_rates(ma, y, p, rates)
        for i in range(n):
            s = 0.0
            for r in range(rates.shape[0]):
                s += stoich[i, r] * rates[r]
            out[i] = s
    else:
        ops, args, consts, rhs_tab = pg[0], pg[1], pg[2], pg[3]
        for i in range(n):
            out[i] = evaluate(ops, args, consts, rhs_tab[i, 0], rhs_tab[i, 1], y, p, x0,
                              stack)


@numba.njit(cache=True)
def model_jacobian(kind, ma, pg, y, p, x0, stack, jac):  # pragma: no cover - compiled
    """``jac[i, j] = d(dy_i/dt)/dy_j`` at state ``y``."""
    n = jac.shape[0]
    for i in range(n):
        for j in range(n):
            jac[i, j] = 0.0
    if kind == 0:
        stoich, ridx, rord, rcnt, rpar, rfac = ma
        for r in range(rcnt.shape[0]):
            base = rfac[r] * p[rpar[r]]
            for a in range(rcnt[r]):
                d = base * _power_derivative(y[ridx[r, a]], rord[r, a], 1)
                for b in range(rcnt[r]):
                    if b != a:
                        d *= _power(y[ridx[r, b]], rord[r, b])
                col = ridx[r, a]
                for i in range(n):
                    jac[i, col] += stoich[i, r] * d
    else:
        ops, args, consts, jac_tab = pg[0], pg[1], pg[2], pg[4]
        for e in range(jac_tab.shape[0]):
            jac[jac_tab[e, 0], jac_tab[e, 1]] = evaluate(
                ops, args, consts, jac_tab[e, 2], jac_tab[e, 3], y, p, x0, stack)


@numba.njit(cache=True)
def model_forcing(kind, ma, pg, y, p, x0, stack, rates, dirpos, forcing):  # pragma: no cover
    """``forcing[i, j] = d(dy_i/dt)/d theta_q`` (scaled) for each selected direction
    ``q`` with ``dirpos[q] = j >= 0``."""
    n, nq = forcing.shape
    for i in range(n):
        for j in range(nq):
            forcing[i, j] = 0.0
    if kind == 0:
        stoich, rpar = ma[0], ma[4]
        mass_action_rates(ma, y, p, rates)
        for r in range(rates.shape[0]):
            j = dirpos[rpar[r]]
            if j >= 0:
                for i in range(n):
                    forcing[i, j] += stoich[i, r] * rates[r]
    else:
        ops, args, consts, fp_tab = pg[0], pg[1], pg[2], pg[5]
        for e in range(fp_tab.shape[0]):
            j = dirpos[fp_tab[e, 1]]
            if j >= 0:
                forcing[fp_tab[e, 0], j] = evaluate(ops, args, consts, fp_tab[e, 2],
                                                    fp_tab[e, 3], y, p, x0, stack)


@numba.njit(cache=True)
def model_coupling(kind, ma, pg, y, p, x0, stack, sens, u, dirpos, out):  # pragma: no cover
    """``out[:, j] = (d/dy (J sens_j + forcing_j)) u``: the off-diagonal blocks of the
    Jacobian of the sensitivity system, applied to ``u``."""
    n, nq = out.shape
    for i in range(n):
        for j in range(nq):
            out[i, j] = 0.0
    if kind == 0:
        stoich, ridx, rord, rcnt, rpar, rfac = ma
        for r in range(rcnt.shape[0]):
            base = rfac[r] * p[rpar[r]]
            jr = dirpos[rpar[r]]
            for a in range(rcnt[r]):
                sa = ridx[r, a]
                # gradient component and second derivatives of rate r
                grad = base * _power_derivative(y[sa], rord[r, a], 1)
                for c in range(rcnt[r]):
                    if c != a:
                        grad *= _power(y[ridx[r, c]], rord[r, c])
                for b in range(rcnt[r]):
                    sb = ridx[r, b]
                    if a == b:
                        h = base * _power_derivative(y[sa], rord[r, a], 2)
                    else:
                        h = base * _power_derivative(y[sa], rord[r, a], 1) \
                            * _power_derivative(y[sb], rord[r, b], 1)
                    if h == 0.0:
                        continue
                    for c in range(rcnt[r]):
                        if c != a and c != b:
                            h *= _power(y[ridx[r, c]], rord[r, c])
                    hu = h * u[sa]
                    for j in range(nq):
                        v = hu * sens[sb, j]
                        for i in range(n):
                            out[i, j] += stoich[i, r] * v
                if jr >= 0:
                    gu = grad * u[sa]
                    for i in range(n):
                        out[i, jr] += stoich[i, r] * gu
    else:
        ops, args, consts, t_tab, jq_tab = pg[0], pg[1], pg[2], pg[6], pg[7]
        for e in range(t_tab.shape[0]):
            v = evaluate(ops, args, consts, t_tab[e, 3], t_tab[e, 4], y, p, x0, stack)
            i, l, m = t_tab[e, 0], t_tab[e, 1], t_tab[e, 2]
            vu = v * u[l]
            for j in range(nq):
                out[i, j] += vu * sens[m, j]
        for e in range(jq_tab.shape[0]):
            j = dirpos[jq_tab[e, 2]]
            if j >= 0:
                v = evaluate(ops, args, consts, jq_tab[e, 3], jq_tab[e, 4], y, p, x0, stack)
                out[jq_tab[e, 0], j] += v * u[jq_tab[e, 1]]


@numba.njit(cache=True)
def model_outputs(pg, state_index, y, p, x0, stack, out):  # pragma: no cover - compiled
    """All mechanism species: state species copied (``state_index[k]`` is the output
    column of state ``k``), algebraic species evaluated."""
    for k in range(state_index.shape[0]):
        out[state_index[k]] = y[k]
    ops, args, consts, alg_tab = pg[0], pg[1], pg[2], pg[8]
    for a in range(alg_tab.shape[0]):
        out[alg_tab[a, 0]] = evaluate(ops, args, consts, alg_tab[a, 1], alg_tab[a, 2], y, p,
                                      x0, stack)


@numba.njit(cache=True)
def model_output_sensitivities(pg, state_index, y, sens, p, x0, stack, dirpos,
                               out):  # pragma: no cover - compiled
    """Sensitivities of all mechanism species: ``out[column, j]``."""
    nq = sens.shape[1]
    for k in range(state_index.shape[0]):
        for j in range(nq):
            out[state_index[k], j] = sens[k, j]
    ops, args, consts, alg_tab, dy_tab, dq_tab = pg[0], pg[1], pg[2], pg[8], pg[9], pg[10]
    for a in range(alg_tab.shape[0]):
        for j in range(nq):
            out[alg_tab[a, 0], j] = 0.0
    for e in range(dy_tab.shape[0]):
        v = evaluate(ops, args, consts, dy_tab[e, 2], dy_tab[e, 3], y, p, x0, stack)
        col, k = alg_tab[dy_tab[e, 0], 0], dy_tab[e, 1]
        for j in range(nq):
            out[col, j] += v * sens[k, j]
    for e in range(dq_tab.shape[0]):
        j = dirpos[dq_tab[e, 1]]
        if j >= 0:
            v = evaluate(ops, args, consts, dq_tab[e, 2], dq_tab[e, 3], y, p, x0, stack)
            out[alg_tab[dq_tab[e, 0], 0], j] += v
