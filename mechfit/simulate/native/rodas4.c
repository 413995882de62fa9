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
 * state first and then each sensitivity column with H_q u added on the right.
 *
 * Every system has its own step sizes, error norm (weighted RMS over its own state and
 * sensitivity components) and step count, and ends with a status code. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "kinetics.h"
#include "lu.h"

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

static int all_finite(const double *v, int64_t n)
{
    for (int64_t i = 0; i < n; i++)
        if (!isfinite(v[i]))
            return 0;
    return 1;
}

/* f = dy/dt; with sensitivities also g = J sens + forcing */
static void augmented_rhs(mf_eval *e, const double *y, const double *sens,
                          const int64_t *dirpos, int64_t nq, double *jac, double *f,
                          double *g)
{
    const int64_t n = e->m->n_state;
    mf_rhs(e, y, f);
    if (nq == 0)
        return;
    mf_jacobian(e, y, jac);
    mf_forcing(e, y, dirpos, nq, g);
    for (int64_t i = 0; i < n; i++)
        for (int64_t j = 0; j < nq; j++) {
            double s = g[i * nq + j];
            for (int64_t m = 0; m < n; m++)
                s += jac[i * n + m] * sens[m * nq + j];
            g[i * nq + j] = s;
        }
}

/* write the outputs (and their sensitivities) of one output time */
static void write_output(mf_eval *e, const mf_batch *b, int64_t s, int64_t iout,
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

int mf_solve_rodas4(const mf_model *m, mf_batch *b)
{
    const int64_t n = m->n_state, nq = b->n_directions, n_out = m->n_species;
    const int64_t nn = n * n, nsq = n * nq;
    mf_eval e;
    if (mf_eval_open(&e, m) != MF_DONE)
        return MF_NO_MEMORY;
    /* work memory, one block: 14 n + 3 n^2 + 13 n nq + n_out (1 + nq) doubles */
    const size_t doubles = (size_t)(14 * n + 3 * nn + 13 * nsq + n_out * (1 + nq));
    double *work = malloc(sizeof(double) * (doubles > 0 ? doubles : 1));
    int64_t *piv = malloc(sizeof(int64_t) * (size_t)(n > 0 ? n : 1));
    if (!work || !piv) {
        free(work);
        free(piv);
        mf_eval_close(&e);
        return MF_NO_MEMORY;
    }
    double *y = work, *ynew = y + n, *ystage = ynew + n, *f = ystage + n;
    double *fstage = f + n, *col = fstage + n, *xcol = col + n, *ydense = xcol + n;
    double *k = ydense + n;                 /* 6 x n (ends at 14 n) */
    double *jac = k + 6 * n, *jac_stage = jac + nn, *emat = jac_stage + nn;
    double *sens = emat + nn, *snew = sens + nsq, *sstage = snew + nsq;
    double *g = sstage + nsq, *gstage = g + nsq, *coupling = gstage + nsq;
    double *sdense = coupling + nsq;
    double *ks = sdense + nsq;              /* 6 x n x nq (ends at 13 n nq) */
    double *outrow = ks + 6 * nsq, *outsens = outrow + n_out;

    for (int64_t s = 0; s < b->n_systems; s++) {
        if (b->status[s] != MF_OK)
            continue;
        mf_eval_system(&e, b->params + s * m->n_parameters, b->x0 + s * m->n_species);
        const double rt = b->rtol[s];
        const double *atol = b->atol + s * n;
        const double *satol = b->sens_atol + s * nq;
        const double *times = b->times + s * b->n_times;
        for (int64_t i = 0; i < n; i++)
            y[i] = b->y0[s * n + i];
        for (int64_t i = 0; i < nsq; i++)
            sens[i] = b->sens_init[i];
        const int64_t count = b->counts[s];
        int64_t iout = 0;
        double t = 0.0;
        while (iout < count && times[iout] <= 0.0) {
            write_output(&e, b, s, iout, y, sens, outrow, outsens, 0);
            iout++;
        }
        if (iout >= count)
            continue;
        const double t_end = times[count - 1];
        augmented_rhs(&e, y, sens, b->dirpos, nq, jac, f, g);
        if (!(all_finite(f, n) && all_finite(g, nsq))) {
            b->status[s] = MF_NOT_FINITE;
            continue;
        }
        /* initial step (Hairer, Norsett & Wanner, Solving ODEs I, section II.4) */
        double d0 = 0.0, d1 = 0.0, d2 = 0.0, h;
        for (int64_t i = 0; i < n; i++) {
            const double sc = atol[i] + rt * fabs(y[i]);
            d0 += (y[i] / sc) * (y[i] / sc);
            d1 += (f[i] / sc) * (f[i] / sc);
        }
        d0 = sqrt(d0 / (double)n);
        d1 = sqrt(d1 / (double)n);
        h = (d0 < 1e-5 || d1 < 1e-5) ? 1e-6 * t_end : 0.01 * d0 / d1;
        for (int64_t i = 0; i < n; i++)
            ystage[i] = y[i] + h * f[i];
        mf_rhs(&e, ystage, fstage);
        for (int64_t i = 0; i < n; i++) {
            const double sc = atol[i] + rt * fabs(y[i]);
            d2 += ((fstage[i] - f[i]) / sc) * ((fstage[i] - f[i]) / sc);
        }
        d2 = sqrt(d2 / (double)n) / h;
        const double big = MF_MAX(d1, d2);
        const double h1 = (isfinite(big) && big > 1e-15) ? pow(0.01 / big, 0.2)
                                                         : MF_MAX(1e-6 * t_end, h * 1e-3);
        h = MF_MIN(MF_MIN(100.0 * h, h1), t_end);
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
            /* iteration matrix E = I/(h gamma) - J at the start of the step */
            mf_jacobian(&e, y, jac);
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
                        for (int64_t j = 0; j < nq; j++) {
                            double w = sens[i * nq + j];
                            for (int q = 0; q < st; q++)
                                w += A[st][q] * ks[q * nsq + i * nq + j];
                            sstage[i * nq + j] = w;
                        }
                    }
                    augmented_rhs(&e, ystage, sstage, b->dirpos, nq, jac_stage, fstage,
                                  gstage);
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
                if (nq > 0) {
                    mf_coupling(&e, y, sens, kst, b->dirpos, nq, coupling);
                    for (int64_t j = 0; j < nq; j++) {
                        for (int64_t i = 0; i < n; i++) {
                            double v = gs[i * nq + j] + coupling[i * nq + j];
                            for (int q = 0; q < st; q++)
                                v += ch[st][q] * ks[q * nsq + i * nq + j];
                            col[i] = v;
                        }
                        lu_solve(emat, piv, col, xcol, n);
                        for (int64_t i = 0; i < n; i++) {
                            ksst[i * nq + j] = xcol[i];
                            if (!isfinite(xcol[i]))
                                finite = 0;
                        }
                    }
                }
            }
            if (!finite) {
                h *= 0.25;
                rejected = 1;
                continue;
            }
            /* new solution and error estimate (stiffly accurate: err = u_6) */
            const double *k5 = k + 5 * n, *ks5 = ks + 5 * nsq;
            double err = 0.0;
            int negative = 0;
            for (int64_t i = 0; i < n; i++) {
                ynew[i] = ystage[i] + k5[i];
                double sc = atol[i] + rt * MF_MAX(fabs(y[i]), fabs(ynew[i]));
                err += (k5[i] / sc) * (k5[i] / sc);
                if (ynew[i] < -atol[i])
                    negative = 1;
                for (int64_t j = 0; j < nq; j++) {
                    const int64_t ij = i * nq + j;
                    snew[ij] = sstage[ij] + ks5[ij];
                    sc = satol[j] + rt * MF_MAX(fabs(sens[ij]), fabs(snew[ij]));
                    err += (ks5[ij] / sc) * (ks5[ij] / sc);
                }
            }
            err = sqrt(err / (double)(n * (1 + nq)));
            if (!isfinite(err)) {
                h *= 0.25;
                rejected = 1;
                continue;
            }
            double factor = err > 0.0 ? MF_MIN(5.0, MF_MAX(0.2, 0.9 * pow(err, -0.25))) : 5.0;
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
                const double th1 = 1.0 - theta;
                for (int64_t i = 0; i < n; i++) {
                    double c3 = 0.0, c4 = 0.0;
                    for (int q = 0; q < 5; q++) {
                        c3 += D[0][q] * k[q * n + i];
                        c4 += D[1][q] * k[q * n + i];
                    }
                    ydense[i] = y[i] * th1 + theta * (ynew[i] + th1 * (c3 + theta * c4));
                    for (int64_t j = 0; j < nq; j++) {
                        const int64_t ij = i * nq + j;
                        c3 = 0.0;
                        c4 = 0.0;
                        for (int q = 0; q < 5; q++) {
                            c3 += D[0][q] * ks[q * nsq + ij];
                            c4 += D[1][q] * ks[q * nsq + ij];
                        }
                        sdense[ij] = sens[ij] * th1 + theta * (snew[ij] + th1 * (c3 + theta * c4));
                    }
                }
                write_output(&e, b, s, iout, ydense, sdense, outrow, outsens, 1);
                iout++;
            }
            t = t_new;
            memcpy(y, ynew, sizeof(double) * (size_t)n);
            memcpy(sens, snew, sizeof(double) * (size_t)nsq);
            if (iout >= count)
                break;
            augmented_rhs(&e, y, sens, b->dirpos, nq, jac_stage, f, g);
            if (!(all_finite(f, n) && all_finite(g, nsq))) {
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
    free(work);
    free(piv);
    mf_eval_close(&e);
    return MF_DONE;
}
