"""Simplification of rational expressions under a time budget.

sympy's ``simplify`` can run for minutes on the large rational functions a
steady-state derivation produces. We use the cheaper canonical steps instead:
``cancel`` (one fraction, numerator and denominator coprime polynomials; ``together``
when ``cancel`` cannot) and ``factor`` (a readable product), each under a wall-clock
budget.
When a step runs out of time the expression from the previous step is kept: the
result is always mathematically equal to the input, only less tidy.

The budget is enforced with ``SIGALRM`` in the main thread when no other interval
timer is running. Elsewhere (worker threads, a caller's own timer) a size guard
replaces it: ``factor`` is skipped on expressions with more
than :data:`SIZE_LIMIT` operations.

Examples
--------
>>> import sympy
>>> a, b = sympy.symbols("a b", positive=True)
>>> tidy(1 / (1 / a + 1 / b))
a*b/(a + b)
"""

from __future__ import annotations

import signal
import threading
from collections.abc import Callable
from contextlib import contextmanager

import sympy

#: default seconds allowed for one ``cancel`` / ``factor`` call
BUDGET = 2.0
#: operations above which ``factor`` is skipped when no timer is available
SIZE_LIMIT = 400
#: operations above which :func:`tidy` does not try ``factor`` at all (large
#: cancelled fractions rarely factor, and the attempt costs seconds)
FACTOR_LIMIT = 250
#: at most this many seconds for ``factor`` (it only makes a result easier to read)
FACTOR_BUDGET = 0.5


class BudgetExceeded(Exception):
    """A budgeted computation ran out of time (internal; callers fall back)."""


_active = threading.local()


@contextmanager
def time_budget(seconds: float):
    """Raise :class:`BudgetExceeded` inside the block after ``seconds`` of wall time.

    Only active in the main thread and when no outer budget is running (an outer
    budget covers nested calls); otherwise the block runs unbounded.
    """
    usable = (threading.current_thread() is threading.main_thread()
              and hasattr(signal, "setitimer") and not getattr(_active, "on", False)
              and signal.getitimer(signal.ITIMER_REAL)[0] == 0)  # leave a caller's timer be
    if not usable:
        yield False
        return

    def _stop(signum, frame):
        raise BudgetExceeded()

    old = signal.signal(signal.SIGALRM, _stop)
    _active.on = True
    signal.setitimer(signal.ITIMER_REAL, max(seconds, 1e-3))
    try:
        yield True
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, old)
        _active.on = False


def budgeted(fn: Callable[[sympy.Expr], sympy.Expr], expr: sympy.Expr,
             seconds: float = BUDGET) -> sympy.Expr:
    """``fn(expr)``, or ``expr`` unchanged when it takes longer than ``seconds``."""
    try:
        with time_budget(seconds) as timed:
            if not timed and sympy.count_ops(expr) > SIZE_LIMIT and fn is sympy.factor:
                return expr
            return fn(expr)
    except BudgetExceeded:
        return expr
    except (sympy.PolynomialError, NotImplementedError, ValueError, TypeError):
        # cancel/factor refuse some non-polynomial inputs; keep the input
        return expr


def tidy(expr: sympy.Expr, seconds: float = BUDGET, *, factorise: bool = True) -> sympy.Expr:
    """One fraction, numerator and denominator cancelled, factored if time allows.

    Parameters
    ----------
    expr
        Any sympy expression (rational functions benefit most).
    seconds
        Budget of the ``cancel`` step; ``factor`` gets at most :data:`FACTOR_BUDGET`.
    factorise
        Also try ``factor`` (skip it for expressions only a machine reads). It is
        not tried on fractions with more than :data:`FACTOR_LIMIT` operations.
    """
    out = budgeted(sympy.cancel, expr, seconds)
    if out is expr:  # cancel refused (non-polynomial parts) or ran out of time
        out = sympy.together(expr)
    if factorise and sympy.count_ops(out) <= FACTOR_LIMIT:
        out = budgeted(sympy.factor, out, min(seconds, FACTOR_BUDGET))
    return out


def readable(expr: sympy.Expr) -> sympy.Expr:
    """``factor`` a small, already cancelled expression (within :data:`FACTOR_BUDGET`);
    larger ones are returned as they are."""
    if sympy.count_ops(expr) > FACTOR_LIMIT:
        return expr
    return budgeted(sympy.factor, expr, FACTOR_BUDGET)
