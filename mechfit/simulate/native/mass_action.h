/* Mass-action right-hand sides, inline so that the integrators' copies for a known number
 * of species n get loops of known length: rates r_j = f_j k_j prod_i y_i^nu_ij,
 * dy/dt = N r, and the right-hand side of the forward sensitivity equations (IUPAC Gold
 * Book, "rate of reaction"; common practice). For the few species of the specialised
 * copies N is used dense (its transpose, stoich_t), for more species through its
 * non-zero entries; both add the terms of each species in the order of the reactions,
 * so they give the same results. */
#ifndef MECHFIT_MASS_ACTION_H
#define MECHFIT_MASS_ACTION_H

#include "kinetics.h"

/* up to this many species the stoichiometric matrix is used dense */
#define MF_DENSE_MAX 8

/* rate r of reaction r: f_r k_r times its reactant factors, in table order */
MF_INLINE double mass_action_rate(const mf_eval *e, const double *y, int64_t r)
{
    double v = e->kbase[r];
    for (int64_t q = e->factor_start[r]; q < e->factor_start[r + 1]; q++)
        v *= y[e->factor_species[q]];
    return v;
}

/* d r_r / d y_i for the species i of reactant a of reaction r (the product taken in one
 * fixed order, so that every caller gets the same bits) */
MF_INLINE double mass_action_rate_gradient(const mf_model *m, const double *y, int64_t r,
                                           int64_t a, double base)
{
    const int64_t w = m->width, cnt = m->rcnt[r], o = m->rord[r * w + a];
    double d = base * (double)o;
    const double b = y[m->ridx[r * w + a]];
    for (int64_t t = 1; t < o; t++)
        d *= b;
    for (int64_t c = 0; c < cnt; c++) {
        if (c == a)
            continue;
        const double bc = y[m->ridx[r * w + c]];
        for (int64_t t = m->rord[r * w + c]; t > 0; t--)
            d *= bc;
    }
    return d;
}

/* out += coef N[:, r] (column r of N; n known in the specialised copies) */
MF_INLINE void add_reaction(const mf_eval *e, int64_t r, double coef, double *out,
                            const int64_t n)
{
    if (n <= MF_DENSE_MAX) {
        const double *st = e->stoich_t + r * n;
        for (int64_t i = 0; i < n; i++)
            out[i] += st[i] * coef;
    } else {
        for (int64_t q = e->net_start[r]; q < e->net_start[r + 1]; q++)
            out[e->net_species[q]] += e->net_coef[q] * coef;
    }
}

/* dy/dt = N r */
MF_INLINE void mass_action_rhs(const mf_eval *e, const double *y, double *f, const int64_t n)
{
    for (int64_t i = 0; i < n; i++)
        f[i] = 0.0;
    for (int64_t r = 0; r < e->m->n_reactions; r++)
        add_reaction(e, r, mass_action_rate(e, y, r), f, n);
}

/* f = dy/dt and, for the nq selected directions j, g_j = J sens_j + df/d theta_j (rate
 * constants enter as ln k: d r / d ln k = r), reaction by reaction without forming J;
 * the vectors of direction j are at [j n, j n + n). J itself into jac unless jac is
 * NULL (the same bits as mf_mass_action_jacobian). */
MF_INLINE void mass_action_sensitivity_rhs(const mf_eval *e, const double *y,
                                           const double *sens, const int64_t *dirpos,
                                           int64_t nq, double *f, double *g, double *jac,
                                           const int64_t n)
{
    const mf_model *m = e->m;
    const int64_t w = m->width;
    for (int64_t i = 0; i < n; i++)
        f[i] = 0.0;
    for (int64_t i = 0; i < n * nq; i++)
        g[i] = 0.0;
    if (jac)
        for (int64_t i = 0; i < n * n; i++)
            jac[i] = 0.0;
    for (int64_t r = 0; r < m->n_reactions; r++) {
        const double base = e->kbase[r];
        const double rate = mass_action_rate(e, y, r);
        add_reaction(e, r, rate, f, n);
        if (nq == 0 && !jac)
            continue;
        const int64_t cnt = m->rcnt[r], jr = dirpos[m->rpar[r]];
        const int64_t *col = m->ridx + r * w;
        double *grad = e->grad;
        for (int64_t a = 0; a < cnt; a++)
            grad[a] = mass_action_rate_gradient(m, y, r, a, base);
        if (jac)
            for (int64_t a = 0; a < cnt; a++)
                for (int64_t q = e->net_start[r]; q < e->net_start[r + 1]; q++)
                    jac[e->net_species[q] * n + col[a]] += e->net_coef[q] * grad[a];
        for (int64_t j = 0; j < nq; j++) {
            const double *sj = sens + j * n;
            double v = j == jr ? rate : 0.0;
            for (int64_t a = 0; a < cnt; a++)
                v += grad[a] * sj[col[a]];
            add_reaction(e, r, v, g + j * n, n);
        }
    }
}

#endif
