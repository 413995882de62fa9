"""A batched, compiled Rosenbrock integrator for stiff chemical kinetics.

The method is RODAS4 of Hairer and Wanner (E. Hairer and G. Wanner, *Solving
Ordinary Differential Equations II: Stiff and Differential-Algebraic Problems*,
2nd ed., Springer 1996, section IV.7, with the coefficients of their code RODAS):
a six-stage, L-stable, stiffly accurate Rosenbrock method of order 4 with
an embedded order-3 solution for error control and a continuous extension of order
3 for output between steps. Each step needs one exact Jacobian and one LU
factorisation, no Newton iteration; linear invariants (conservation laws) are kept
to round-off because every stage is a linear combination of right-hand sides and
solves with the same matrix.

Every system of a batch is integrated on its own: its own step sizes, its own error
norm (a weighted RMS norm over its components only), its own step count. Nothing
raises: each system ends with a status code (see :data:`REASONS`).
"""

from __future__ import annotations

import numba
import numpy as np

from mechfit.simulate.kernel import (
    model_coupling,
    model_forcing,
    model_jacobian,
    model_output_sensitivities,
    model_outputs,
    model_rhs,
)

STATUS_OK = 0
STATUS_STEP_CAP = 1
STATUS_STEP_TOO_SMALL = 2
STATUS_NOT_FINITE = 3
STATUS_INVALID_INPUT = 4

#: status code -> the reason reported for a system
REASONS = {
    STATUS_OK: "",
    STATUS_STEP_CAP: "step cap reached before the last output time (raise max_steps, or "
                     "the parameters make the system extremely stiff or explosive)",
    STATUS_STEP_TOO_SMALL: "step size fell below round-off (a singularity or blow-up)",
    STATUS_NOT_FINITE: "rates not finite (overflow, or a law undefined at these values)",
    STATUS_INVALID_INPUT: "invalid input",
}

# RODAS4 coefficients (Hairer & Wanner 1996, code RODAS, METH=1), in the
# transformed form with stage increments u_i:
#   (1/(h*gamma) I - J) u_i = f(y + sum_j a_ij u_j) + sum_j (c_ij / h) u_j
GAMMA = 0.25
A21 = 1.544
A31, A32 = 0.9466785280815826, 0.2557011698983284
A41, A42, A43 = 3.314825187068521, 2.896124015972201, 0.9986419139977817
A51, A52, A53, A54 = 1.221224509226641, 6.019134481288629, 12.53708332932087, -0.6878860361058950
C21 = -5.6688
C31, C32 = -2.430093356833875, -0.2063599157091915
C41, C42, C43 = -0.1073529058151375, -9.594562251023355, -20.47028614809616
C51, C52, C53, C54 = 7.496443313967647, -10.24680431464352, -33.99990352819905, 11.70890893206160
C61, C62, C63 = 8.083246795921522, -7.981132988064893, -31.52159432874371
C64, C65 = 16.31930543123136, -6.058818238834054
D21, D22, D23 = 10.12623508344586, -7.487995877610167, -34.80091861555747
D24, D25 = -7.992771707568823, 1.025137723295662
D31, D32, D33 = -0.6762803392801253, 6.087714651680015, 16.43084320892478
D34, D35 = 24.76722511418386, -6.594389125716872


@numba.njit(cache=True, inline="always")
def lu_factor(a, piv):  # pragma: no cover - compiled
    """In-place LU with partial pivoting; returns False when ``a`` is singular."""
    n = a.shape[0]
    for k in range(n):
        big = abs(a[k, k])
        row = k
        for i in range(k + 1, n):
            if abs(a[i, k]) > big:
                big = abs(a[i, k])
                row = i
        if big == 0.0 or not np.isfinite(big):
            return False
        piv[k] = row
        if row != k:
            for j in range(n):
                tmp = a[k, j]
                a[k, j] = a[row, j]
                a[row, j] = tmp
        inv = 1.0 / a[k, k]
        for i in range(k + 1, n):
            a[i, k] *= inv
            f = a[i, k]
            if f != 0.0:
                for j in range(k + 1, n):
                    a[i, j] -= f * a[k, j]
    return True


@numba.njit(cache=True, inline="always")
def lu_solve(a, piv, b, r):  # pragma: no cover - compiled
    """Solve in place ``a x = b[r]`` with the factors of :func:`lu_factor`."""
    n = a.shape[0]
    for k in range(n):
        row = piv[k]
        if row != k:
            tmp = b[r, k]
            b[r, k] = b[r, row]
            b[r, row] = tmp
    for i in range(n):
        s = b[r, i]
        for j in range(i):
            s -= a[i, j] * b[r, j]
        b[r, i] = s
    for i in range(n - 1, -1, -1):
        s = b[r, i]
        for j in range(i + 1, n):
            s -= a[i, j] * b[r, j]
        b[r, i] = s / a[i, i]


@numba.njit(cache=True)
def _augmented_rhs(kind, ma, pg, y, sens, p, x0, stack, rates, dirpos, jac, f, g):
    # pragma: no cover - compiled
    """``f = dy/dt``; with sensitivities also ``g = J sens + forcing``."""
    model_rhs(kind, ma, pg, y, p, x0, stack, rates, f)
    nq = g.shape[1]
    if nq > 0:
        model_jacobian(kind, ma, pg, y, p, x0, stack, jac)
        model_forcing(kind, ma, pg, y, p, x0, stack, rates, dirpos, g)
        n = y.shape[0]
        for i in range(n):
            for j in range(nq):
                s = g[i, j]
                for m in range(n):
                    s += jac[i, m] * sens[m, j]
                g[i, j] = s


@numba.njit(cache=True)
def _all_finite(v):  # pragma: no cover - compiled
    for x in v.flat:
        if not np.isfinite(x):
            return False
    return True


@numba.njit(cache=True)
def solve_batch(kind, ma, pg, state_index, times, counts, y0, params, x0, rtol, atol,
                sens_init, sens_atol, dirpos, max_steps, stack_size, out, sens_out,
                status, steps, t_end_reached):  # pragma: no cover - compiled
    """Integrate every system of a batch; results go into the output arrays.

    Parameters
    ----------
    kind, ma, pg
        The model tables (:class:`mechfit.simulate.kernel.ModelTables`).
    state_index
        Output column of each state species.
    times, counts
        ``times[s, :counts[s]]`` are the (sorted, non-negative) output times of system s.
    y0, params, x0
        Initial state, parameters (linear values) and initial concentrations of all
        mechanism species, one row per system.
    rtol, atol
        Relative tolerance per system; absolute tolerance per system and state.
    sens_init, sens_atol, dirpos
        Initial sensitivities (state x directions), absolute tolerance per system and
        direction, and the position of each global direction (-1 when not wanted).
    max_steps
        Hard cap on the steps (accepted plus rejected) of one system.
    out, sens_out
        ``(systems, times, species)`` and ``(systems, times, species, directions)``;
        pre-filled with NaN, written up to where each system got.
    status, steps, t_end_reached
        Per system: status code, steps taken, last time reached.
    """
    n_sys = y0.shape[0]
    n = y0.shape[1]
    nq = sens_init.shape[1]
    n_out = out.shape[2]
    n_rates = ma[0].shape[1]
    stack = np.zeros(stack_size)
    rates = np.zeros(max(n_rates, 1))
    y = np.zeros(n)
    ynew = np.zeros(n)
    ystage = np.zeros(n)
    f = np.zeros(n)
    fstage = np.zeros(n)
    k = np.zeros((6, n))
    jac = np.zeros((n, n))
    jac_stage = np.zeros((n, n))
    emat = np.zeros((n, n))
    piv = np.zeros(n, dtype=np.int64)
    sens = np.zeros((n, nq))
    snew = np.zeros((n, nq))
    sstage = np.zeros((n, nq))
    g = np.zeros((n, nq))
    gstage = np.zeros((n, nq))
    ks = np.zeros((6, n, nq))
    coupling = np.zeros((n, nq))
    col = np.zeros((1, n))
    ydense = np.zeros(n)
    sdense = np.zeros((n, nq))
    outrow = np.zeros(n_out)
    outsens = np.zeros((n_out, nq))
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
        xs = x0[s]
        for i in range(n):
            y[i] = y0[s, i]
            for j in range(nq):
                sens[i, j] = sens_init[i, j]
        count = counts[s]
        iout = 0
        t = 0.0
        while iout < count and times[s, iout] <= 0.0:
            model_outputs(pg, state_index, y, p, xs, stack, outrow)
            for c in range(n_out):
                out[s, iout, c] = outrow[c]
            if nq > 0:
                model_output_sensitivities(pg, state_index, y, sens, p, xs, stack, dirpos,
                                           outsens)
                for c in range(n_out):
                    for j in range(nq):
                        sens_out[s, iout, c, j] = outsens[c, j]
            iout += 1
        if iout >= count:
            continue
        t_end = times[s, count - 1]
        _augmented_rhs(kind, ma, pg, y, sens, p, xs, stack, rates, dirpos, jac, f, g)
        if not (_all_finite(f) and _all_finite(g)):
            status[s] = STATUS_NOT_FINITE
            continue
        # initial step (Hairer, Norsett & Wanner, Solving ODEs I, section II.4)
        d0 = 0.0
        d1 = 0.0
        for i in range(n):
            sc = atol[s, i] + rtol[s] * abs(y[i])
            d0 += (y[i] / sc) ** 2
            d1 += (f[i] / sc) ** 2
        d0 = np.sqrt(d0 / n)
        d1 = np.sqrt(d1 / n)
        if d0 < 1e-5 or d1 < 1e-5:
            h = 1e-6 * t_end
        else:
            h = 0.01 * d0 / d1
        for i in range(n):
            ystage[i] = y[i] + h * f[i]
        model_rhs(kind, ma, pg, ystage, p, xs, stack, rates, fstage)
        d2 = 0.0
        for i in range(n):
            sc = atol[s, i] + rtol[s] * abs(y[i])
            d2 += ((fstage[i] - f[i]) / sc) ** 2
        d2 = np.sqrt(d2 / n) / h
        big = max(d1, d2)
        if np.isfinite(big) and big > 1e-15:
            h1 = (0.01 / big) ** 0.2
        else:
            h1 = max(1e-6 * t_end, h * 1e-3)
        h = min(100.0 * h, h1, t_end)
        rejected = False
        taken = 0
        while True:
            if taken >= max_steps:
                status[s] = STATUS_STEP_CAP
                break
            if t + h >= t_end or t + 1.01 * h >= t_end:
                h = t_end - t
            if not (h > 0.0) or t + h == t:
                status[s] = STATUS_STEP_TOO_SMALL
                break
            taken += 1
            # iteration matrix E = I/(h gamma) - J at the start of the step
            model_jacobian(kind, ma, pg, y, p, xs, stack, jac)
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
                        fstage[i] = f[i]
                        for j in range(nq):
                            gstage[i, j] = g[i, j]
                else:
                    for i in range(n):
                        v = y[i]
                        for m in range(st):
                            v += amat[st, m] * k[m, i]
                        ystage[i] = v
                        for j in range(nq):
                            v = sens[i, j]
                            for m in range(st):
                                v += amat[st, m] * ks[m, i, j]
                            sstage[i, j] = v
                    _augmented_rhs(kind, ma, pg, ystage, sstage, p, xs, stack, rates, dirpos,
                                   jac_stage, fstage, gstage)
                for i in range(n):
                    v = fstage[i]
                    for m in range(st):
                        v += chmat[st, m] * k[m, i]
                    k[st, i] = v
                lu_solve(emat, piv, k, st)
                for i in range(n):
                    if not np.isfinite(k[st, i]):
                        finite = False
                if nq > 0:
                    for i in range(n):
                        col[0, i] = k[st, i]
                    model_coupling(kind, ma, pg, y, p, xs, stack, sens, col[0], dirpos,
                                   coupling)
                    for j in range(nq):
                        for i in range(n):
                            v = gstage[i, j] + coupling[i, j]
                            for m in range(st):
                                v += chmat[st, m] * ks[m, i, j]
                            col[0, i] = v
                        lu_solve(emat, piv, col, 0)
                        for i in range(n):
                            ks[st, i, j] = col[0, i]
                            if not np.isfinite(col[0, i]):
                                finite = False
                if not finite:
                    break
            if not finite:
                h *= 0.25
                rejected = True
                continue
            # new solution and error estimate (stiffly accurate: err = u_6)
            err = 0.0
            negative = False
            for i in range(n):
                ynew[i] = ystage[i] + k[5, i]
                sc = atol[s, i] + rtol[s] * max(abs(y[i]), abs(ynew[i]))
                err += (k[5, i] / sc) ** 2
                if ynew[i] < -atol[s, i]:
                    negative = True
                for j in range(nq):
                    snew[i, j] = sstage[i, j] + ks[5, i, j]
                    sc = sens_atol[s, j] + rtol[s] * max(abs(sens[i, j]), abs(snew[i, j]))
                    err += (ks[5, i, j] / sc) ** 2
            err = np.sqrt(err / (n * (1 + nq)))
            if not np.isfinite(err):
                h *= 0.25
                rejected = True
                continue
            factor = min(5.0, max(0.2, 0.9 * err ** -0.25)) if err > 0.0 else 5.0
            if err > 1.0 or negative:
                h *= min(factor, 0.5)
                rejected = True
                continue
            # accepted: dense output for every output time in (t, t + h]
            t_new = t + h if t + h < t_end else t_end
            while iout < count and times[s, iout] <= t_new:
                theta = (times[s, iout] - t) / h
                if theta > 1.0:
                    theta = 1.0
                th1 = 1.0 - theta
                for i in range(n):
                    c3 = 0.0
                    c4 = 0.0
                    for m in range(5):
                        c3 += dmat[0, m] * k[m, i]
                        c4 += dmat[1, m] * k[m, i]
                    ydense[i] = y[i] * th1 + theta * (ynew[i] + th1 * (c3 + theta * c4))
                    for j in range(nq):
                        c3 = 0.0
                        c4 = 0.0
                        for m in range(5):
                            c3 += dmat[0, m] * ks[m, i, j]
                            c4 += dmat[1, m] * ks[m, i, j]
                        sdense[i, j] = sens[i, j] * th1 + theta * (
                            snew[i, j] + th1 * (c3 + theta * c4))
                model_outputs(pg, state_index, ydense, p, xs, stack, outrow)
                for c in range(n_out):
                    out[s, iout, c] = max(outrow[c], 0.0)
                if nq > 0:
                    model_output_sensitivities(pg, state_index, ydense, sdense, p, xs, stack,
                                               dirpos, outsens)
                    for c in range(n_out):
                        for j in range(nq):
                            sens_out[s, iout, c, j] = outsens[c, j]
                iout += 1
            t = t_new
            for i in range(n):
                y[i] = ynew[i]
                for j in range(nq):
                    sens[i, j] = snew[i, j]
            if iout >= count:
                break
            _augmented_rhs(kind, ma, pg, y, sens, p, xs, stack, rates, dirpos, jac_stage, f, g)
            if not (_all_finite(f) and _all_finite(g)):
                status[s] = STATUS_NOT_FINITE
                break
            if rejected:
                factor = min(factor, 1.0)
            rejected = False
            h *= factor
        steps[s] = taken
        t_end_reached[s] = t
