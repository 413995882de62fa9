/* The first step size of an integrator of order p (E. Hairer, S. P. Norsett and G. Wanner,
 * Solving ODEs I, 2nd ed., 1993, section II.4, "Starting step size"), in two halves around
 * the one right-hand side it needs: the caller evaluates f(y + h0 f(y)) between them. The
 * error weights are atol_i + rtol |y_i|. */
#ifndef MECHFIT_STEP_SIZE_H
#define MECHFIT_STEP_SIZE_H

#include <math.h>

#include "kinetics.h"

/* a weighted root mean square of y (d0) and f (d1), and the trial step h0 */
MF_INLINE double trial_step(const double *y, const double *f, const double *atol, double rt,
                            int64_t n, double t_end, double *d1_out)
{
    double d0 = 0.0, d1 = 0.0;
    for (int64_t i = 0; i < n; i++) {
        const double sc = atol[i] + rt * fabs(y[i]);
        d0 += (y[i] / sc) * (y[i] / sc);
        d1 += (f[i] / sc) * (f[i] / sc);
    }
    d0 = sqrt(d0 / (double)n);
    d1 = sqrt(d1 / (double)n);
    *d1_out = d1;
    return (d0 < 1e-5 || d1 < 1e-5) ? 1e-6 * t_end : 0.01 * d0 / d1;
}

/* the first step of a method of order `order`, from h0, d1 and f_probe = f(y + h0 f) */
MF_INLINE double first_step(const double *y, const double *f, const double *f_probe,
                            const double *atol, double rt, int64_t n, double h0, double d1,
                            double t_end, double order)
{
    double d2 = 0.0;
    for (int64_t i = 0; i < n; i++) {
        const double sc = atol[i] + rt * fabs(y[i]);
        d2 += ((f_probe[i] - f[i]) / sc) * ((f_probe[i] - f[i]) / sc);
    }
    d2 = sqrt(d2 / (double)n) / h0;
    const double big = MF_MAX(d1, d2);
    const double h1 = (isfinite(big) && big > 1e-15) ? pow(0.01 / big, 1.0 / (order + 1.0))
                                                     : MF_MAX(1e-6 * t_end, h0 * 1e-3);
    return MF_MIN(MF_MIN(100.0 * h0, h1), t_end);
}

#endif
