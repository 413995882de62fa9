"""Variable-order backward differentiation (NDF/BDF) for batches of mass-action systems.

The multistep method of orders 1 to 5 in the quasi-constant step-size form of
L. F. Shampine and M. W. Reichelt, "The MATLAB ODE Suite", SIAM J. Sci. Comput.
18 (1997) 1-22 (numerical differentiation formulas with the kappa coefficients
given there; the same scheme as ``scipy.integrate.BDF``), with step and order
selection from the estimated local errors of orders k-1, k and k+1 (E. Hairer and
G. Wanner, Solving ODEs II, 1996, section III.7 for the backward difference
form). A simplified Newton iteration reuses the Jacobian across steps (refreshed
only when the iteration fails to converge; the LU factors when the step changes),
and stops with the convergence test of CVODE (A. C. Hindmarsh et al., ACM TOMS 31
(2005) 363-396): so a step costs one or two right-hand sides and triangular
solves, which is what makes long, tightly toleranced, stiff runs cheap.

Linear invariants are kept: every Newton correction solves with ``I - c J`` where
``w^T J = 0`` and ``w^T f = 0`` for a conservation law ``w``, so ``w^T y`` never
changes beyond round-off.
"""

from __future__ import annotations

import numba
import numpy as np

from mechfit.simulate.integrator import (
    STATUS_NOT_FINITE,
    STATUS_STEP_CAP,
    STATUS_STEP_TOO_SMALL,
    lu_factor,
    lu_solve,
)
from mechfit.simulate.mass_action import _jacobian, _rhs

MAX_ORDER = 5
NEWTON_MAXITER = 4


@numba.njit(cache=True)
def _step_matrix(order, factor, m):  # pragma: no cover - compiled
    """``R(order, factor)`` of Shampine and Reichelt (1997), section 2.3, into ``m``."""
    for j in range(order + 1):
        m[0, j] = 1.0
    for i in range(1, order + 1):
        m[i, 0] = 0.0
        for j in range(1, order + 1):
            m[i, j] = m[i - 1, j] * (i - 1 - factor * j) / i


@numba.njit(cache=True)
def _change_differences(d, order, factor, work_r, unit, tmp):  # pragma: no cover
    """Rescale the backward differences ``d[:order+1]`` to a step ``factor`` times
    the old one: ``d <- (R U)^T d`` with ``U = R(order, 1)`` precomputed in ``unit``."""
    _step_matrix(order, factor, work_r)
    n = d.shape[1]
    for a in range(order + 1):
        for i in range(n):
            tmp[a, i] = 0.0
    for a in range(order + 1):
        for b in range(order + 1):
            ru = 0.0
            for c in range(order + 1):
                ru += work_r[b, c] * unit[order, c, a]
            if ru != 0.0:
                for i in range(n):
                    tmp[a, i] += ru * d[b, i]
    for a in range(order + 1):
        for i in range(n):
            d[a, i] = tmp[a, i]


@numba.njit(cache=True)
def solve_mass_action_bdf(stoich, ridx, rord, rcnt, rpar, rfac, times, counts, y0, params,
                          rtol, atol, max_steps, out, status, steps,
                          t_end_reached):  # pragma: no cover - compiled
    """Integrate a batch of mass-action systems with the variable-order NDF method.

    Arguments as :func:`mechfit.simulate.mass_action.solve_mass_action_batch`.
    """
    n_sys, n = y0.shape
    eps = 2.220446049250313e-16
    gamma = np.zeros(MAX_ORDER + 1)
    alpha = np.zeros(MAX_ORDER + 1)
    error_const = np.zeros(MAX_ORDER + 1)
    acc = 0.0
    kappas = (0.0, -0.1850, -1.0 / 9.0, -0.0823, -0.0415, 0.0)
    for k in range(MAX_ORDER + 1):
        if k > 0:
            acc += 1.0 / k
        gamma[k] = acc
        alpha[k] = (1.0 - kappas[k]) * acc
        error_const[k] = kappas[k] * acc + 1.0 / (k + 1)
    rates = np.zeros(max(rcnt.shape[0], 1))
    dd = np.zeros((MAX_ORDER + 3, n))
    y = np.zeros(n)
    ypred = np.zeros(n)
    psi = np.zeros(n)
    corr = np.zeros(n)
    f = np.zeros(n)
    scale = np.zeros(n)
    rhsv = np.zeros((1, n))
    jac = np.zeros((n, n))
    emat = np.zeros((n, n))
    piv = np.zeros(n, dtype=np.int64)
    work_r = np.zeros((MAX_ORDER + 1, MAX_ORDER + 1))
    unit = np.zeros((MAX_ORDER + 1, MAX_ORDER + 1, MAX_ORDER + 1))
    for k in range(1, MAX_ORDER + 1):
        _step_matrix(k, 1.0, unit[k])
    work_d = np.zeros((MAX_ORDER + 1, n))
    for s in range(n_sys):
        if status[s] != 0:
            continue
        p = params[s]
        rt = rtol[s]
        newton_tol = max(10.0 * eps / rt, min(0.03, rt ** 0.5))
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
        # initial step for order 1 (Hairer, Norsett & Wanner, Solving ODEs I, II.4)
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
            ypred[i] = y[i] + h * f[i]
        _rhs(stoich, ridx, rord, rcnt, rpar, rfac, ypred, p, rates, psi)
        d2 = 0.0
        for i in range(n):
            sc = atol[s, i] + rt * abs(y[i])
            d2 += ((psi[i] - f[i]) / sc) ** 2
        d2 = np.sqrt(d2 / n) / h
        big = max(d1, d2)
        h1 = (0.01 / big) ** 0.5 if (np.isfinite(big) and big > 1e-15) else \
            max(1e-6 * t_end, h * 1e-3)
        h = min(100.0 * h, h1, t_end)
        order = 1
        n_equal = 0
        for a in range(MAX_ORDER + 3):
            for i in range(n):
                dd[a, i] = 0.0
        for i in range(n):
            dd[0, i] = y[i]
            dd[1, i] = f[i] * h
        _jacobian(stoich, ridx, rord, rcnt, rpar, rfac, y, p, jac)
        lu_valid = False
        crate = 1.0
        taken = 0
        while True:
            if taken >= max_steps:
                status[s] = STATUS_STEP_CAP
                break
            if t + h > t_end:
                _change_differences(dd, order, (t_end - t) / h, work_r, unit, work_d)
                h = t_end - t
                n_equal = 0
                lu_valid = False
            if not (h > 0.0) or h < 10.0 * eps * abs(t):
                status[s] = STATUS_STEP_TOO_SMALL
                break
            taken += 1
            t_new = t + h
            for i in range(n):
                v = 0.0
                for a in range(order + 1):
                    v += dd[a, i]
                ypred[i] = v
                scale[i] = 1.0 / (atol[s, i] + rt * abs(v))
                w = 0.0
                for a in range(1, order + 1):
                    w += gamma[a] * dd[a, i]
                psi[i] = w / alpha[order]
            c = h / alpha[order]
            current_jac = False
            converged = False
            n_iter = 0
            while True:
                if not lu_valid:
                    for i in range(n):
                        for j in range(n):
                            emat[i, j] = -c * jac[i, j]
                        emat[i, i] += 1.0
                    lu_valid = lu_factor(emat, piv)
                    crate = 1.0
                if lu_valid:
                    # Newton test of CVODE (Hindmarsh et al., ACM TOMS 31 (2005) 363):
                    # the correction, damped by the contraction rate seen so far, must be
                    # a tenth of what the local error test allows
                    tol_k = max(newton_tol, 0.02 / error_const[order])
                    for i in range(n):
                        y[i] = ypred[i]
                        corr[i] = 0.0
                    norm_old = -1.0
                    for it in range(NEWTON_MAXITER):
                        n_iter = it + 1
                        _rhs(stoich, ridx, rord, rcnt, rpar, rfac, y, p, rates, f)
                        bad = False
                        for i in range(n):
                            if not np.isfinite(f[i]):
                                bad = True
                            rhsv[0, i] = c * f[i] - psi[i] - corr[i]
                        if bad:
                            break
                        lu_solve(emat, piv, rhsv, 0)
                        dy_norm = 0.0
                        for i in range(n):
                            dy_norm += (rhsv[0, i] * scale[i]) ** 2
                        dy_norm = np.sqrt(dy_norm / n)
                        if norm_old > 0.0:
                            if dy_norm > 2.0 * norm_old:
                                break
                            crate = max(0.3 * crate, dy_norm / norm_old)
                        for i in range(n):
                            y[i] += rhsv[0, i]
                            corr[i] += rhsv[0, i]
                        if dy_norm * min(1.0, crate) <= tol_k:
                            converged = True
                            break
                        norm_old = dy_norm
                if converged or current_jac:
                    break
                _jacobian(stoich, ridx, rord, rcnt, rpar, rfac, ypred, p, jac)
                current_jac = True
                lu_valid = False
            if not converged:
                _change_differences(dd, order, 0.5, work_r, unit, work_d)
                h *= 0.5
                n_equal = 0
                lu_valid = False
                continue
            safety = 0.9 * (2 * NEWTON_MAXITER + 1) / (2 * NEWTON_MAXITER + n_iter)
            err = 0.0
            negative = False
            for i in range(n):
                sc = atol[s, i] + rt * abs(y[i])
                scale[i] = 1.0 / sc
                err += (error_const[order] * corr[i] * scale[i]) ** 2
                if y[i] < -atol[s, i]:
                    negative = True
            err = np.sqrt(err / n)
            if err > 1.0 or negative:
                factor = max(0.2, safety * err ** (-1.0 / (order + 1))) if err > 1.0 else 0.5
                _change_differences(dd, order, factor, work_r, unit, work_d)
                h *= factor
                n_equal = 0
                lu_valid = False
                continue
            # accepted
            n_equal += 1
            for i in range(n):
                dd[order + 2, i] = corr[i] - dd[order + 1, i]
                dd[order + 1, i] = corr[i]
            for a in range(order, -1, -1):
                for i in range(n):
                    dd[a, i] += dd[a + 1, i]
            while iout < count and times[s, iout] <= t_new:
                tout = times[s, iout]
                for i in range(n):
                    v = dd[0, i]
                    prod = 1.0
                    for a in range(order):
                        prod *= (tout - (t_new - h * a)) / (h * (1 + a))
                        v += dd[a + 1, i] * prod
                    out[s, iout, i] = v if v > 0.0 else 0.0
                iout += 1
            t = t_new
            if iout >= count:
                break
            if n_equal < order + 1:
                continue
            err_m = np.inf
            if order > 1:
                err_m = 0.0
                for i in range(n):
                    err_m += (error_const[order - 1] * dd[order, i] * scale[i]) ** 2
                err_m = np.sqrt(err_m / n)
            err_p = np.inf
            if order < MAX_ORDER:
                err_p = 0.0
                for i in range(n):
                    err_p += (error_const[order + 1] * dd[order + 2, i] * scale[i]) ** 2
                err_p = np.sqrt(err_p / n)
            f_m = err_m ** (-1.0 / order) if err_m > 0.0 else np.inf
            f_0 = err ** (-1.0 / (order + 1)) if err > 0.0 else np.inf
            f_p = err_p ** (-1.0 / (order + 2)) if err_p > 0.0 else np.inf
            # the order whose error estimate allows the largest step (first on ties)
            best = f_m
            change = -1
            if f_0 > best:
                best = f_0
                change = 0
            if f_p > best:
                best = f_p
                change = 1
            order += change
            factor = min(10.0, safety * best)
            n_equal = 0
            if change == 0 and 1.0 <= factor < 1.2:
                # a small increase is not worth new differences and a new LU (CVODE
                # keeps the step below a growth threshold, too)
                continue
            _change_differences(dd, order, factor, work_r, unit, work_d)
            h *= factor
            lu_valid = False
        steps[s] = taken
        t_end_reached[s] = t
