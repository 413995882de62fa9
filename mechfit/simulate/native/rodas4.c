/* RODAS4 for batches of systems, with forward sensitivities.
 *
 * The six-stage, L-stable, stiffly accurate Rosenbrock method of order 4(3) of E. Hairer
 * and G. Wanner, Solving Ordinary Differential Equations II, 2nd ed., Springer 1996,
 * section IV.7 (coefficients of their code RODAS, METH = 1), in the transformed form
 * with stage increments u_i:
 *     (1/(h gamma) I - J) u_i = f(y + sum_j a_ij u_j) + sum_j (c_ij / h) u_j,
 * the new solution y + sum a_6j u_j + u_6 and the embedded error estimate u_6, and the
 * order-3 continuous extension for output between steps. With sensitivities the
 * augmented system [y, s_q] is integrated: its Jacobian is block lower triangular
 * [[J, 0], [H_q, J]], so every stage reuses the one LU of the state block, solving the
 * state first and then each sensitivity column with H_q u added on the right. J and H_q
 * are those of the step's start: they are evaluated once per accepted step and kept
 * across rejections (which change only h), and H_q = d/dy (J s_q + df/d theta_q) is
 * formed as an n x n matrix, so that a stage needs only its product with u. The stages
 * evaluate f(Y_i) and J(Y_i) S_i + df/d theta(Y_i) together (on the mass-action path
 * without forming J(Y_i)). Inside, sensitivities are stored by direction (column q of
 * S is sens[q n .. q n + n - 1]).
 *
 * Every system has its own step sizes, error norm (weighted RMS over its own state and
 * sensitivity components) and step count, and ends with a status code. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "kinetics.h"
#include "lu.h"
#include "mass_action.h"
#include "step_size.h"

#define GAMMA 0.25

static const double A[6][5] = {
    {0.0, 0.0, 0.0, 0.0, 0.0},
    {1.544, 0.0, 0.0, 0.0, 0.0},
    {0.9466785280815826, 0.2557011698983284, 0.0, 0.0, 0.0},
    {3.314825187068521, 2.896124015972201, 0.9986419139977817, 0.0, 0.0},
    {1.221224509226641, 6.019134481288629, 12.53708332932087, -0.6878860361058950, 0.0},
    {1.221224509226641, 6.019134481288629, 12.53708332932087, -0.6878860361058950, 1.0},
};
static const double C[6][5] = {
    {0.0, 0.0, 0.0, 0.0, 0.0},
    {-5.6688, 0.0, 0.0, 0.0, 0.0},
    {-2.430093356833875, -0.2063599157091915, 0.0, 0.0, 0.0},
    {-0.1073529058151375, -9.594562251023355, -20.47028614809616, 0.0, 0.0},
    {7.496443313967647, -10.24680431464352, -33.99990352819905, 11.70890893206160, 0.0},
    {8.083246795921522, -7.981132988064893, -31.52159432874371, 16.31930543123136,
     -6.058818238834054},
};
/* continuous extension: y(t + theta h) = y (1 - theta) + theta (y_new + (1 - theta)
 * (c3 + theta c4)), c3 = sum D[0][m] u_m, c4 = sum D[1][m] u_m */
static const double D[2][5] = {
    {10.12623508344586, -7.487995877610167, -34.80091861555747, -7.992771707568823,
     1.025137723295662},
    {-0.6762803392801253, 6.087714651680015, 16.43084320892478, 24.76722511418386,
     -6.594389125716872},
};

MF_INLINE int all_finite(const double *v, int64_t n)
{
    for (int64_t i = 0; i < n; i++)
        if (!isfinite(v[i]))
            return 0;
    return 1;
}

/* f = dy/dt, g_j = J sens_j + df/d theta_j and (unless jac is NULL) J: mass action
 * inline, so that the copies for a known n get loops of known length */
MF_INLINE void sensitivity_rhs(mf_eval *e, const double *y, const double *sens,
                               const int64_t *dirpos, int64_t nq, double *f, double *g,
                               double *jac, const int64_t n)
{
    if (e->m->kind == MF_KIND_MASS_ACTION)
        mass_action_sensitivity_rhs(e, y, sens, dirpos, nq, f, g, jac, n);
    else
        mf_program_sensitivity_rhs(e, y, sens, dirpos, nq, f, g, jac);
}

/* the order-3 continuous extension at theta in [0, 1] of a step from u0 to u1 with the
 * stage increments k (5 blocks of len values): the same formula for the state and for
 * the sensitivities */
MF_INLINE void dense_output(const double *u0, const double *u1, const double *k, int64_t len,
                            double theta, double *out)
{
    const double th1 = 1.0 - theta;
    for (int64_t x = 0; x < len; x++) {
        double c3 = 0.0, c4 = 0.0;
        for (int q = 0; q < 5; q++) {
            c3 += D[0][q] * k[q * len + x];
            c4 += D[1][q] * k[q * len + x];
        }
        out[x] = u0[x] * th1 + theta * (u1[x] + th1 * (c3 + theta * c4));
    }
}

/* f, g, J and H_q at the start of a step (evaluated again only when y moves); false
 * when f or g is not finite */
MF_INLINE int step_start(mf_eval *e, const double *y, const double *sens,
                         const int64_t *dirpos, int64_t nq, double *f, double *g, double *jac,
                         double *hs, const int64_t n)
{
    sensitivity_rhs(e, y, sens, dirpos, nq, f, g, jac, n);
    if (!(all_finite(f, n) && all_finite(g, n * nq)))
        return 0;
    if (nq > 0)
        mf_sensitivity_jacobian(e, y, sens, dirpos, nq, hs);
    return 1;
}

/* write the outputs (and their sensitivities) of one output time */
MF_NOINLINE void write_output(mf_eval *e, const mf_batch *b, int64_t s, int64_t iout,
                              const double *y, const double *sens, double *outrow,
                              double *outsens, int clip)
{
    const int64_t n_out = e->m->n_species, nq = b->n_directions;
    mf_outputs(e, b->state_index, y, outrow);
    double *dst = b->out + (s * b->n_times + iout) * n_out;
    for (int64_t c = 0; c < n_out; c++)
        dst[c] = clip ? MF_MAX(outrow[c], 0.0) : outrow[c];
    if (nq > 0) {
        mf_output_sensitivities(e, b->state_index, y, sens, b->dirpos, nq, outsens);
        memcpy(b->sens_out + (s * b->n_times + iout) * n_out * nq, outsens,
               sizeof(double) * (size_t)(n_out * nq));
    }
}

/* Integrate every system of the batch; n is the number of state species. Inlined into
 * one copy per small n below, so that the compiler knows n and unrolls the loops over
 * the species (the same operations in the same order: the results do not change). */
MF_INLINE void integrate(const mf_model *m, mf_batch *b, mf_eval *e, double *work,
                         int64_t *piv, const int64_t n)
{
    const int64_t nq = b->n_directions, n_out = m->n_species;
    const int64_t nn = n * n, nsq = n * nq;
    double *y = work, *ynew = y + n, *ystage = ynew + n, *f = ystage + n;
    double *fstage = f + n, *col = fstage + n, *ydense = col + n;
    double *k = ydense + n;                 /* 6 x n (ends at 13 n) */
    double *jac = k + 6 * n, *emat = jac + nn;
    double *sens = emat + nn, *snew = sens + nsq, *sstage = snew + nsq;
    double *g = sstage + nsq, *gstage = g + nsq, *scol = gstage + nsq;
    double *sdense = scol + nsq;
    double *ks = sdense + nsq;              /* 6 x nq x n (ends at 13 n nq) */
    double *hs = ks + 6 * nsq;              /* nq x n x n, by column */
    double *outrow = hs + nn * nq, *outsens = outrow + n_out;

    for (int64_t s = 0; s < b->n_systems; s++) {
        if (b->status[s] != MF_OK)
            continue;
        mf_eval_system(e, b->params + s * m->n_parameters, b->x0 + s * m->n_species);
        const double rt = b->rtol[s];
        const double *atol = b->atol + s * n;
        const double *satol = b->sens_atol + s * nq;
        const double *times = b->times + s * b->n_times;
        for (int64_t i = 0; i < n; i++) {
            y[i] = b->y0[s * n + i];
            for (int64_t j = 0; j < nq; j++)
                sens[j * n + i] = b->sens_init[i * nq + j];
        }
        const int64_t count = b->counts[s];
        int64_t iout = 0;
        double t = 0.0;
        while (iout < count && times[iout] <= 0.0) {
            write_output(e, b, s, iout, y, sens, outrow, outsens, 0);
            iout++;
        }
        if (iout >= count)
            continue;
        const double t_end = times[count - 1];
        if (!step_start(e, y, sens, b->dirpos, nq, f, g, jac, hs, n)) {
            b->status[s] = MF_NOT_FINITE;
            continue;
        }
        /* initial step for order 4 */
        double d1;
        const double h0 = trial_step(y, f, atol, rt, n, t_end, &d1);
        for (int64_t i = 0; i < n; i++)
            ystage[i] = y[i] + h0 * f[i];
        mf_rhs(e, ystage, fstage);
        double h = first_step(y, f, fstage, atol, rt, n, h0, d1, t_end, 4.0);
        int rejected = 0;
        int64_t taken = 0;
        for (;;) {
            if (taken >= b->max_steps) {
                b->status[s] = MF_STEP_CAP;
                break;
            }
            if (t + h >= t_end || t + 1.01 * h >= t_end)
                h = t_end - t;
            if (!(h > 0.0) || t + h == t) {
                b->status[s] = MF_STEP_TOO_SMALL;
                break;
            }
            taken++;
            /* iteration matrix E = I/(h gamma) - J */
            const double fac = 1.0 / (h * GAMMA);
            for (int64_t i = 0; i < nn; i++)
                emat[i] = -jac[i];
            for (int64_t i = 0; i < n; i++)
                emat[i * n + i] += fac;
            if (!lu_factor(emat, piv, n)) {
                h *= 0.25;
                rejected = 1;
                continue;
            }
            double ch[6][5];
            for (int st = 0; st < 6; st++)
                for (int q = 0; q < st; q++)
                    ch[st][q] = C[st][q] / h;
            int finite = 1;
            for (int st = 0; st < 6 && finite; st++) {
                double *kst = k + st * n, *ksst = ks + st * nsq;
                const double *fs = f, *gs = g;
                if (st > 0) {
                    for (int64_t i = 0; i < n; i++) {
                        double v = y[i];
                        for (int q = 0; q < st; q++)
                            v += A[st][q] * k[q * n + i];
                        ystage[i] = v;
                    }
                    for (int64_t x = 0; x < nsq; x++)
                        sstage[x] = sens[x];
                    for (int q = 0; q < st; q++) {
                        const double a = A[st][q], *kq = ks + q * nsq;
                        for (int64_t x = 0; x < nsq; x++)
                            sstage[x] += a * kq[x];
                    }
                    sensitivity_rhs(e, ystage, sstage, b->dirpos, nq, fstage, gstage, NULL, n);
                    fs = fstage;
                    gs = gstage;
                }
                for (int64_t i = 0; i < n; i++) {
                    double v = fs[i];
                    for (int q = 0; q < st; q++)
                        v += ch[st][q] * k[q * n + i];
                    col[i] = v;
                }
                lu_solve(emat, piv, col, kst, n);
                if (!all_finite(kst, n))
                    finite = 0;
                /* each sensitivity column: g_q + H_q u + sum_j (c_j / h) ks_j */
                for (int64_t j = 0; j < nq; j++) {
                    const double *hj = hs + j * nn, *gj = gs + j * n;
                    double *sj = scol + j * n;
                    for (int64_t i = 0; i < n; i++)
                        sj[i] = gj[i];
                    for (int64_t l = 0; l < n; l++) {
                        const double u = kst[l], *hjl = hj + l * n;
                        for (int64_t i = 0; i < n; i++)
                            sj[i] += hjl[i] * u;
                    }
                    for (int q = 0; q < st; q++) {
                        const double c = ch[st][q], *kq = ks + q * nsq + j * n;
                        for (int64_t i = 0; i < n; i++)
                            sj[i] += c * kq[i];
                    }
                    lu_solve(emat, piv, sj, ksst + j * n, n);
                }
                if (!all_finite(ksst, nsq))
                    finite = 0;
            }
            if (!finite) {
                h *= 0.25;
                rejected = 1;
                continue;
            }
            /* new solution and error estimate (stiffly accurate: err = u_6) */
            const double *k5 = k + 5 * n, *ks5 = ks + 5 * nsq;
            for (int64_t i = 0; i < n; i++)
                ynew[i] = ystage[i] + k5[i];
            for (int64_t x = 0; x < nsq; x++)
                snew[x] = sstage[x] + ks5[x];
            double err = 0.0;
            int negative = 0;
            for (int64_t i = 0; i < n; i++) {
                double sc = atol[i] + rt * MF_MAX(fabs(y[i]), fabs(ynew[i]));
                err += (k5[i] / sc) * (k5[i] / sc);
                if (ynew[i] < -atol[i])
                    negative = 1;
                for (int64_t j = 0; j < nq; j++) {
                    const int64_t x = j * n + i;
                    sc = satol[j] + rt * MF_MAX(fabs(sens[x]), fabs(snew[x]));
                    err += (ks5[x] / sc) * (ks5[x] / sc);
                }
            }
            err = sqrt(err / (double)(n * (1 + nq)));
            if (!isfinite(err)) {
                h *= 0.25;
                rejected = 1;
                continue;
            }
            /* (the power once: MF_MIN and MF_MAX evaluate their arguments twice) */
            const double grow = err > 0.0 ? 0.9 * pow(err, -0.25) : 5.0;
            double factor = MF_MIN(5.0, MF_MAX(0.2, grow));
            if (err > 1.0 || negative) {
                h *= MF_MIN(factor, 0.5);
                rejected = 1;
                continue;
            }
            /* accepted: dense output for every output time in (t, t + h] */
            const double t_new = t + h < t_end ? t + h : t_end;
            while (iout < count && times[iout] <= t_new) {
                double theta = (times[iout] - t) / h;
                if (theta > 1.0)
                    theta = 1.0;
                dense_output(y, ynew, k, n, theta, ydense);
                dense_output(sens, snew, ks, nsq, theta, sdense);
                write_output(e, b, s, iout, ydense, sdense, outrow, outsens, 1);
                iout++;
            }
            t = t_new;
            memcpy(y, ynew, sizeof(double) * (size_t)n);
            memcpy(sens, snew, sizeof(double) * (size_t)nsq);
            if (iout >= count)
                break;
            if (!step_start(e, y, sens, b->dirpos, nq, f, g, jac, hs, n)) {
                b->status[s] = MF_NOT_FINITE;
                break;
            }
            if (rejected)
                factor = MF_MIN(factor, 1.0);
            rejected = 0;
            h *= factor;
        }
        b->steps[s] = taken;
        b->t_reached[s] = t;
    }
}

#define SPECIALISED(N)                                                                   \
    static void integrate_##N(const mf_model *m, mf_batch *b, mf_eval *e, double *work,  \
                              int64_t *piv)                                              \
    {                                                                                    \
        integrate(m, b, e, work, piv, N);                                                \
    }
SPECIALISED(2)
SPECIALISED(3)
SPECIALISED(4)
SPECIALISED(5)
SPECIALISED(6)
SPECIALISED(7)
SPECIALISED(8)

int mf_solve_rodas4(const mf_model *m, mf_batch *b)
{
    const int64_t n = m->n_state, nq = b->n_directions, n_out = m->n_species;
    const int64_t nn = n * n, nsq = n * nq;
    mf_eval e;
    if (mf_eval_open(&e, m) != MF_DONE)
        return MF_NO_MEMORY;
    /* work memory, one block: 13 n + 2 n^2 + 13 n nq + n^2 nq + n_out (1 + nq) doubles */
    const size_t doubles = (size_t)(13 * n + 2 * nn + 13 * nsq + nn * nq + n_out * (1 + nq));
    double *work = malloc(sizeof(double) * (doubles > 0 ? doubles : 1));
    int64_t *piv = malloc(sizeof(int64_t) * (size_t)(n > 0 ? n : 1));
    if (!work || !piv) {
        free(work);
        free(piv);
        mf_eval_close(&e);
        return MF_NO_MEMORY;
    }
    switch (n) {
    case 2: integrate_2(m, b, &e, work, piv); break;
    case 3: integrate_3(m, b, &e, work, piv); break;
    case 4: integrate_4(m, b, &e, work, piv); break;
    case 5: integrate_5(m, b, &e, work, piv); break;
    case 6: integrate_6(m, b, &e, work, piv); break;
    case 7: integrate_7(m, b, &e, work, piv); break;
    case 8: integrate_8(m, b, &e, work, piv); break;
    default: integrate(m, b, &e, work, piv, n); break;
    }
    free(work);
    free(piv);
    mf_eval_close(&e);
    return MF_DONE;
}
