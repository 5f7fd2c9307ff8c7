/* Helpers the conv2d suites share: run one algorithm through a plan and
 * judge it against the fp64 oracle.  Linked into every test executable, so it
 * stays small and depends only on the public API. */
#ifndef CONVPICK_TEST_SUPPORT_CONV_H
#define CONVPICK_TEST_SUPPORT_CONV_H

#include <stddef.h>
#include <stdint.h>

#include "convpick/algo.h"
#include "convpick/oracle.h"

/* Runs algorithm a on (s, mode) through cp_plan_create (default params,
 * fallback caches, one thread) and cp_plan_run into y (output_elems floats),
 * which is first filled with NaN so that an output the algorithm forgets to
 * write is caught.  Returns the first failing status with a reason in msg. */
cp_status cpt_run_plan(const cp_algo *a, const cp_shape *s, cp_flip flip, const float *x,
                       const float *w, const float *bias, float *y, char *msg, size_t cap);

/* The same with explicit parameters (NULL: the defaults). */
cp_status cpt_run_plan_params(const cp_algo *a, const cp_shape *s, cp_flip flip,
                              const cp_params *params, const float *x, const float *w,
                              const float *bias, float *y, char *msg, size_t cap);

/* Runs a with params (NULL: defaults) on seeded random tensors for s -- x,
 * weights and bias uniform in [-1, 1) from seeds seed, seed+1, seed+2 -- and
 * measures it against cp_oracle_run into *err. */
cp_status cpt_check_random(const cp_algo *a, const cp_shape *s, cp_flip flip,
                           const cp_params *params, uint64_t seed, cp_error *err, char *msg,
                           size_t cap);

/* Runs a as above and measures it against cp_oracle_run.  On success *err
 * holds the measure; y (may be NULL) receives the output. */
cp_status cpt_check_vs_oracle(const cp_algo *a, const cp_shape *s, cp_flip flip,
                              const float *x, const float *w, const float *bias, float *y,
                              cp_error *err, char *msg, size_t cap);

/* A shape with n, c, h, w, k, r, s set and every other field neutral. */
cp_shape cpt_shape(int64_t n, int64_t c, int64_t h, int64_t w, int64_t k, int64_t r, int64_t s);

#endif
