/* The fp64 correctness oracle every test and `convpick verify` compare against.
 *
 * Plain loops over the definition in convpick/shape.h, accumulating in double.
 *
 * Error measure.  For output element i with reference value ref_i and
 * magnitude mag_i = sum over its receptive field of |x|*|w| (+ |bias| if any):
 *   abs_err = max_i |y_i - ref_i|
 *   rel_err = max_i |y_i - ref_i| / mag_i      (0/0 counts as 0)
 * The relative measure is the one tolerances are set on: a float32 sum of n
 * products has rounding error bounded by about n * eps * mag (the classic
 * bound for recursive summation, Higham, "Accuracy and Stability of Numerical
 * Algorithms", 2nd ed., 2002, section 4.2), so dividing by mag rather than by
 * |ref| stays meaningful when positive and negative terms cancel. */
#ifndef CONVPICK_ORACLE_H
#define CONVPICK_ORACLE_H

#include <stddef.h>

#include "convpick/shape.h"
#include "convpick/status.h"

/* ref and mag: N*K*P*Q doubles each (mag may be NULL).  bias may be NULL. */
void cp_oracle_run(const cp_shape *s, cp_flip flip, const float *x, const float *w,
                   const float *bias, double *ref, double *mag);

typedef struct cp_error {
    double abs_err;  /* max absolute error */
    double rel_err;  /* max error relative to mag */
    size_t worst;    /* index of the element with the largest rel_err */
    size_t nonfinite; /* outputs that are NaN or Inf where ref is finite */
} cp_error;

/* Compares count outputs y with the oracle's ref and mag. */
cp_error cp_error_measure(const float *y, const double *ref, const double *mag, size_t count);

#endif
