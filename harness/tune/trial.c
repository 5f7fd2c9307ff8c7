/* One trial of one candidate (contract in trial.h). */
#include "harness/tune/trial.h"

#include <stdlib.h>
#include <string.h>

#include "algos/core/cpa.h"

/* n floats from the placer, or page-aligned from the heap without one (the
 * same offset for every trial). */
static float *buf_alloc(cph_placer *pl, size_t n) {
    const size_t bytes = n * sizeof(float);
    if (pl) return cph_placer_alloc(pl, bytes);
    return aligned_alloc(4096, (bytes + 4095) / 4096 * 4096);
}

static void buf_free(cph_placer *pl, float *p) {
    if (pl)
        cph_placer_release(pl, p);
    else
        free(p);
}

int cph_trial_run(const cph_trial_setup *t, const cp_algo *a, const cp_params *p, double *median,
                  double *wall, char *msg, size_t cap) {
    const double t0 = cph_now();
    const size_t nx = cp_shape_input_elems(t->shape), ny = cp_shape_output_elems(t->shape);
    float *x = NULL, *y = NULL;
    cp_plan *plan = NULL;
    int rc = -1;
    *median = 0.0;
    x = buf_alloc(t->placer, nx);
    y = buf_alloc(t->placer, ny);
    if (!x || !y) {
        cpa_fail(CP_ENOMEM, msg, cap, "out of memory for a trial's buffers");
        goto out;
    }
    memcpy(x, t->x, nx * sizeof(float));
    if (t->placer) {
        const cp_allocator mem = cph_placer_allocator(t->placer);
        cp_set_allocator(&mem);
    }
    const cp_status pst =
        cp_plan_create(a, t->shape, t->flip, p, t->caches, t->threads, t->w, &plan, msg, cap);
    cp_set_allocator(NULL); /* the plan keeps the placer; nothing else gets it */
    if (pst != CP_OK) goto out;
    cph_plan_work ra = {plan, x, t->bias, y, t->exec};
    cph_measurement m;
    const int mrc = cph_measure(&t->timing, cph_plan_work_run, &ra, &m);
    if (mrc == 0) {
        *median = m.stats.median;
        rc = 0;
    } else {
        cpa_fail(CP_EINVAL, msg, cap, "%s: a timed run failed", a->name);
    }
    cph_measurement_free(&m);
out:
    if (plan) cp_plan_destroy(plan);
    buf_free(t->placer, x);
    buf_free(t->placer, y);
    *wall = cph_now() - t0;
    return rc;
}
