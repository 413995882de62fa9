"""Sympy expressions as opcode programs, evaluated by one compiled stack machine.

Rate laws that are not plain mass action (empirical laws, the rational right-hand
sides of steady-state and pre-equilibrium models) must run without Python in the
inner loop, yet a new model must not cost new machine code. Each expression is
therefore translated once, in Python, into a short postfix program (an array of
opcodes with integer arguments and a table of floating-point constants), and a
single C function, compiled when mechfit is installed (``mf_evaluate`` in
``native/program.c``), evaluates any program. Translating a model takes
milliseconds; the evaluator costs a few nanoseconds per opcode. :func:`evaluate`
calls it from Python (for tests and examples; the integrators call it directly).

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

import numpy as np
import sympy

from mechfit.errors import MechanismError
from mechfit.mechanism.symbols import INITIAL_SUFFIX
from mechfit.simulate import compiled

# opcodes (the same numbers as MF_OP_* in native/kinetics.h) -------------------
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


def evaluate(ops: np.ndarray, args: np.ndarray, consts: np.ndarray, start: int, end: int,
             y: np.ndarray, p: np.ndarray, x0: np.ndarray, stack: np.ndarray) -> float:
    """Run the program ``ops[start:end]`` on state ``y``, parameters ``p`` and initial
    concentrations ``x0`` with the compiled stack machine.

    Parameters
    ----------
    ops, args, consts
        The arrays of :meth:`ProgramBuilder.arrays` (int64, int64, float64).
    start, end
        The slice returned by :meth:`ProgramBuilder.add`.
    y, p, x0
        float64 vectors the program indexes.
    stack
        float64 scratch space of at least :attr:`ProgramBuilder.max_depth` entries.

    Returns
    -------
    float
        The value of the expression.

    Raises
    ------
    SimulationInputError
        When an array has the wrong type or the program does not fit the vectors
        (an index out of range, or a stack too small), before any evaluation.
    """
    f64, i64 = np.float64, np.int64
    pointers = [compiled.pointer(ops, "ops", i64, (None,)),
                compiled.pointer(args, "args", i64, (np.shape(ops)[0],)),
                compiled.pointer(consts, "consts", f64, (None,))]
    vectors = [compiled.pointer(v, name, f64, (None,))
               for v, name in ((y, "y"), (p, "p"), (x0, "x0"))]
    work = compiled.pointer(stack, "stack", f64, (None,), writeable=True)
    lib = compiled.library()
    if not lib.mf_check_program(pointers[0], pointers[1], ops.shape[0], consts.shape[0],
                                y.shape[0], p.shape[0], x0.shape[0], stack.shape[0],
                                int(start), int(end)):
        raise compiled.SimulationInputError(
            f"the program ops[{start}:{end}] does not fit: an opcode or index out of range "
            f"for y ({y.shape[0]}), p ({p.shape[0]}), x0 ({x0.shape[0]}) or consts "
            f"({consts.shape[0]}), or a stack of {stack.shape[0]} entries is too small")
    return float(lib.mf_evaluate(*pointers, int(start), int(end), *vectors, work))
