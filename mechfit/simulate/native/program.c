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
    int64_t sp = 0;
    for (int64_t pc = start; pc < end; pc++) {
        const int64_t a = args[pc];
        double v, b, ex;
        switch (ops[pc]) {
        case MF_OP_STATE:
            stack[sp++] = y[a];
            break;
        case MF_OP_PARAM:
            stack[sp++] = p[a];
            break;
        case MF_OP_CONST:
            stack[sp++] = consts[a];
            break;
        case MF_OP_MUL:
            v = stack[sp - 1];
            for (int64_t i = 2; i <= a; i++)
                v *= stack[sp - i];
            sp -= a;
            stack[sp++] = v;
            break;
        case MF_OP_ADD:
            v = stack[sp - 1];
            for (int64_t i = 2; i <= a; i++)
                v += stack[sp - i];
            sp -= a;
            stack[sp++] = v;
            break;
        case MF_OP_POWI: {
            b = stack[sp - 1];
            const int64_t n = a >= 0 ? a : -a;
            v = 1.0;
            for (int64_t i = 0; i < n; i++)
                v *= b;
            stack[sp - 1] = a >= 0 ? v : 1.0 / v;
            break;
        }
        case MF_OP_INITIAL:
            stack[sp++] = x0[a];
            break;
        case MF_OP_POW:
            ex = stack[sp - 1];
            b = stack[sp - 2];
            sp -= 1;
            if (b > 0.0)
                stack[sp - 1] = exp(ex * log(b));
            else if (b == 0.0 && ex > 0.0)
                stack[sp - 1] = 0.0;
            else
                stack[sp - 1] = NAN;
            break;
        case MF_OP_EXP:
            stack[sp - 1] = exp(stack[sp - 1]);
            break;
        case MF_OP_LOG:
            b = stack[sp - 1];
            stack[sp - 1] = b > 0.0 ? log(b) : NAN;
            break;
        case MF_OP_ABS:
            stack[sp - 1] = fabs(stack[sp - 1]);
            break;
        case MF_OP_SIGN:
            b = stack[sp - 1];
            stack[sp - 1] = b > 0.0 ? 1.0 : (b < 0.0 ? -1.0 : 0.0);
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

void mf_program_forcing(mf_eval *e, const double *y, const int64_t *dirpos, int64_t nq,
                        double *forcing)
{
    const mf_model *m = e->m;
    for (int64_t i = 0; i < m->n_state * nq; i++)
        forcing[i] = 0.0;
    for (int64_t k = 0; k < m->n_forcing; k++) {
        const int64_t *row = m->forcing + 4 * k;
        const int64_t j = dirpos[row[1]];
        if (j >= 0)
            forcing[row[0] * nq + j] = run(e, row + 2, y);
    }
}

void mf_program_coupling(mf_eval *e, const double *y, const double *sens, const double *u,
                         const int64_t *dirpos, int64_t nq, double *out)
{
    const mf_model *m = e->m;
    for (int64_t i = 0; i < m->n_state * nq; i++)
        out[i] = 0.0;
    for (int64_t k = 0; k < m->n_second; k++) {
        const int64_t *row = m->second + 5 * k;
        const double vu = run(e, row + 3, y) * u[row[1]];
        const int64_t i = row[0], s = row[2];
        for (int64_t j = 0; j < nq; j++)
            out[i * nq + j] += vu * sens[s * nq + j];
    }
    for (int64_t k = 0; k < m->n_mixed; k++) {
        const int64_t *row = m->mixed + 5 * k;
        const int64_t j = dirpos[row[2]];
        if (j >= 0)
            out[row[0] * nq + j] += run(e, row + 3, y) * u[row[1]];
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

/* sensitivities of all mechanism species, out[column * nq + j]: state rows copied,
 * algebraic rows by the chain rule dg/dy sens + dg/dtheta */
void mf_output_sensitivities(mf_eval *e, const int64_t *state_index, const double *y,
                             const double *sens, const int64_t *dirpos, int64_t nq,
                             double *out)
{
    const mf_model *m = e->m;
    for (int64_t k = 0; k < m->n_state; k++)
        for (int64_t j = 0; j < nq; j++)
            out[state_index[k] * nq + j] = sens[k * nq + j];
    for (int64_t a = 0; a < m->n_algebraic; a++)
        for (int64_t j = 0; j < nq; j++)
            out[m->algebraic[3 * a] * nq + j] = 0.0;
    for (int64_t k = 0; k < m->n_algebraic_state; k++) {
        const int64_t *row = m->algebraic_state + 4 * k;
        const double v = run(e, row + 2, y);
        const int64_t col = m->algebraic[3 * row[0]], s = row[1];
        for (int64_t j = 0; j < nq; j++)
            out[col * nq + j] += v * sens[s * nq + j];
    }
    for (int64_t k = 0; k < m->n_algebraic_direction; k++) {
        const int64_t *row = m->algebraic_direction + 4 * k;
        const int64_t j = dirpos[row[1]];
        if (j >= 0)
            out[m->algebraic[3 * row[0]] * nq + j] += run(e, row + 2, y);
    }
}
