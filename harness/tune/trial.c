/* One trial of one candidate (contract in trial.h). */
#include "harness/tune/trial.h"

#include <stdlib.h>
#include <string.h>

#include "algos/core/cpa.h"
#include "harness/measure/data.h"

/* A buffer of n floats at a random 64-byte step within a page (or aligned). */
typedef struct {
    void *base;
    float *p;
} placed;

static int place_alloc(placed *b, size_t n, int random_offset, uint64_t *rng) {
    const size_t off = random_offset ? (size_t)(cph_rng_next(rng) % (CPH_TRIAL_PLACE_SPAN / 64)) * 64
                                     : 0;
    /* aligned_alloc wants a multiple of the alignment (C11 7.22.3.1). */
    const size_t bytes = (n * sizeof(float) + off + 2 * CPH_TRIAL_PLACE_SPAN - 1) /
                         CPH_TRIAL_PLACE_SPAN * CPH_TRIAL_PLACE_SPAN;
    b->base = aligned_alloc(CPH_TRIAL_PLACE_SPAN, bytes);
    b->p = b->base ? (float *)((char *)b->base + off) : NULL;
    return b->base ? 0 : -1;
}

int cph_trial_run(const cph_trial_setup *t, const cp_algo *a, const cp_params *p, uint64_t *rng,
                  double *median, double *wall, char *msg, size_t cap) {
    const double t0 = cph_now();
    const size_t nx = cp_shape_input_elems(t->shape), ny = cp_shape_output_elems(t->shape);
    placed x = {0}, y = {0};
    cp_plan *plan = NULL;
    int rc = -1;
    *median = 0.0;
    if (place_alloc(&x, nx, t->place, rng) != 0 || place_alloc(&y, ny, t->place, rng) != 0) {
        cpa_fail(CP_ENOMEM, msg, cap, "out of memory for a trial's buffers");
        goto out;
    }
    memcpy(x.p, t->x, nx * sizeof(float));
    if (cp_plan_create(a, t->shape, t->flip, p, t->caches, t->threads, t->w, &plan, msg, cap) !=
        CP_OK)
        goto out;
    cph_plan_work ra = {plan, x.p, t->bias, y.p, t->exec};
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
    free(x.base);
    free(y.base);
    *wall = cph_now() - t0;
    return rc;
}
