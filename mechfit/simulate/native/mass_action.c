/* Mass-action kinetics from tables: the right-hand side dy/dt = N r for any number of
 * species, its exact Jacobian, and the Jacobian of the right-hand side of the forward
 * sensitivity equations, all as exact power-law derivatives (IUPAC Gold Book, "rate of
 * reaction"; common practice). The rates and right-hand sides themselves are inline in
 * mass_action.h. */
#include "kinetics.h"
#include "mass_action.h"

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

void mf_mass_action_rhs(mf_eval *e, const double *y, double *out)
{
    mass_action_rhs(e, y, out, e->m->n_state);
}

void mf_mass_action_jacobian(mf_eval *e, const double *y, double *jac)
{
    const mf_model *m = e->m;
    const int64_t n = m->n_state, w = m->width;
    for (int64_t i = 0; i < n * n; i++)
        jac[i] = 0.0;
    for (int64_t r = 0; r < m->n_reactions; r++)
        for (int64_t a = 0; a < m->rcnt[r]; a++) {
            const double d = mass_action_rate_gradient(m, y, r, a, e->kbase[r]);
            const int64_t col = m->ridx[r * w + a];
            for (int64_t q = e->net_start[r]; q < e->net_start[r + 1]; q++)
                jac[e->net_species[q] * n + col] += e->net_coef[q] * d;
        }
}

/* hs[(j n + l) n + i] = d/dy_l (J sens_j + df/d theta_j)_i: the off-diagonal blocks of
 * the Jacobian of the sensitivity system, stored by column (exact power-law second
 * derivatives); sens_j at [j n, j n + n) */
void mf_mass_action_sensitivity_jacobian(mf_eval *e, const double *y, const double *sens,
                                         const int64_t *dirpos, int64_t nq, double *hs)
{
    const mf_model *m = e->m;
    const int64_t n = m->n_state, w = m->width;
    double *hess = e->grad;
    for (int64_t i = 0; i < n * n * nq; i++)
        hs[i] = 0.0;
    for (int64_t r = 0; r < m->n_reactions; r++) {
        const double base = e->kbase[r];
        const int64_t jr = dirpos[m->rpar[r]];
        const int64_t cnt = m->rcnt[r];
        const int64_t q0 = e->net_start[r], q1 = e->net_start[r + 1];
        for (int64_t a = 0; a < cnt; a++) {
            const int64_t sa = m->ridx[r * w + a], oa = m->rord[r * w + a];
            /* row a of the Hessian of rate r */
            for (int64_t b = 0; b < cnt; b++) {
                const int64_t sb = m->ridx[r * w + b], ob = m->rord[r * w + b];
                double h;
                if (a == b)
                    h = base * power_derivative(y[sa], oa, 2);
                else
                    h = base * power_derivative(y[sa], oa, 1) * power_derivative(y[sb], ob, 1);
                if (h != 0.0)
                    for (int64_t c = 0; c < cnt; c++)
                        if (c != a && c != b)
                            h *= power(y[m->ridx[r * w + c]], m->rord[r * w + c]);
                hess[b] = h;
            }
            const double grad = jr >= 0 ? mass_action_rate_gradient(m, y, r, a, base) : 0.0;
            for (int64_t j = 0; j < nq; j++) {
                double v = j == jr ? grad : 0.0;
                for (int64_t b = 0; b < cnt; b++)
                    v += hess[b] * sens[j * n + m->ridx[r * w + b]];
                for (int64_t q = q0; q < q1; q++)
                    hs[(j * n + sa) * n + e->net_species[q]] += e->net_coef[q] * v;
            }
        }
    }
}
