/* Declarations shared by the compiled simulation library of mechfit.simulate.
 *
 * The Python side (mechfit/simulate/compiled.py) fills the two structures below with
 * pointers into C-contiguous numpy arrays (float64 or int64) and calls the entry points
 * marked "entry point" through ctypes. Nothing here keeps state between calls: every
 * call allocates its own work memory, so calls from several threads at once are safe.
 */
#ifndef MECHFIT_KINETICS_H
#define MECHFIT_KINETICS_H

#include <stdint.h>

/* per-system status codes (mechfit.simulate.integrator.REASONS) */
#define MF_OK 0
#define MF_STEP_CAP 1
#define MF_STEP_TOO_SMALL 2
#define MF_NOT_FINITE 3
#define MF_INVALID_INPUT 4

/* return codes of the entry points */
#define MF_DONE 0
#define MF_NO_MEMORY 1

/* layout version: change it with any change of the structures below (the Python side
 * refuses a library built from other sources) */
#define MF_LAYOUT_VERSION 1

/* kinds of model tables (mechfit.simulate.kernel) */
#define MF_KIND_MASS_ACTION 0
#define MF_KIND_PROGRAM 1

/* opcodes of the stack machine (mechfit.simulate.program) */
#define MF_OP_CONST 0
#define MF_OP_STATE 1
#define MF_OP_PARAM 2
#define MF_OP_INITIAL 3
#define MF_OP_ADD 4
#define MF_OP_MUL 5
#define MF_OP_POW 6
#define MF_OP_POWI 7
#define MF_OP_EXP 8
#define MF_OP_LOG 9
#define MF_OP_ABS 10
#define MF_OP_SIGN 11

/* Python's max(a, b) and min(a, b): the first argument unless the second is strictly
 * larger (smaller), so a NaN in the first place is kept */
#define MF_MAX(a, b) ((b) > (a) ? (b) : (a))
#define MF_MIN(a, b) ((b) < (a) ? (b) : (a))

/* a helper the compiler must inline (so that loop lengths known at the call are used),
 * and one it must not (a rare call: one copy is enough) */
#if defined(__GNUC__)
#define MF_INLINE static inline __attribute__((always_inline))
#define MF_NOINLINE static __attribute__((noinline))
#else
#define MF_INLINE static inline
#define MF_NOINLINE static
#endif

/* The numeric tables of one kinetic model (row-major int64 / float64 arrays). */
typedef struct {
    int64_t kind;
    int64_t n_state;       /* integrated species */
    int64_t n_parameters;
    int64_t n_species;     /* all mechanism species (output columns, [X]0 entries) */
    /* mass action: stoich (n_state x n_reactions); ridx, rord (n_reactions x width):
     * reactant species and order; rcnt: reactants per reaction; rpar: rate-constant
     * index; rfac: statistical factor */
    int64_t n_reactions;
    int64_t width;
    const double *stoich;
    const int64_t *ridx;
    const int64_t *rord;
    const int64_t *rcnt;
    const int64_t *rpar;
    const double *rfac;
    /* programs: ops, args (n_ops), consts (n_consts); tables of (row..., start, end)
     * slices of ops */
    const int64_t *ops;
    const int64_t *args;
    int64_t n_ops;
    const double *consts;
    int64_t n_consts;
    int64_t stack_size;
    const int64_t *rhs;                  /* n_state x 2: start, end */
    const int64_t *jacobian;             /* x 4: i, j, start, end */
    int64_t n_jacobian;
    const int64_t *forcing;              /* x 4: i, direction, start, end */
    int64_t n_forcing;
    const int64_t *second;               /* x 5: i, j, m, start, end (d2 f_i / dy_j dy_m) */
    int64_t n_second;
    const int64_t *mixed;                /* x 5: i, j, direction, start, end */
    int64_t n_mixed;
    const int64_t *algebraic;            /* x 3: output column, start, end */
    int64_t n_algebraic;
    const int64_t *algebraic_state;      /* x 4: algebraic row, state j, start, end */
    int64_t n_algebraic_state;
    const int64_t *algebraic_direction;  /* x 4: algebraic row, direction, start, end */
    int64_t n_algebraic_direction;
} mf_model;

/* A batch of systems: inputs, per-system results and (optionally) sensitivities. */
typedef struct {
    int64_t n_systems;
    int64_t n_times;
    const double *times;        /* n_systems x n_times, sorted, >= 0 */
    const int64_t *counts;      /* used output times per system */
    const double *y0;           /* n_systems x n_state */
    const double *params;       /* n_systems x n_parameters */
    const double *x0;           /* n_systems x n_species */
    const double *rtol;         /* n_systems */
    const double *atol;         /* n_systems x n_state */
    int64_t max_steps;
    const int64_t *state_index; /* n_state: output column of each state species */
    double *out;                /* n_systems x n_times x n_species, pre-filled with NaN */
    int64_t *status;            /* n_systems; systems with status != 0 are skipped */
    int64_t *steps;
    double *t_reached;
    int64_t n_directions;       /* selected sensitivity directions (nq) */
    const int64_t *dirpos;      /* n_parameters + n_species: position or -1 */
    const double *sens_init;    /* n_state x nq */
    const double *sens_atol;    /* n_systems x nq */
    double *sens_out;           /* n_systems x n_times x n_species x nq */
} mf_batch;

/* Evaluation context of one model for one call: the sparse stoichiometry and scratch
 * space, plus the parameters and initial concentrations of the current system. */
typedef struct {
    const mf_model *m;
    int64_t *net_start;    /* n_reactions + 1: reaction r's non-zero column of N is */
    int64_t *net_species;  /* net_species/net_coef[net_start[r]:net_start[r + 1]] */
    double *net_coef;
    double *stoich_t;      /* n_reactions x n_state: N transposed, dense */
    int64_t *factor_start; /* n_reactions + 1: the species whose product is the rate */
    int64_t *factor_species; /* of reaction r, each repeated order times */
    double *kbase;         /* n_reactions: f_r k_r of the current system */
    double *stack;         /* stack_size */
    double *grad;          /* width: one reaction's gradient or Hessian row */
    const double *p;
    const double *x0;
} mf_eval;

/* model.c */
int mf_eval_open(mf_eval *e, const mf_model *m);
void mf_eval_close(mf_eval *e);
void mf_eval_system(mf_eval *e, const double *p, const double *x0);
void mf_rhs(mf_eval *e, const double *y, double *out);
void mf_jacobian(mf_eval *e, const double *y, double *jac);
void mf_sensitivity_jacobian(mf_eval *e, const double *y, const double *sens,
                             const int64_t *dirpos, int64_t nq, double *hs);

/* mass_action.c */
void mf_mass_action_rhs(mf_eval *e, const double *y, double *out);
void mf_mass_action_jacobian(mf_eval *e, const double *y, double *jac);
void mf_mass_action_sensitivity_jacobian(mf_eval *e, const double *y, const double *sens,
                                         const int64_t *dirpos, int64_t nq, double *hs);

/* program.c */
double mf_evaluate(const int64_t *ops, const int64_t *args, const double *consts,
                   int64_t start, int64_t end, const double *y, const double *p,
                   const double *x0, double *stack);                     /* entry point */
void mf_program_rhs(mf_eval *e, const double *y, double *out);
void mf_program_jacobian(mf_eval *e, const double *y, double *jac);
void mf_program_sensitivity_rhs(mf_eval *e, const double *y, const double *sens,
                                const int64_t *dirpos, int64_t nq, double *f, double *g,
                                double *jac);
void mf_program_sensitivity_jacobian(mf_eval *e, const double *y, const double *sens,
                                     const int64_t *dirpos, int64_t nq, double *hs);
void mf_outputs(mf_eval *e, const int64_t *state_index, const double *y, double *out);
void mf_output_sensitivities(mf_eval *e, const int64_t *state_index, const double *y,
                             const double *sens, const int64_t *dirpos, int64_t nq,
                             double *out);

/* check.c: entry points */
const char *mf_source_fingerprint(void);
void mf_layout(int64_t *out);
int64_t mf_check_model(const mf_model *m);
int64_t mf_check_program(const int64_t *ops, const int64_t *args, int64_t n_ops,
                         int64_t n_consts, int64_t n_state, int64_t n_parameters,
                         int64_t n_initial, int64_t stack_size, int64_t start, int64_t end);

/* entry points: rodas4.c, bdf.c, initial_rate.c */
int mf_solve_rodas4(const mf_model *m, mf_batch *b);
int mf_solve_bdf(const mf_model *m, mf_batch *b);
int mf_initial_rates(const mf_model *m, int64_t n_systems, const double *y0,
                     const double *params, const double *x0, const int64_t *state_index,
                     double *out);

#endif
