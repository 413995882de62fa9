"""Sympy expressions as opcode programs, evaluated by one compiled stack machine.

Rate laws that are not plain mass action (empirical laws, the rational right-hand
sides of steady-state and pre-equilibrium models) must run without Python in the
inner loop, yet a new model must not cost a new numba compile. Each expression is
therefore translated once, in Python, into a short postfix program (an array of
opcodes with integer arguments and a table of floating-point constants), and a
single numba function, compiled once and cached on disk, evaluates any program.
Translating a model takes milliseconds; the evaluator costs a few nanoseconds per
opcode.

Supported: numbers, state concentrations, parameters, initial concentrations
``X__0``, ``+``, ``*``, powers (integer powers by repeated multiplication), ``exp``,
``log``, ``Abs`` and ``sign``. Anything else (``Piecewise``, ``Max``...) is refused
with a :class:`mechfit.errors.MechanismError` that names the expression.

Examples
--------
>>> import numpy as np, sympy
>>> a, k = sympy.Symbol("A", positive=True), sympy.Symbol("k", positive=True)
>>> builder = ProgramBuilder(state={"A": 0}, parameters={"k": 0}, initial={})
>>> start, end = builder.add(k * a**2 + sympy.exp(-a))
>>> ops, args, consts = builder.arrays()
>>> stack = np.zeros(builder.max_depth)
>>> value = evaluate(ops, args, consts, start, end, np.array([2.0]), np.array([3.0]),
...                  np.zeros(0), stack)
>>> bool(abs(value - (12.0 + np.exp(-2.0))) < 1e-12)
True
"""

from __future__ import annotations

from collections.abc import Mapping

import numba
import numpy as np
import sympy

from mechfit.errors import MechanismError
from mechfit.mechanism.symbols import INITIAL_SUFFIX

# opcodes ----------------------------------------------------------------------
OP_CONST = 0     # push consts[arg]
OP_STATE = 1     # push y[arg]
OP_PARAM = 2     # push p[arg]
OP_INITIAL = 3   # push x0[arg]
OP_ADD = 4       # pop arg values, push their sum
OP_MUL = 5       # pop arg values, push their product
OP_POW = 6       # pop exponent and base, push base**exponent
OP_POWI = 7      # pop base, push base**arg (arg an integer, may be negative)
OP_EXP = 8
OP_LOG = 9
OP_ABS = 10
OP_SIGN = 11


class ProgramBuilder:
    """Collects the programs of many expressions into shared opcode arrays.

    Parameters
    ----------
    state
        Species name -> index in the state vector ``y``.
    parameters
        Parameter name -> index in the parameter vector ``p``.
    initial
        Species name -> index in the initial-concentration vector ``x0`` (symbols
        ``X__0``).
    """

    def __init__(self, state: Mapping[str, int], parameters: Mapping[str, int],
                 initial: Mapping[str, int]) -> None:
        self.state = dict(state)
        self.parameters = dict(parameters)
        self.initial = dict(initial)
        self.ops: list[int] = []
        self.args: list[int] = []
        self.consts: list[float] = []
        self._const_index: dict[float, int] = {}
        self.max_depth = 1

    def add(self, expr: sympy.Expr) -> tuple[int, int]:
        """Append the program of ``expr``; returns its ``(start, end)`` slice."""
        start = len(self.ops)
        depth = self._emit(expr)
        self.max_depth = max(self.max_depth, depth)
        return start, len(self.ops)

    def arrays(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """``(ops, args, consts)`` as numpy arrays for :func:`evaluate`."""
        ops = np.asarray(self.ops, dtype=np.int64)
        args = np.asarray(self.args, dtype=np.int64)
        consts = np.asarray(self.consts if self.consts else [0.0], dtype=np.float64)
        return ops, args, consts

    # ---- translation --------------------------------------------------------
    def _push(self, op: int, arg: int = 0) -> None:
        self.ops.append(op)
        self.args.append(arg)

    def _constant(self, value: float) -> int:
        if value not in self._const_index:
            self._const_index[value] = len(self.consts)
            self.consts.append(value)
        return self._const_index[value]

    def _emit(self, expr) -> int:
        """Emit ``expr`` in postfix order; returns the stack depth it needs."""
        if isinstance(expr, int | float):
            self._push(OP_CONST, self._constant(float(expr)))
            return 1
        if expr.is_Number or expr.is_NumberSymbol:
            self._push(OP_CONST, self._constant(float(expr)))
            return 1
        if expr.is_Symbol:
            self._symbol(expr)
            return 1
        if expr.is_Add or expr.is_Mul:
            depth = 0
            for i, arg in enumerate(expr.args):
                depth = max(depth, i + self._emit(arg))
            self._push(OP_ADD if expr.is_Add else OP_MUL, len(expr.args))
            return depth
        if expr.is_Pow:
            base, exponent = expr.args
            if exponent.is_Integer:
                depth = self._emit(base)
                self._push(OP_POWI, int(exponent))
                return depth
            depth = max(self._emit(base), 1 + self._emit(exponent))
            self._push(OP_POW)
            return depth
        if isinstance(expr, sympy.exp):
            depth = self._emit(expr.args[0])
            self._push(OP_EXP)
            return depth
        if isinstance(expr, sympy.log) and len(expr.args) == 1:
            depth = self._emit(expr.args[0])
            self._push(OP_LOG)
            return depth
        if isinstance(expr, sympy.Abs):
            depth = self._emit(expr.args[0])
            self._push(OP_ABS)
            return depth
        if isinstance(expr, sympy.sign):
            depth = self._emit(expr.args[0])
            self._push(OP_SIGN)
            return depth
        raise MechanismError(
            f"the simulator cannot evaluate {type(expr).__name__} in the expression "
            f"{expr}; rate laws may use +, -, *, /, powers, exp, ln, sqrt and abs")

    def _symbol(self, sym: sympy.Symbol) -> None:
        name = sym.name
        if name.endswith(INITIAL_SUFFIX) and name[: -len(INITIAL_SUFFIX)] in self.initial:
            self._push(OP_INITIAL, self.initial[name[: -len(INITIAL_SUFFIX)]])
        elif name in self.state and sym.is_positive:
            self._push(OP_STATE, self.state[name])
        elif name in self.parameters:
            self._push(OP_PARAM, self.parameters[name])
        elif name in self.state:
            self._push(OP_STATE, self.state[name])
        else:
            known = sorted(self.state) + sorted(self.parameters)
            raise MechanismError(
                f"the name {name!r} in a model expression is neither a state species, a "
                f"parameter nor an initial concentration X{INITIAL_SUFFIX}; known names: "
                + ", ".join(known))


@numba.njit(cache=True)
def evaluate(ops, args, consts, start, end, y, p, x0, stack):  # pragma: no cover - compiled
    """Run the program ``ops[start:end]`` on state ``y``, parameters ``p`` and initial
    concentrations ``x0``; ``stack`` is scratch space of at least the program's depth."""
    sp = 0
    for pc in range(start, end):
        op = ops[pc]
        a = args[pc]
        if op == 1:
            stack[sp] = y[a]
            sp += 1
        elif op == 2:
            stack[sp] = p[a]
            sp += 1
        elif op == 0:
            stack[sp] = consts[a]
            sp += 1
        elif op == 5:
            v = stack[sp - 1]
            for i in range(2, a + 1):
                v *= stack[sp - i]
            sp -= a
            stack[sp] = v
            sp += 1
        elif op == 4:
            v = stack[sp - 1]
            for i in range(2, a + 1):
                v += stack[sp - i]
            sp -= a
            stack[sp] = v
            sp += 1
        elif op == 7:
            b = stack[sp - 1]
            n = a if a >= 0 else -a
            v = 1.0
            for _ in range(n):
                v *= b
            stack[sp - 1] = v if a >= 0 else 1.0 / v
        elif op == 3:
            stack[sp] = x0[a]
            sp += 1
        elif op == 6:
            e = stack[sp - 1]
            b = stack[sp - 2]
            sp -= 1
            if b > 0.0:
                stack[sp - 1] = np.exp(e * np.log(b))
            elif b == 0.0 and e > 0.0:
                stack[sp - 1] = 0.0
            else:
                stack[sp - 1] = np.nan
        elif op == 8:
            stack[sp - 1] = np.exp(stack[sp - 1])
        elif op == 9:
            b = stack[sp - 1]
            stack[sp - 1] = np.log(b) if b > 0.0 else np.nan
        elif op == 10:
            stack[sp - 1] = abs(stack[sp - 1])
        elif op == 11:
            b = stack[sp - 1]
            stack[sp - 1] = 1.0 if b > 0.0 else (-1.0 if b < 0.0 else 0.0)
    return stack[0]
