/* Variable-order backward differentiation (NDF/BDF) for batches of mass-action systems.
 *
 * The numerical differentiation formulas of orders 1 to 5 in the quasi-constant step
 * form of L. F. Shampine and M. W. Reichelt, "The MATLAB ODE Suite", SIAM J. Sci.
 * Comput. 18 (1997) 1-22 (kappa coefficients given there), with step and order chosen
 * from the estimated local errors of orders k-1, k and k+1 (E. Hairer and G. Wanner,
 * Solving ODEs II, 1996, section III.7 for the backward difference form). A simplified
 * Newton iteration reuses the Jacobian across steps (evaluated again when the iteration
 * fails to converge, or when the LU factors are renewed after JACOBIAN_AGE steps on
 * one Jacobian; the LU factors are renewed when the step changes) and stops with the
 * convergence test of CVODE (A. C. Hindmarsh et al., ACM TOMS 31 (2005) 363-396).
 * Every Newton correction solves with I - c J, so linear invariants are kept. */
#include <math.h>
#include <stdlib.h>

#include "kinetics.h"
#include "lu.h"
#include "mass_action.h"
#include "step_size.h"

#define MAX_ORDER 5
#define NEWTON_MAXITER 4
#define EPS 2.220446049250313e-16
/* the Jacobian is evaluated again, at the predicted state, when the iteration matrix is
 * next factorised after this many accepted steps on one Jacobian: the rule of CVODE's
 * dense linear solver (Hindmarsh et al., ACM TOMS 31 (2005) 363-396, section 2.1; the
 * number is its constant CVD_MSBJ = 50 in SUNDIALS 2.x, cvode_direct_impl.h) */
#define JACOBIAN_AGE 50
/* the integrator is compiled once for each number of species from 2 to this, and once
 * for any number */
#define SPECIALISED_MAX 8

/* R(order, factor) of Shampine and Reichelt (1997), section 2.3 */
MF_INLINE void step_matrix(int order, double factor, double r[MAX_ORDER + 1][MAX_ORDER + 1])
{
    for (int j = 0; j <= order; j++)
        r[0][j] = 1.0;
    for (int i = 1; i <= order; i++) {
        r[i][0] = 0.0;
        for (int j = 1; j <= order; j++)
            r[i][j] = r[i - 1][j] * ((double)(i - 1) - factor * (double)j) / (double)i;
    }
}

/* Rescale the backward differences d[0..order] to a step factor times the old one:
 * d <- (R U)^T d with U = R(order, 1); inlined below once per order */
MF_INLINE void rescale(double *d, int64_t n, const int order, double factor,
                       const double unit[MAX_ORDER + 1][MAX_ORDER + 1], double *tmp)
{
    double r[MAX_ORDER + 1][MAX_ORDER + 1];
    step_matrix(order, factor, r);
    for (int64_t i = 0; i < (order + 1) * n; i++)
        tmp[i] = 0.0;
    for (int a = 0; a <= order; a++)
        for (int b = 0; b <= order; b++) {
            double ru = 0.0;
            for (int c = 0; c <= order; c++)
                ru += r[b][c] * unit[c][a];
            if (ru != 0.0)
                for (int64_t i = 0; i < n; i++)
                    tmp[a * n + i] += ru * d[b * n + i];
        }
    for (int64_t i = 0; i < (order + 1) * n; i++)
        d[i] = tmp[i];
}

/* rescale (above) for any order; called on step changes only, so not copied per n */
MF_NOINLINE void change_differences(double *d, int64_t n, int order, double factor,
                                    const double unit[][MAX_ORDER + 1][MAX_ORDER + 1],
                                    double *tmp)
{
    switch (order) {
    case 1: rescale(d, n, 1, factor, unit[1], tmp); break;
    case 2: rescale(d, n, 2, factor, unit[2], tmp); break;
    case 3: rescale(d, n, 3, factor, unit[3], tmp); break;
    case 4: rescale(d, n, 4, factor, unit[4], tmp); break;
    default: rescale(d, n, 5, factor, unit[5], tmp); break;
    }
}

MF_INLINE double rms(const double *v, double c, const double *scale, int64_t n)
{
    double s = 0.0;
    for (int64_t i = 0; i < n; i++) {
        const double x = c * v[i] * scale[i];
        s += x * x;
    }
    return sqrt(s / (double)n);
}

/* the method's coefficients */
typedef struct {
    double gamma[MAX_ORDER + 1], alpha[MAX_ORDER + 1], error_const[MAX_ORDER + 1];
    double unit[MAX_ORDER + 1][MAX_ORDER + 1][MAX_ORDER + 1]; /* U = R(order, 1) */
} coefficients;

/* Integrate every system of the batch; n is the number of species. Inlined into one
 * copy per small n below, so that the compiler knows n and unrolls the loops over the
 * species (the same operations in the same order: the results do not change). */
MF_INLINE void integrate(const mf_model *m, mf_batch *b, mf_eval *e,
                         const coefficients *co, double *work, int64_t *perm,
                         const int64_t n)
{
    const int64_t nn = n * n;
    /* separate parts of the work memory (restrict: the compiler may keep them in
     * registers) */
    double *restrict dd = work, *restrict work_d = dd + (MAX_ORDER + 3) * n;
    double *restrict y = work_d + (MAX_ORDER + 1) * n, *restrict ypred = y + n;
    double *restrict psi = ypred + n, *restrict corr = psi + n, *restrict f = corr + n;
    double *restrict scale = f + n, *restrict rhsv = scale + n, *restrict dy = rhsv + n;
    double *restrict jac = dy + n, *restrict emat = jac + nn;

    for (int64_t s = 0; s < b->n_systems; s++) {
        if (b->status[s] != MF_OK)
            continue;
        mf_eval_system(e, b->params + s * m->n_parameters, b->x0 + s * m->n_species);
        const double rt = b->rtol[s];
        const double *atol = b->atol + s * n;
        const double *times = b->times + s * b->n_times;
        double *out = b->out + s * b->n_times * n;
        const double newton_tol = MF_MAX(10.0 * EPS / rt, MF_MIN(0.03, pow(rt, 0.5)));
        for (int64_t i = 0; i < n; i++)
            y[i] = b->y0[s * n + i];
        const int64_t count = b->counts[s];
        int64_t iout = 0;
        double t = 0.0;
        while (iout < count && times[iout] <= 0.0) {
            for (int64_t i = 0; i < n; i++)
                out[iout * n + i] = y[i];
            iout++;
        }
        if (iout >= count)
            continue;
        const double t_end = times[count - 1];
        mass_action_rhs(e, y, f, n);
        int finite = 1;
        for (int64_t i = 0; i < n; i++)
            if (!isfinite(f[i]))
                finite = 0;
        if (!finite) {
            b->status[s] = MF_NOT_FINITE;
            continue;
        }
        /* initial step for order 1 */
        double d1;
        const double h0 = trial_step(y, f, atol, rt, n, t_end, &d1);
        for (int64_t i = 0; i < n; i++)
            ypred[i] = y[i] + h0 * f[i];
        mass_action_rhs(e, ypred, psi, n);
        double h = first_step(y, f, psi, atol, rt, n, h0, d1, t_end, 1.0);
        int order = 1, n_equal = 0;
        for (int64_t i = 0; i < (MAX_ORDER + 3) * n; i++)
            dd[i] = 0.0;
        for (int64_t i = 0; i < n; i++) {
            dd[i] = y[i];
            dd[n + i] = f[i] * h;
        }
        mf_jacobian(e, y, jac);
        int lu_valid = 0;
        double crate = 1.0;
        int64_t taken = 0, accepted = 0;
        int64_t jacobian_at = 0; /* accepted steps at the Jacobian's last evaluation */
        for (;;) {
            if (taken >= b->max_steps) {
                b->status[s] = MF_STEP_CAP;
                break;
            }
            if (t + h > t_end) {
                change_differences(dd, n, order, (t_end - t) / h, co->unit, work_d);
                h = t_end - t;
                n_equal = 0;
                lu_valid = 0;
            }
            if (!(h > 0.0) || h < 10.0 * EPS * fabs(t)) {
                b->status[s] = MF_STEP_TOO_SMALL;
                break;
            }
            taken++;
            const double t_new = t + h;
            for (int64_t i = 0; i < n; i++) {
                ypred[i] = 0.0 + dd[i];
                psi[i] = 0.0;
            }
            for (int a = 1; a <= order; a++)
                for (int64_t i = 0; i < n; i++) {
                    ypred[i] += dd[a * n + i];
                    psi[i] += co->gamma[a] * dd[a * n + i];
                }
            for (int64_t i = 0; i < n; i++) {
                scale[i] = 1.0 / (atol[i] + rt * fabs(ypred[i]));
                psi[i] /= co->alpha[order];
            }
            const double c = h / co->alpha[order];
            int current_jac = 0, converged = 0, n_iter = 0;
            for (;;) {
                if (!lu_valid) {
                    if (!current_jac && accepted - jacobian_at >= JACOBIAN_AGE) {
                        mf_jacobian(e, ypred, jac);
                        current_jac = 1;
                        jacobian_at = accepted;
                    }
                    for (int64_t i = 0; i < nn; i++)
                        emat[i] = -c * jac[i];
                    for (int64_t i = 0; i < n; i++)
                        emat[i * n + i] += 1.0;
                    lu_valid = lu_factor(emat, perm, n);
                    crate = 1.0;
                }
                if (lu_valid) {
                    /* Newton test of CVODE (Hindmarsh et al., ACM TOMS 31 (2005) 363):
                     * the correction, damped by the contraction rate seen so far, must
                     * be a small part of what the local error test allows */
                    const double tol_k = MF_MAX(newton_tol, 0.02 / co->error_const[order]);
                    for (int64_t i = 0; i < n; i++) {
                        y[i] = ypred[i];
                        corr[i] = 0.0;
                    }
                    double norm_old = -1.0;
                    for (int it = 0; it < NEWTON_MAXITER; it++) {
                        n_iter = it + 1;
                        mass_action_rhs(e, y, f, n);
                        int bad = 0;
                        for (int64_t i = 0; i < n; i++) {
                            if (!isfinite(f[i]))
                                bad = 1;
                            rhsv[i] = c * f[i] - psi[i] - corr[i];
                        }
                        if (bad)
                            break;
                        lu_solve(emat, perm, rhsv, dy, n);
                        const double dy_norm = rms(dy, 1.0, scale, n);
                        if (norm_old > 0.0) {
                            if (dy_norm > 2.0 * norm_old)
                                break;
                            crate = MF_MAX(0.3 * crate, dy_norm / norm_old);
                        }
                        for (int64_t i = 0; i < n; i++) {
                            y[i] += dy[i];
                            corr[i] += dy[i];
                        }
                        if (dy_norm * MF_MIN(1.0, crate) <= tol_k) {
                            converged = 1;
                            break;
                        }
                        norm_old = dy_norm;
                    }
                }
                if (converged || current_jac)
                    break;
                mf_jacobian(e, ypred, jac);
                current_jac = 1;
                jacobian_at = accepted;
                lu_valid = 0;
            }
            if (!converged) {
                change_differences(dd, n, order, 0.5, co->unit, work_d);
                h *= 0.5;
                n_equal = 0;
                lu_valid = 0;
                continue;
            }
            const double safety = 0.9 * (2 * NEWTON_MAXITER + 1) /
                                  (double)(2 * NEWTON_MAXITER + n_iter);
            int negative = 0;
            for (int64_t i = 0; i < n; i++) {
                scale[i] = 1.0 / (atol[i] + rt * fabs(y[i]));
                if (y[i] < -atol[i])
                    negative = 1;
            }
            const double err = rms(corr, co->error_const[order], scale, n);
            if (err > 1.0 || negative) {
                /* (the power once: MF_MAX evaluates its arguments twice) */
                const double shrink = err > 1.0 ? safety * pow(err, -1.0 / (order + 1)) : 0.5;
                const double factor = err > 1.0 ? MF_MAX(0.2, shrink) : 0.5;
                change_differences(dd, n, order, factor, co->unit, work_d);
                h *= factor;
                n_equal = 0;
                lu_valid = 0;
                continue;
            }
            /* accepted */
            accepted++;
            n_equal++;
            for (int64_t i = 0; i < n; i++) {
                dd[(order + 2) * n + i] = corr[i] - dd[(order + 1) * n + i];
                dd[(order + 1) * n + i] = corr[i];
            }
            for (int a = order; a >= 0; a--)
                for (int64_t i = 0; i < n; i++)
                    dd[a * n + i] += dd[(a + 1) * n + i];
            while (iout < count && times[iout] <= t_new) {
                const double tout = times[iout];
                double prod[MAX_ORDER];
                double p = 1.0;
                for (int a = 0; a < order; a++) {
                    p *= (tout - (t_new - h * a)) / (h * (1 + a));
                    prod[a] = p;
                }
                for (int64_t i = 0; i < n; i++) {
                    double v = dd[i];
                    for (int a = 0; a < order; a++)
                        v += dd[(a + 1) * n + i] * prod[a];
                    out[iout * n + i] = v > 0.0 ? v : 0.0;
                }
                iout++;
            }
            t = t_new;
            if (iout >= count)
                break;
            if (n_equal < order + 1)
                continue;
            const double err_m = order > 1
                ? rms(dd + order * n, co->error_const[order - 1], scale, n) : INFINITY;
            const double err_p = order < MAX_ORDER
                ? rms(dd + (order + 2) * n, co->error_const[order + 1], scale, n) : INFINITY;
            /* (an order out of range has the error estimate infinity and the factor 0) */
            const double f_m = order == 1 ? 0.0
                : err_m > 0.0 ? pow(err_m, -1.0 / order) : INFINITY;
            const double f_0 = err > 0.0 ? pow(err, -1.0 / (order + 1)) : INFINITY;
            const double f_p = order == MAX_ORDER ? 0.0
                : err_p > 0.0 ? pow(err_p, -1.0 / (order + 2)) : INFINITY;
            /* the order whose error estimate allows the largest step (first on ties) */
            double best = f_m;
            int change = -1;
            if (f_0 > best) {
                best = f_0;
                change = 0;
            }
            if (f_p > best) {
                best = f_p;
                change = 1;
            }
            order += change;
            const double factor = MF_MIN(10.0, safety * best);
            n_equal = 0;
            if (change == 0 && 1.0 <= factor && factor < 1.2)
                continue;  /* a small increase is not worth new differences and a new LU */
            change_differences(dd, n, order, factor, co->unit, work_d);
            h *= factor;
            lu_valid = 0;
        }
        b->steps[s] = taken;
        b->t_reached[s] = t;
    }
}

#define SPECIALISED(N)                                                                   \
    static void integrate_##N(const mf_model *m, mf_batch *b, mf_eval *e,                \
                              const coefficients *co, double *work, int64_t *perm)       \
    {                                                                                    \
        integrate(m, b, e, co, work, perm, N);                                           \
    }
SPECIALISED(2)
SPECIALISED(3)
SPECIALISED(4)
SPECIALISED(5)
SPECIALISED(6)
SPECIALISED(7)
SPECIALISED(8)

int mf_solve_bdf(const mf_model *m, mf_batch *b)
{
    const int64_t n = m->n_state, nn = n * n;
    static const double kappa[MAX_ORDER + 1] = {0.0, -0.1850, -1.0 / 9.0, -0.0823, -0.0415,
                                                0.0};
    coefficients c;
    double acc = 0.0;
    for (int k = 0; k <= MAX_ORDER; k++) {
        if (k > 0)
            acc += 1.0 / (double)k;
        c.gamma[k] = acc;
        c.alpha[k] = (1.0 - kappa[k]) * acc;
        c.error_const[k] = kappa[k] * acc + 1.0 / (double)(k + 1);
    }
    for (int k = 1; k <= MAX_ORDER; k++)
        step_matrix(k, 1.0, c.unit[k]);
    mf_eval e;
    if (mf_eval_open(&e, m) != MF_DONE)
        return MF_NO_MEMORY;
    /* work memory: dd (MAX_ORDER + 3) x n, work_d (MAX_ORDER + 1) x n, 8 vectors, 2
     * matrices */
    const size_t doubles = (size_t)((2 * MAX_ORDER + 4 + 8) * n + 2 * nn);
    double *work = malloc(sizeof(double) * (doubles > 0 ? doubles : 1));
    int64_t *perm = malloc(sizeof(int64_t) * (size_t)(n > 0 ? n : 1));
    if (!work || !perm) {
        free(work);
        free(perm);
        mf_eval_close(&e);
        return MF_NO_MEMORY;
    }
    switch (n) {
    case 2: integrate_2(m, b, &e, &c, work, perm); break;
    case 3: integrate_3(m, b, &e, &c, work, perm); break;
    case 4: integrate_4(m, b, &e, &c, work, perm); break;
    case 5: integrate_5(m, b, &e, &c, work, perm); break;
    case 6: integrate_6(m, b, &e, &c, work, perm); break;
    case 7: integrate_7(m, b, &e, &c, work, perm); break;
    case 8: integrate_8(m, b, &e, &c, work, perm); break;
    default: integrate(m, b, &e, &c, work, perm, n); break;
    }
    free(work);
    free(perm);
    mf_eval_close(&e);
    return MF_DONE;
}
