"""The fast path for plain mass action: one compiled solver driven by matrices.

A plain mass-action model is fully described by its stoichiometric matrix ``N``
(species x reactions), its reactant-order table and, per reaction, which rate
constant (times which statistical factor) it uses. :func:`solve_mass_action_batch`
takes exactly these arrays, so every mass-action mechanism runs through the same
machine code: no compile per mechanism, and no per-call overhead of the general
kernel (tuples of tables, opcode programs, sensitivity blocks). It implements the
same RODAS4 step, error control, step cap and failure codes as
:func:`mechfit.simulate.integrator.solve_batch`, which remains the path for other
models and for sensitivities; the tests check the two agree.
"""

from __future__ import annotations

import numba
import numpy as np

from mechfit.simulate.integrator import (
    A21,
    A31,
    A32,
    A41,
    A42,
    A43,
    A51,
    A52,
    A53,
    A54,
    C21,
    C31,
    C32,
    C41,
    C42,
    C43,
    C51,
    C52,
    C53,
    C54,
    C61,
    C62,
    C63,
    C64,
    C65,
    D21,
    D22,
    D23,
    D24,
    D25,
    D31,
    D32,
    D33,
    D34,
    D35,
    GAMMA,
    STATUS_NOT_FINITE,
    STATUS_STEP_CAP,
    STATUS_STEP_TOO_SMALL,
    lu_factor,
    lu_solve,
)


@numba.njit(cache=True, inline="always")
def _rhs(stoich, ridx, rord, rcnt, rpar, rfac, y, p, rates, out):  # pragma: no cover
    n_r = rcnt.shape[0]
    for r in range(n_r):
        v = rfac[r] * p[rpar[r]]
        for a in range(rcnt[r]):
            b = y[ridx[r, a]]
            for _ in range(rord[r, a]):
                v *= b
        rates[r] = v
    for i in range(out.shape[0]):
        s = 0.0
        for r in range(n_r):
            s += stoich[i, r] * rates[r]
        out[i] = s


@numba.njit(cache=True, inline="always")
def _jacobian(stoich, ridx, rord, rcnt, rpar, rfac, y, p, jac):  # pragma: no cover
    n = jac.shape[0]
    for i in range(n):
        for j in range(n):
            jac[i, j] = 0.0
    for r in range(rcnt.shape[0]):
        base = rfac[r] * p[rpar[r]]
        for a in range(rcnt[r]):
            o = rord[r, a]
            d = base * o
            b = y[ridx[r, a]]
            for _ in range(o - 1):
                d *= b
            for c in range(rcnt[r]):
                if c != a:
                    bc = y[ridx[r, c]]
                    for _ in range(rord[r, c]):
                        d *= bc
            col = ridx[r, a]
            for i in range(n):
                jac[i, col] += stoich[i, r] * d


@numba.njit(cache=True)
def solve_mass_action_batch(stoich, ridx, rord, rcnt, rpar, rfac, times, counts, y0, params,
                            rtol, atol, max_steps, out, status, steps,
                            t_end_reached):  # pragma: no cover - compiled
    """Integrate a batch of mass-action systems (all species are state).

    Arguments as :func:`mechfit.simulate.integrator.solve_batch` without the
    program, sensitivity and algebraic-output arrays; ``out`` is ``(systems, T,
    species)`` pre-filled with NaN.
    """
    n_sys, n = y0.shape
    n_r = rcnt.shape[0]
    rates = np.zeros(max(n_r, 1))
    y = np.zeros(n)
    ynew = np.zeros(n)
    ystage = np.zeros(n)
    f = np.zeros(n)
    fstage = np.zeros(n)
    k = np.zeros((6, n))
    jac = np.zeros((n, n))
    emat = np.zeros((n, n))
    piv = np.zeros(n, dtype=np.int64)
    amat = np.array([
        [0.0, 0.0, 0.0, 0.0, 0.0],
        [A21, 0.0, 0.0, 0.0, 0.0],
        [A31, A32, 0.0, 0.0, 0.0],
        [A41, A42, A43, 0.0, 0.0],
        [A51, A52, A53, A54, 0.0],
        [A51, A52, A53, A54, 1.0],
    ])
    cmat = np.array([
        [0.0, 0.0, 0.0, 0.0, 0.0],
        [C21, 0.0, 0.0, 0.0, 0.0],
        [C31, C32, 0.0, 0.0, 0.0],
        [C41, C42, C43, 0.0, 0.0],
        [C51, C52, C53, C54, 0.0],
        [C61, C62, C63, C64, C65],
    ])
    chmat = np.zeros((6, 5))
    dmat = np.array([[D21, D22, D23, D24, D25], [D31, D32, D33, D34, D35]])
    for s in range(n_sys):
        if status[s] != 0:
            continue
        p = params[s]
        rt = rtol[s]
        for i in range(n):
            y[i] = y0[s, i]
        count = counts[s]
        iout = 0
        t = 0.0
        while iout < count and times[s, iout] <= 0.0:
            for i in range(n):
                out[s, iout, i] = y[i]
            iout += 1
        if iout >= count:
            continue
        t_end = times[s, count - 1]
        _rhs(stoich, ridx, rord, rcnt, rpar, rfac, y, p, rates, f)
        finite = True
        for i in range(n):
            if not np.isfinite(f[i]):
                finite = False
        if not finite:
            status[s] = STATUS_NOT_FINITE
            continue
        # initial step (Hairer, Norsett & Wanner, Solving ODEs I, section II.4)
        d0 = 0.0
        d1 = 0.0
        for i in range(n):
            sc = atol[s, i] + rt * abs(y[i])
            d0 += (y[i] / sc) ** 2
            d1 += (f[i] / sc) ** 2
        d0 = np.sqrt(d0 / n)
        d1 = np.sqrt(d1 / n)
        h = 1e-6 * t_end if (d0 < 1e-5 or d1 < 1e-5) else 0.01 * d0 / d1
        for i in range(n):
            ystage[i] = y[i] + h * f[i]
        _rhs(stoich, ridx, rord, rcnt, rpar, rfac, ystage, p, rates, fstage)
        d2 = 0.0
        for i in range(n):
            sc = atol[s, i] + rt * abs(y[i])
            d2 += ((fstage[i] - f[i]) / sc) ** 2
        d2 = np.sqrt(d2 / n) / h
        big = max(d1, d2)
        h1 = (0.01 / big) ** 0.2 if (np.isfinite(big) and big > 1e-15) else \
            max(1e-6 * t_end, h * 1e-3)
        h = min(100.0 * h, h1, t_end)
        rejected = False
        taken = 0
        while True:
            if taken >= max_steps:
                status[s] = STATUS_STEP_CAP
                break
            if t + 1.01 * h >= t_end:
                h = t_end - t
            if not (h > 0.0) or t + h == t:
                status[s] = STATUS_STEP_TOO_SMALL
                break
            taken += 1
            _jacobian(stoich, ridx, rord, rcnt, rpar, rfac, y, p, jac)
            fac = 1.0 / (h * GAMMA)
            for i in range(n):
                for j in range(n):
                    emat[i, j] = -jac[i, j]
                emat[i, i] += fac
            if not lu_factor(emat, piv):
                h *= 0.25
                rejected = True
                continue
            for st in range(6):
                for m in range(st):
                    chmat[st, m] = cmat[st, m] / h
            finite = True
            for st in range(6):
                if st == 0:
                    for i in range(n):
                        k[0, i] = f[i]
                else:
                    for i in range(n):
                        v = y[i]
                        for m in range(st):
                            v += amat[st, m] * k[m, i]
                        ystage[i] = v
                    _rhs(stoich, ridx, rord, rcnt, rpar, rfac, ystage, p, rates, fstage)
                    for i in range(n):
                        v = fstage[i]
                        for m in range(st):
                            v += chmat[st, m] * k[m, i]
                        k[st, i] = v
                lu_solve(emat, piv, k, st)
                for i in range(n):
                    if not np.isfinite(k[st, i]):
                        finite = False
                if not finite:
                    break
            if not finite:
                h *= 0.25
                rejected = True
                continue
            err = 0.0
            negative = False
            for i in range(n):
                ynew[i] = ystage[i] + k[5, i]
                sc = atol[s, i] + rt * max(abs(y[i]), abs(ynew[i]))
                err += (k[5, i] / sc) ** 2
                if ynew[i] < -atol[s, i]:
                    negative = True
            err = np.sqrt(err / n)
            if not np.isfinite(err):
                h *= 0.25
                rejected = True
                continue
            factor = min(5.0, max(0.2, 0.9 * err ** -0.25)) if err > 0.0 else 5.0
            if err > 1.0 or negative:
                h *= min(factor, 0.5)
                rejected = True
                continue
            t_new = t + h if t + h < t_end else t_end
            while iout < count and times[s, iout] <= t_new:
                theta = min((times[s, iout] - t) / h, 1.0)
                th1 = 1.0 - theta
                for i in range(n):
                    c3 = 0.0
                    c4 = 0.0
                    for m in range(5):
                        c3 += dmat[0, m] * k[m, i]
                        c4 += dmat[1, m] * k[m, i]
                    v = y[i] * th1 + theta * (ynew[i] + th1 * (c3 + theta * c4))
                    out[s, iout, i] = v if v > 0.0 else 0.0
                iout += 1
            t = t_new
            for i in range(n):
                y[i] = ynew[i]
            if iout >= count:
                break
            _rhs(stoich, ridx, rord, rcnt, rpar, rfac, y, p, rates, f)
            for i in range(n):
                if not np.isfinite(f[i]):
                    finite = False
            if not finite:
                status[s] = STATUS_NOT_FINITE
                break
            if rejected:
                factor = min(factor, 1.0)
            rejected = False
            h *= factor
        steps[s] = taken
        t_end_reached[s] = t
