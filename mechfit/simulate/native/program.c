/* The stack machine that evaluates the opcode programs of mechfit.simulate.program, and
 * the right-hand side, Jacobian and sensitivity terms of models given as programs
 * (empirical laws, steady-state and pre-equilibrium variants). */
#include <math.h>

#include "kinetics.h"

/* Run the postfix program ops[start:end] on state y, parameters p and initial
 * concentrations x0; stack must hold the program's depth. */
double mf_evaluate(const int64_t *ops, const int64_t *args, const double *consts,
                   int64_t start, int64_t end, const double *y, const double *p,
                   const double *x0, double *stack)
{
    double *top = stack - 1; /* the value on top of the stack */
    for (int64_t pc = start; pc < end; pc++) {
        const int64_t a = args[pc];
        double v, b, ex;
        switch (ops[pc]) {
        case MF_OP_STATE:
            *++top = y[a];
            break;
        case MF_OP_PARAM:
            *++top = p[a];
            break;
        case MF_OP_CONST:
            *++top = consts[a];
            break;
        case MF_OP_MUL: /* the top value times the next ones, down the stack */
            v = top[0] * top[-1];
            for (int64_t i = 2; i < a; i++)
                v *= top[-i];
            top -= a - 1;
            *top = v;
            break;
        case MF_OP_ADD:
            v = top[0] + top[-1];
            for (int64_t i = 2; i < a; i++)
                v += top[-i];
            top -= a - 1;
            *top = v;
            break;
        case MF_OP_POWI: {
            b = *top;
            const int64_t n = a >= 0 ? a : -a;
            v = 1.0;
            for (int64_t i = 0; i < n; i++)
                v *= b;
            *top = a >= 0 ? v : 1.0 / v;
            break;
        }
        case MF_OP_INITIAL:
            *++top = x0[a];
            break;
        case MF_OP_POW:
            ex = *top--;
            b = *top;
            if (b > 0.0)
                *top = exp(ex * log(b));
            else if (b == 0.0 && ex > 0.0)
                *top = 0.0;
            else
                *top = NAN;
            break;
        case MF_OP_EXP:
            *top = exp(*top);
            break;
        case MF_OP_LOG:
            b = *top;
            *top = b > 0.0 ? log(b) : NAN;
            break;
        case MF_OP_ABS:
            *top = fabs(*top);
            break;
        case MF_OP_SIGN:
            b = *top;
            *top = b > 0.0 ? 1.0 : (b < 0.0 ? -1.0 : 0.0);
            break;
        default:
            break;
        }
    }
    return stack[0];
}

static inline double run(mf_eval *e, const int64_t *row, const double *y)
{
    const mf_model *m = e->m;
    return mf_evaluate(m->ops, m->args, m->consts, row[0], row[1], y, e->p, e->x0, e->stack);
}

void mf_program_rhs(mf_eval *e, const double *y, double *out)
{
    for (int64_t i = 0; i < e->m->n_state; i++)
        out[i] = run(e, e->m->rhs + 2 * i, y);
}

void mf_program_jacobian(mf_eval *e, const double *y, double *jac)
{
    const mf_model *m = e->m;
    const int64_t n = m->n_state;
    for (int64_t i = 0; i < n * n; i++)
        jac[i] = 0.0;
    for (int64_t k = 0; k < m->n_jacobian; k++) {
        const int64_t *row = m->jacobian + 4 * k;
        jac[row[0] * n + row[1]] = run(e, row + 2, y);
    }
}

/* f = dy/dt and g_j = J sens_j + df/d theta_j for the nq selected directions j (vectors
 * of direction j at [j n, j n + n)); J itself into jac unless jac is NULL (the Jacobian
 * programs run once for both) */
void mf_program_sensitivity_rhs(mf_eval *e, const double *y, const double *sens,
                                const int64_t *dirpos, int64_t nq, double *f, double *g,
                                double *jac)
{
    const mf_model *m = e->m;
    const int64_t n = m->n_state;
    mf_program_rhs(e, y, f);
    if (jac)
        for (int64_t i = 0; i < n * n; i++)
            jac[i] = 0.0;
    for (int64_t i = 0; i < n * nq; i++)
        g[i] = 0.0;
    if (nq == 0 && !jac)
        return;
    for (int64_t k = 0; k < m->n_forcing && nq > 0; k++) {
        const int64_t *row = m->forcing + 4 * k;
        const int64_t j = dirpos[row[1]];
        if (j >= 0)
            g[j * n + row[0]] += run(e, row + 2, y);
    }
    for (int64_t k = 0; k < m->n_jacobian; k++) {
        const int64_t *row = m->jacobian + 4 * k;
        const double v = run(e, row + 2, y);
        if (jac)
            jac[row[0] * n + row[1]] = v;
        for (int64_t j = 0; j < nq; j++)
            g[j * n + row[0]] += v * sens[j * n + row[1]];
    }
}

/* hs[(j n + l) n + i] = d/dy_l (J sens_j + df/d theta_j)_i: the off-diagonal blocks of
 * the Jacobian of the sensitivity system, stored by column, from the second and mixed
 * derivatives (sens_j at [j n, j n + n)) */
void mf_program_sensitivity_jacobian(mf_eval *e, const double *y, const double *sens,
                                     const int64_t *dirpos, int64_t nq, double *hs)
{
    const mf_model *m = e->m;
    const int64_t n = m->n_state;
    for (int64_t i = 0; i < n * n * nq; i++)
        hs[i] = 0.0;
    for (int64_t k = 0; k < m->n_second; k++) {
        const int64_t *row = m->second + 5 * k;
        const double v = run(e, row + 3, y);
        for (int64_t j = 0; j < nq; j++)
            hs[(j * n + row[1]) * n + row[0]] += v * sens[j * n + row[2]];
    }
    for (int64_t k = 0; k < m->n_mixed; k++) {
        const int64_t *row = m->mixed + 5 * k;
        const int64_t j = dirpos[row[2]];
        if (j >= 0)
            hs[(j * n + row[1]) * n + row[0]] += run(e, row + 3, y);
    }
}

/* all mechanism species: state species copied (state_index[k] is the output column of
 * state k), algebraic species evaluated */
void mf_outputs(mf_eval *e, const int64_t *state_index, const double *y, double *out)
{
    const mf_model *m = e->m;
    for (int64_t k = 0; k < m->n_state; k++)
        out[state_index[k]] = y[k];
    for (int64_t a = 0; a < m->n_algebraic; a++) {
        const int64_t *row = m->algebraic + 3 * a;
        out[row[0]] = run(e, row + 1, y);
    }
}

/* sensitivities of all mechanism species, out[column * nq + j], from those of the state
 * stored by direction (sens[j n + k]): state rows copied, algebraic rows by the chain
 * rule dg/dy sens + dg/dtheta */
void mf_output_sensitivities(mf_eval *e, const int64_t *state_index, const double *y,
                             const double *sens, const int64_t *dirpos, int64_t nq,
                             double *out)
{
    const mf_model *m = e->m;
    const int64_t n = m->n_state;
    for (int64_t k = 0; k < n; k++)
        for (int64_t j = 0; j < nq; j++)
            out[state_index[k] * nq + j] = sens[j * n + k];
    for (int64_t a = 0; a < m->n_algebraic; a++)
        for (int64_t j = 0; j < nq; j++)
            out[m->algebraic[3 * a] * nq + j] = 0.0;
    for (int64_t k = 0; k < m->n_algebraic_state; k++) {
        const int64_t *row = m->algebraic_state + 4 * k;
        const double v = run(e, row + 2, y);
        const int64_t col = m->algebraic[3 * row[0]], s = row[1];
        for (int64_t j = 0; j < nq; j++)
            out[col * nq + j] += v * sens[j * n + s];
    }
    for (int64_t k = 0; k < m->n_algebraic_direction; k++) {
        const int64_t *row = m->algebraic_direction + 4 * k;
        const int64_t j = dirpos[row[1]];
        if (j >= 0)
            out[m->algebraic[3 * row[0]] * nq + j] += run(e, row + 2, y);
    }
}
