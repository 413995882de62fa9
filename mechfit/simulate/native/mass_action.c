/* Mass-action kinetics from tables: rates r_j = f_j k_j prod_i y_i^nu_ij, the
 * right-hand side dy/dt = N r, its exact Jacobian, the forcing terms of the sensitivity
 * equations and the second-derivative coupling, all as exact power-law derivatives
 * (IUPAC Gold Book, "rate of reaction"; common practice). The stoichiometric matrix N
 * is used through its non-zero entries, reaction by reaction (mf_eval_open). */
#include "kinetics.h"

/* y^order for a non-negative integer order, by repeated multiplication */
static inline double power(double y, int64_t order)
{
    double v = 1.0;
    for (int64_t t = 0; t < order; t++)
        v *= y;
    return v;
}

/* d^times/dy^times y^order */
static inline double power_derivative(double y, int64_t order, int64_t times)
{
    if (times > order)
        return 0.0;
    double c = 1.0;
    for (int64_t t = 0; t < times; t++)
        c *= (double)(order - t);
    return c * power(y, order - times);
}

void mf_mass_action_rates(mf_eval *e, const double *y)
{
    const int64_t *start = e->factor_start, *species = e->factor_species;
    for (int64_t r = 0; r < e->m->n_reactions; r++) {
        double v = e->kbase[r];
        for (int64_t q = start[r]; q < start[r + 1]; q++)
            v *= y[species[q]];
        e->rates[r] = v;
    }
}

void mf_mass_action_rhs(mf_eval *e, const double *y, double *out)
{
    const int64_t *start = e->row_start, *reaction = e->row_reaction;
    const double *coef = e->row_coef, *rates = e->rates;
    mf_mass_action_rates(e, y);
    for (int64_t i = 0; i < e->m->n_state; i++) {
        double s = 0.0;
        for (int64_t q = start[i]; q < start[i + 1]; q++)
            s += coef[q] * rates[reaction[q]];
        out[i] = s;
    }
}

void mf_mass_action_jacobian(mf_eval *e, const double *y, double *jac)
{
    const mf_model *m = e->m;
    const int64_t n = m->n_state, w = m->width;
    for (int64_t i = 0; i < n * n; i++)
        jac[i] = 0.0;
    for (int64_t r = 0; r < m->n_reactions; r++) {
        const double base = e->kbase[r];
        const int64_t cnt = m->rcnt[r];
        for (int64_t a = 0; a < cnt; a++) {
            const int64_t o = m->rord[r * w + a];
            const int64_t col = m->ridx[r * w + a];
            double d = base * (double)o;
            const double b = y[col];
            for (int64_t t = 1; t < o; t++)
                d *= b;
            for (int64_t c = 0; c < cnt; c++) {
                if (c == a)
                    continue;
                const double bc = y[m->ridx[r * w + c]];
                for (int64_t t = m->rord[r * w + c]; t > 0; t--)
                    d *= bc;
            }
            for (int64_t q = e->net_start[r]; q < e->net_start[r + 1]; q++)
                jac[e->net_species[q] * n + col] += e->net_coef[q] * d;
        }
    }
}

void mf_mass_action_forcing(mf_eval *e, const double *y, const int64_t *dirpos, int64_t nq,
                            double *forcing)
{
    const mf_model *m = e->m;
    for (int64_t i = 0; i < m->n_state * nq; i++)
        forcing[i] = 0.0;
    mf_mass_action_rates(e, y);
    for (int64_t r = 0; r < m->n_reactions; r++) {
        const int64_t j = dirpos[m->rpar[r]];
        if (j < 0)
            continue;
        for (int64_t q = e->net_start[r]; q < e->net_start[r + 1]; q++)
            forcing[e->net_species[q] * nq + j] += e->net_coef[q] * e->rates[r];
    }
}

/* out[:, j] = (d/dy (J sens_j + forcing_j)) u: the off-diagonal blocks of the Jacobian
 * of the sensitivity system applied to u (exact power-law second derivatives) */
void mf_mass_action_coupling(mf_eval *e, const double *y, const double *sens,
                             const double *u, const int64_t *dirpos, int64_t nq,
                             double *out)
{
    const mf_model *m = e->m;
    const int64_t w = m->width;
    for (int64_t i = 0; i < m->n_state * nq; i++)
        out[i] = 0.0;
    for (int64_t r = 0; r < m->n_reactions; r++) {
        const double base = e->kbase[r];
        const int64_t jr = dirpos[m->rpar[r]];
        const int64_t cnt = m->rcnt[r];
        const int64_t q0 = e->net_start[r], q1 = e->net_start[r + 1];
        for (int64_t a = 0; a < cnt; a++) {
            const int64_t sa = m->ridx[r * w + a], oa = m->rord[r * w + a];
            /* gradient component and second derivatives of rate r */
            double grad = base * power_derivative(y[sa], oa, 1);
            for (int64_t c = 0; c < cnt; c++)
                if (c != a)
                    grad *= power(y[m->ridx[r * w + c]], m->rord[r * w + c]);
            for (int64_t b = 0; b < cnt; b++) {
                const int64_t sb = m->ridx[r * w + b], ob = m->rord[r * w + b];
                double h;
                if (a == b)
                    h = base * power_derivative(y[sa], oa, 2);
                else
                    h = base * power_derivative(y[sa], oa, 1) * power_derivative(y[sb], ob, 1);
                if (h == 0.0)
                    continue;
                for (int64_t c = 0; c < cnt; c++)
                    if (c != a && c != b)
                        h *= power(y[m->ridx[r * w + c]], m->rord[r * w + c]);
                const double hu = h * u[sa];
                for (int64_t j = 0; j < nq; j++) {
                    const double v = hu * sens[sb * nq + j];
                    for (int64_t q = q0; q < q1; q++)
                        out[e->net_species[q] * nq + j] += e->net_coef[q] * v;
                }
            }
            if (jr >= 0) {
                const double gu = grad * u[sa];
                for (int64_t q = q0; q < q1; q++)
                    out[e->net_species[q] * nq + jr] += e->net_coef[q] * gu;
            }
        }
    }
}
