/* Consistency checks of model tables before any integration, so that tables that do not
 * fit together are refused with a code instead of being read out of bounds, and the
 * layout of the shared structures for the Python side to compare with its own. */
#include "kinetics.h"

#ifndef MF_SOURCE_FINGERPRINT
#define MF_SOURCE_FINGERPRINT "unknown"
#endif

/* the fingerprint of the sources this library was built from (setup.py) */
const char *mf_source_fingerprint(void)
{
    return MF_SOURCE_FINGERPRINT;
}

/* out[0] = layout version, out[1] = sizeof(mf_model), out[2] = sizeof(mf_batch) */
void mf_layout(int64_t *out)
{
    out[0] = MF_LAYOUT_VERSION;
    out[1] = (int64_t)sizeof(mf_model);
    out[2] = (int64_t)sizeof(mf_batch);
}

static int in_range(int64_t v, int64_t n)
{
    return v >= 0 && v < n;
}

/* the program ops[start:end] uses arguments in range and leaves exactly one value on a
 * stack of at most stack_size entries */
static int program_ok(const mf_model *m, int64_t start, int64_t end)
{
    if (start < 0 || end > m->n_ops || start >= end)
        return 0;
    int64_t sp = 0;
    for (int64_t pc = start; pc < end; pc++) {
        const int64_t a = m->args[pc];
        int64_t need = 0, push = 0;
        switch (m->ops[pc]) {
        case MF_OP_CONST:
            if (!in_range(a, m->n_consts))
                return 0;
            push = 1;
            break;
        case MF_OP_STATE:
            if (!in_range(a, m->n_state))
                return 0;
            push = 1;
            break;
        case MF_OP_PARAM:
            if (!in_range(a, m->n_parameters))
                return 0;
            push = 1;
            break;
        case MF_OP_INITIAL:
            if (!in_range(a, m->n_species))
                return 0;
            push = 1;
            break;
        case MF_OP_ADD:
        case MF_OP_MUL: /* of at least two values (sympy's sums and products) */
            if (a < 2)
                return 0;
            need = a;
            push = 1;
            break;
        case MF_OP_POW:
            need = 2;
            push = 1;
            break;
        case MF_OP_POWI:
        case MF_OP_EXP:
        case MF_OP_LOG:
        case MF_OP_ABS:
        case MF_OP_SIGN:
            need = 1;
            push = 1;
            break;
        default:
            return 0;
        }
        if (sp < need)
            return 0;
        sp += push - need;
        if (sp > m->stack_size)
            return 0;
    }
    return sp == 1;
}

/* every row of a table of `cols` columns ending in (start, end): the leading columns
 * are below the given limits and the program is sound */
static int table_ok(const mf_model *m, const int64_t *tab, int64_t rows, int64_t cols,
                    const int64_t *limits)
{
    for (int64_t k = 0; k < rows; k++) {
        const int64_t *row = tab + k * cols;
        for (int64_t c = 0; c < cols - 2; c++)
            if (!in_range(row[c], limits[c]))
                return 0;
        if (!program_ok(m, row[cols - 2], row[cols - 1]))
            return 0;
    }
    return 1;
}

/* 0 when the tables fit together; else 1 (sizes or kind), 2 (mass-action tables),
 * 3 (a program table) */
int64_t mf_check_model(const mf_model *m)
{
    const int64_t n = m->n_state, np = m->n_parameters, ns = m->n_species;
    const int64_t nd = np + ns, na = m->n_algebraic;
    if ((m->kind != MF_KIND_MASS_ACTION && m->kind != MF_KIND_PROGRAM) || n < 1 || np < 0 ||
        ns < n || m->n_reactions < 0 || m->width < 1 || m->n_ops < 0 || m->n_consts < 0 ||
        m->stack_size < 1)
        return 1;
    if (m->kind == MF_KIND_PROGRAM && m->n_reactions != 0)
        return 2;
    for (int64_t r = 0; r < m->n_reactions; r++) {
        if (m->rcnt[r] < 0 || m->rcnt[r] > m->width || !in_range(m->rpar[r], np))
            return 2;
        for (int64_t a = 0; a < m->rcnt[r]; a++)
            if (!in_range(m->ridx[r * m->width + a], n) || m->rord[r * m->width + a] < 0)
                return 2;
    }
    const int64_t rhs_limits[1] = {0};  /* (start, end) only */
    const int64_t jac_limits[2] = {n, n};
    const int64_t dir_limits[2] = {n, nd};
    const int64_t second_limits[3] = {n, n, n};
    const int64_t mixed_limits[3] = {n, n, nd};
    const int64_t alg_limits[1] = {ns};
    const int64_t alg_state_limits[2] = {na, n};
    const int64_t alg_dir_limits[2] = {na, nd};
    if (m->kind == MF_KIND_PROGRAM && !table_ok(m, m->rhs, n, 2, rhs_limits))
        return 3;
    if (!table_ok(m, m->jacobian, m->n_jacobian, 4, jac_limits) ||
        !table_ok(m, m->forcing, m->n_forcing, 4, dir_limits) ||
        !table_ok(m, m->second, m->n_second, 5, second_limits) ||
        !table_ok(m, m->mixed, m->n_mixed, 5, mixed_limits) ||
        !table_ok(m, m->algebraic, na, 3, alg_limits) ||
        !table_ok(m, m->algebraic_state, m->n_algebraic_state, 4, alg_state_limits) ||
        !table_ok(m, m->algebraic_direction, m->n_algebraic_direction, 4, alg_dir_limits))
        return 3;
    return 0;
}

/* 1 when the program ops[start:end] is sound for vectors of these lengths, else 0 */
int64_t mf_check_program(const int64_t *ops, const int64_t *args, int64_t n_ops,
                         int64_t n_consts, int64_t n_state, int64_t n_parameters,
                         int64_t n_initial, int64_t stack_size, int64_t start, int64_t end)
{
    mf_model m = {0};
    m.ops = ops;
    m.args = args;
    m.n_ops = n_ops;
    m.n_consts = n_consts;
    m.n_state = n_state;
    m.n_parameters = n_parameters;
    m.n_species = n_initial;
    m.stack_size = stack_size;
    return program_ok(&m, start, end);
}
