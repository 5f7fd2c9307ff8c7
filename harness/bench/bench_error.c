/* Each row's error against the fp64 oracle, printed beside its time
 * (bench_state.h).  The oracle runs once per layer x flip x thread count on
 * the tensors the trials use; each algorithm or chosen row then makes one
 * checking run with its own parameters and is compared with it
 * (cph_check_error: the measure verify and tune use, convpick/oracle.h).
 * All of it happens before the rounds start, so no timed region contains
 * it.  SGEMM reference rows compute no convolution and have no error. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "harness/bench/bench_state.h"
#include "harness/tune/checkrun.h"

static int wants_error(const cph_bench_trow *w) {
    return strcmp(w->status, "ok") == 0 &&
           (w->x.kind == CPH_ROW_ALGO || w->x.kind == CPH_ROW_CHOSEN);
}

int cph_bench_errors(const cph_trial_setup *su, cph_bench_trow *rows, size_t nrows) {
    size_t any = 0;
    for (size_t i = 0; i < nrows; i++) any += (size_t)wants_error(&rows[i]);
    if (!any) return 0;
    const size_t ny = cp_shape_output_elems(su->shape);
    float *y = malloc(ny * sizeof *y);
    double *ref = malloc(ny * sizeof *ref), *mag = malloc(ny * sizeof *mag);
    int rc = 0;
    if (!y || !ref || !mag) {
        rc = -1;
        goto out;
    }
    cp_oracle_run(su->shape, su->flip, su->x, su->w, su->bias, ref, mag);
    for (size_t i = 0; i < nrows; i++) {
        cph_bench_trow *w = &rows[i];
        if (!wants_error(w)) continue;
        char why[200] = ""; /* room for "check: " in the row's 256 */
        /* A plugin's algorithm runs in this process, as its trials will. */
        const cph_check_run cr = {w->a,          su->shape,      su->flip, &w->p,
                                  su->caches,    su->threads,    su->x,    su->w,
                                  su->bias,      su->exec,       0};
        if (cph_check_error(&cr, ref, mag, y, ny, &w->err, why, sizeof why) != CP_OK) {
            w->status = "error";
            snprintf(w->why, sizeof w->why, "check: %s", why);
            continue;
        }
        w->have_err = 1;
        /* A plugin's algorithm is checked against its tolerance before it is
         * timed; a built-in one is verify's and the tests' business, and its
         * error is printed whatever it is. */
        if (cp_algo_plugin(w->a) && !cph_error_within_tolerance(w->a, &w->err, why, sizeof why)) {
            w->status = "error";
            snprintf(w->why, sizeof w->why, "check: %s", why);
        }
    }
out:
    free(y);
    free(ref);
    free(mag);
    return rc;
}
