"""The numeric tables that drive the compiled kernels for any kinetic model.

The right-hand side, Jacobian and sensitivity terms are evaluated by C code compiled
once, when mechfit is installed (``native/mass_action.c``, ``native/program.c``);
a model is only tables for it, so a new mechanism never costs new machine code.
Two kinds of tables:

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

import numpy as np
import sympy

from mechfit.derive.model import KineticModel
from mechfit.errors import MechanismError
from mechfit.mechanism import symbols
from mechfit.simulate.program import ProgramBuilder

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
        tables = ModelTables(KIND_MASS_ACTION, len(model.state), len(model.parameters),
                             n_species, mass_action_tables(model), _empty_program(), 1,
                             log_scale, True)
    else:
        program, depth = program_tables(model, log_scale, sensitivities=sensitivities)
        tables = ModelTables(KIND_PROGRAM, len(model.state), len(model.parameters),
                             n_species, _empty_mass_action(), program, depth, log_scale,
                             sensitivities)
    # read-only: the compiled side keeps pointers into these arrays
    for array in (*tables.mass_action, *tables.program, tables.log_scale):
        array.flags.writeable = False
    return tables


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
