/* One interface to both kinds of model tables (mass action or opcode programs), and
 * the per-call evaluation context (sparse stoichiometry, scratch space). */
#include <stdlib.h>

#include "kinetics.h"

static void *alloc(size_t count, size_t size)
{
    return malloc(size * (count > 0 ? count : 1));
}

int mf_eval_open(mf_eval *e, const mf_model *m)
{
    const int64_t n = m->n_state, nr = m->n_reactions, w = m->width;
    int64_t nnz = 0, nfac = 0;
    e->m = m;
    e->p = NULL;
    e->x0 = NULL;
    for (int64_t i = 0; i < n * nr; i++)
        nnz += m->stoich[i] != 0.0;
    for (int64_t r = 0; r < nr; r++)
        for (int64_t a = 0; a < m->rcnt[r]; a++)
            nfac += m->rord[r * w + a];
    e->net_start = alloc((size_t)nr + 1, sizeof(int64_t));
    e->net_species = alloc((size_t)nnz, sizeof(int64_t));
    e->net_coef = alloc((size_t)nnz, sizeof(double));
    e->stoich_t = alloc((size_t)(nr * n), sizeof(double));
    e->factor_start = alloc((size_t)nr + 1, sizeof(int64_t));
    e->factor_species = alloc((size_t)nfac, sizeof(int64_t));
    e->kbase = alloc((size_t)nr, sizeof(double));
    e->stack = alloc((size_t)m->stack_size, sizeof(double));
    e->grad = alloc((size_t)w, sizeof(double));
    if (!e->net_start || !e->net_species || !e->net_coef || !e->stoich_t || !e->factor_start ||
        !e->factor_species || !e->kbase || !e->stack || !e->grad) {
        mf_eval_close(e);
        return MF_NO_MEMORY;
    }
    /* the non-zero entries of N by column (reaction), in ascending order of species */
    int64_t q = 0;
    for (int64_t r = 0; r < nr; r++) {
        e->net_start[r] = q;
        for (int64_t i = 0; i < n; i++)
            if (m->stoich[i * nr + r] != 0.0) {
                e->net_species[q] = i;
                e->net_coef[q] = m->stoich[i * nr + r];
                q++;
            }
    }
    e->net_start[nr] = q;
    for (int64_t r = 0; r < nr; r++)
        for (int64_t i = 0; i < n; i++)
            e->stoich_t[r * n + i] = m->stoich[i * nr + r];
    q = 0;
    for (int64_t r = 0; r < nr; r++) {
        e->factor_start[r] = q;
        for (int64_t a = 0; a < m->rcnt[r]; a++)
            for (int64_t t = 0; t < m->rord[r * w + a]; t++)
                e->factor_species[q++] = m->ridx[r * w + a];
    }
    e->factor_start[nr] = q;
    return MF_DONE;
}

void mf_eval_close(mf_eval *e)
{
    free(e->net_start);
    free(e->net_species);
    free(e->net_coef);
    free(e->stoich_t);
    free(e->factor_start);
    free(e->factor_species);
    free(e->kbase);
    free(e->stack);
    free(e->grad);
    e->net_start = e->net_species = e->factor_start = e->factor_species = NULL;
    e->net_coef = e->stoich_t = e->kbase = e->stack = e->grad = NULL;
}

/* the parameters and initial concentrations of the next system */
void mf_eval_system(mf_eval *e, const double *p, const double *x0)
{
    const mf_model *m = e->m;
    e->p = p;
    e->x0 = x0;
    for (int64_t r = 0; r < m->n_reactions; r++)
        e->kbase[r] = m->rfac[r] * p[m->rpar[r]];
}

void mf_rhs(mf_eval *e, const double *y, double *out)
{
    if (e->m->kind == MF_KIND_MASS_ACTION)
        mf_mass_action_rhs(e, y, out);
    else
        mf_program_rhs(e, y, out);
}

void mf_jacobian(mf_eval *e, const double *y, double *jac)
{
    if (e->m->kind == MF_KIND_MASS_ACTION)
        mf_mass_action_jacobian(e, y, jac);
    else
        mf_program_jacobian(e, y, jac);
}

void mf_sensitivity_jacobian(mf_eval *e, const double *y, const double *sens,
                             const int64_t *dirpos, int64_t nq, double *hs)
{
    if (e->m->kind == MF_KIND_MASS_ACTION)
        mf_mass_action_sensitivity_jacobian(e, y, sens, dirpos, nq, hs);
    else
        mf_program_sensitivity_jacobian(e, y, sens, dirpos, nq, hs);
}
