/* Initial rates d[X]/dt at t = 0: the right-hand side at the initial state for the
 * integrated species, and for a species given by an algebraic expression X = g(y) the
 * chain rule sum_l (dg/dy_l) dy_l/dt (common practice). */
#include <stdlib.h>

#include "kinetics.h"

int mf_initial_rates(const mf_model *m, int64_t n_systems, const double *y0,
                     const double *params, const double *x0, const int64_t *state_index,
                     double *out)
{
    const int64_t n = m->n_state, n_out = m->n_species;
    mf_eval e;
    if (mf_eval_open(&e, m) != MF_DONE)
        return MF_NO_MEMORY;
    double *f = malloc(sizeof(double) * (size_t)(n > 0 ? n : 1));
    if (!f) {
        mf_eval_close(&e);
        return MF_NO_MEMORY;
    }
    for (int64_t s = 0; s < n_systems; s++) {
        const double *y = y0 + s * n;
        double *row = out + s * n_out;
        mf_eval_system(&e, params + s * m->n_parameters, x0 + s * n_out);
        mf_rhs(&e, y, f);
        for (int64_t k = 0; k < n; k++)
            row[state_index[k]] = f[k];
        for (int64_t a = 0; a < m->n_algebraic; a++)
            row[m->algebraic[3 * a]] = 0.0;
        for (int64_t k = 0; k < m->n_algebraic_state; k++) {
            const int64_t *t = m->algebraic_state + 4 * k;
            const double v = mf_evaluate(m->ops, m->args, m->consts, t[2], t[3], y, e.p, e.x0,
                                         e.stack);
            row[m->algebraic[3 * t[0]]] += v * f[t[1]];
        }
    }
    free(f);
    mf_eval_close(&e);
    return MF_DONE;
}
