/* Shared helpers of the conv2d suites (see support_conv.h). */
#include "tests/support/conv.h"

#include "harness/measure/data.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>

cp_shape cpt_shape(int64_t n, int64_t c, int64_t h, int64_t w, int64_t k, int64_t r, int64_t s) {
    cp_shape sh = cp_shape_init();
    sh.n = n; sh.c = c; sh.h = h; sh.w = w; sh.k = k; sh.r = r; sh.s = s;
    return sh;
}

cp_status cpt_run_plan(const cp_algo *a, const cp_shape *s, cp_flip flip, const float *x,
                       const float *w, const float *bias, float *y, char *msg, size_t cap) {
    return cpt_run_plan_params(a, s, flip, NULL, x, w, bias, y, msg, cap);
}

cp_status cpt_run_plan_params(const cp_algo *a, const cp_shape *s, cp_flip flip,
                              const cp_params *params, const float *x, const float *w,
                              const float *bias, float *y, char *msg, size_t cap) {
    const size_t ny = cp_shape_output_elems(s);
    for (size_t i = 0; i < ny; i++) y[i] = NAN;
    cp_plan *plan = NULL;
    cp_status st = cp_plan_create(a, s, flip, params, NULL, 1, w, &plan, msg, cap);
    if (st != CP_OK) return st;
    st = cp_plan_run(plan, x, bias, y, NULL);
    if (st != CP_OK && msg && cap)
        snprintf(msg, cap, "%s: cp_plan_run returned %s", a->name, cp_status_str(st));
    cp_plan_destroy(plan);
    return st;
}

cp_status cpt_check_vs_oracle(const cp_algo *a, const cp_shape *s, cp_flip flip,
                              const float *x, const float *w, const float *bias, float *y,
                              cp_error *err, char *msg, size_t cap) {
    const size_t ny = cp_shape_output_elems(s);
    float *out = y ? y : malloc(ny * sizeof *out);
    double *ref = malloc(ny * sizeof *ref), *mag = malloc(ny * sizeof *mag);
    cp_status st = CP_ENOMEM;
    if (out && ref && mag) {
        st = cpt_run_plan(a, s, flip, x, w, bias, out, msg, cap);
        if (st == CP_OK) {
            cp_oracle_run(s, flip, x, w, bias, ref, mag);
            *err = cp_error_measure(out, ref, mag, ny);
        }
    }
    if (!y) free(out);
    free(ref);
    free(mag);
    return st;
}

cp_status cpt_check_random(const cp_algo *a, const cp_shape *s, cp_flip flip,
                           const cp_params *params, uint64_t seed, cp_error *err, char *msg,
                           size_t cap) {
    const size_t nx = cp_shape_input_elems(s), nw = cp_shape_weight_elems(s);
    const size_t ny = cp_shape_output_elems(s);
    float *x = malloc(nx * sizeof *x), *w = malloc(nw * sizeof *w);
    float *b = malloc((size_t)s->k * sizeof *b), *y = malloc(ny * sizeof *y);
    double *ref = malloc(ny * sizeof *ref), *mag = malloc(ny * sizeof *mag);
    cp_status st = CP_ENOMEM;
    if (x && w && b && y && ref && mag) {
        cph_fill_uniform(x, nx, seed);
        cph_fill_uniform(w, nw, seed + 1);
        cph_fill_uniform(b, (size_t)s->k, seed + 2);
        st = cpt_run_plan_params(a, s, flip, params, x, w, b, y, msg, cap);
        if (st == CP_OK) {
            cp_oracle_run(s, flip, x, w, b, ref, mag);
            *err = cp_error_measure(y, ref, mag, ny);
        }
    }
    free(x); free(w); free(b); free(y); free(ref); free(mag);
    return st;
}
