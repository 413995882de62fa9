/* Dense LU factorisation with partial pivoting (row interchanges) and the triangular
 * solves (common practice; G. H. Golub and C. F. Van Loan, Matrix Computations,
 * section 3.4). a is n x n, row-major. Inline, so that an integrator specialised for a
 * number of species gets loops of known length. */
#ifndef MECHFIT_LU_H
#define MECHFIT_LU_H

#include <math.h>

#include "kinetics.h"

/* In-place LU of a: P a = L U with unit lower L. Returns 0 when a pivot is zero or not
 * finite (singular or overflowed matrix), else 1. On return perm[i] is the row of the
 * original a that became row i (the permutation P), and the diagonal holds the
 * reciprocals of the pivots of U, so that solving multiplies instead of dividing. */
MF_INLINE int lu_factor(double *a, int64_t *perm, int64_t n)
{
    for (int64_t i = 0; i < n; i++)
        perm[i] = i;
    for (int64_t k = 0; k < n; k++) {
        double big = fabs(a[k * n + k]);
        int64_t row = k;
        for (int64_t i = k + 1; i < n; i++) {
            const double v = fabs(a[i * n + k]);
            if (v > big) {
                big = v;
                row = i;
            }
        }
        if (big == 0.0 || !isfinite(big))
            return 0;
        if (row != k) {
            for (int64_t j = 0; j < n; j++) {
                const double tmp = a[k * n + j];
                a[k * n + j] = a[row * n + j];
                a[row * n + j] = tmp;
            }
            const int64_t p = perm[k];
            perm[k] = perm[row];
            perm[row] = p;
        }
        const double inv = 1.0 / a[k * n + k];
        a[k * n + k] = inv;
        for (int64_t i = k + 1; i < n; i++) {
            a[i * n + k] *= inv;
            const double f = a[i * n + k];
            if (f != 0.0)
                for (int64_t j = k + 1; j < n; j++)
                    a[i * n + j] -= f * a[k * n + j];
        }
    }
    return 1;
}

/* x = a^-1 b with the factors of mf_lu_factor (x and b must not overlap). */
MF_INLINE void lu_solve(const double *a, const int64_t *perm, const double *b, double *x,
                        int64_t n)
{
    for (int64_t i = 0; i < n; i++) {
        double s = b[perm[i]];
        for (int64_t j = 0; j < i; j++)
            s -= a[i * n + j] * x[j];
        x[i] = s;
    }
    for (int64_t i = n - 1; i >= 0; i--) {
        double s = x[i];
        for (int64_t j = i + 1; j < n; j++)
            s -= a[i * n + j] * x[j];
        x[i] = s * a[i * n + i];
    }
}

#endif
