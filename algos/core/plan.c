/* Plans: the one place that allocates for an algorithm (workspace and
 * prepared weights), so that kernels themselves never allocate. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "algos/core/cpa.h"

struct cp_plan {
    const cp_algo *algo;
    cp_shape shape;
    cp_flip flip;
    cp_params params;
    int nthreads;
    const float *raw;     /* private copy of the raw weights when not prepared */
    void *prepared;       /* prepared weights, or NULL */
    void *workspace;
    size_t workspace_bytes;
    size_t raw_bytes, prepared_bytes;
    cp_allocator mem;     /* the allocator its blocks came from */
};

static void *system_alloc(void *ctx, size_t bytes) {
    (void)ctx;
    size_t rounded = cpa_align64(bytes);
    if (rounded < bytes) return NULL;
    return aligned_alloc(64, rounded);
}

static void system_release(void *ctx, void *ptr, size_t bytes) {
    (void)ctx;
    (void)bytes;
    free(ptr);
}

static const cp_allocator system_allocator = {system_alloc, system_release, NULL};
static cp_allocator current_allocator = {system_alloc, system_release, NULL};

void cp_set_allocator(const cp_allocator *a) {
    current_allocator = (a && a->alloc && a->release) ? *a : system_allocator;
}

static void *plan_alloc(cp_plan *p, size_t bytes) {
    return bytes ? p->mem.alloc(p->mem.ctx, bytes) : NULL;
}

static void plan_release(const cp_plan *p, const void *ptr, size_t bytes) {
    if (ptr) p->mem.release(p->mem.ctx, (void *)ptr, bytes);
}

/* The algorithms' size functions multiply shape fields in int64.  Their
 * results are bounded by small multiples of a few products (the padded
 * input, the lowered matrix, 16 transformed weight and input planes, each per
 * worker); estimating those in double and refusing anything past 2^60 bytes
 * keeps every size computation far from overflow. */
static int sizes_fit(const cp_shape *s, int nthreads) {
    const double hp = (double)s->h + (double)s->pad_top + (double)s->pad_bottom + (double)s->stride_h;
    const double wp = (double)s->w + (double)s->pad_left + (double)s->pad_right + (double)s->stride_w;
    const double p = (double)cp_shape_out_h(s), q = (double)cp_shape_out_w(s);
    const double padded = (double)s->n * (double)s->c * hp * wp;
    const double lowered = (double)s->c * (double)s->r * (double)s->s * p * q;
    const double planes = 16.0 * ((double)s->c + (double)s->k) * (hp * wp / 4.0 + 64.0) +
                          16.0 * (double)s->k * (double)s->c;
    const double weights = (double)s->k * (double)s->c * (double)s->r * (double)s->s;
    const double total = (padded + lowered + planes + weights + 1024.0) * 8.0 * (double)nthreads;
    return total < 0x1p60;
}

cp_status cp_plan_create(const cp_algo *a, const cp_shape *s, cp_flip flip,
                         const cp_params *params, const cp_cache_sizes *caches, int nthreads,
                         const float *w, cp_plan **out, char *msg, size_t cap) {
    *out = NULL;
    if (!a || !s || !w) return cpa_fail(CP_EINVAL, msg, cap, "plan: algorithm, shape and weights are required");
    if (nthreads < 1) nthreads = 1;
    char why[256];
    if (cp_shape_validate(s, why, sizeof why) != CP_SHAPE_OK)
        return cpa_fail(CP_EINVAL, msg, cap, "invalid shape: %s", why);
    if (!a->supports(s, flip, why, sizeof why))
        return cpa_fail(CP_EUNSUPPORTED, msg, cap, "%s does not support this layer: %s", a->name, why);
    if (!sizes_fit(s, nthreads))
        return cpa_fail(CP_ENOMEM, msg, cap,
                        "plan: the buffers of this layer would exceed 2^60 bytes: not allocated");
    cp_plan *p = calloc(1, sizeof *p);
    if (!p) return cpa_fail(CP_ENOMEM, msg, cap, "plan: out of memory");
    p->algo = a;
    p->mem = current_allocator;
    p->shape = *s;
    p->flip = flip;
    p->nthreads = nthreads;
    if (params)
        p->params = *params;
    else
        cp_algo_defaults(a, s, caches, &p->params);
    cp_status st = cp_params_check(a, &p->params, msg, cap);
    if (st != CP_OK) {
        free(p);
        return st;
    }
    size_t pbytes = a->prepared_size ? a->prepared_size(s, flip, &p->params) : 0;
    if (pbytes) {
        p->prepared = plan_alloc(p, pbytes);
        p->prepared_bytes = pbytes;
        if (!p->prepared) {
            cp_plan_destroy(p);
            return cpa_fail(CP_ENOMEM, msg, cap, "plan: cannot allocate %zu bytes of prepared weights", pbytes);
        }
        st = a->prepare(s, flip, &p->params, w, p->prepared);
        if (st != CP_OK) {
            cp_plan_destroy(p);
            return cpa_fail(st, msg, cap, "%s: weight preparation failed", a->name);
        }
    } else {
        size_t wb = cp_shape_weight_elems(s) * sizeof(float);
        float *copy = plan_alloc(p, wb);
        p->raw_bytes = wb;
        if (!copy) {
            cp_plan_destroy(p);
            return cpa_fail(CP_ENOMEM, msg, cap, "plan: cannot allocate %zu bytes of weights", wb);
        }
        memcpy(copy, w, wb);
        p->raw = copy;
    }
    p->workspace_bytes = a->workspace_size ? a->workspace_size(s, flip, &p->params, nthreads) : 0;
    if (p->workspace_bytes) {
        p->workspace = plan_alloc(p, p->workspace_bytes);
        if (!p->workspace) {
            size_t wsb = p->workspace_bytes;
            cp_plan_destroy(p);
            return cpa_fail(CP_ENOMEM, msg, cap, "plan: cannot allocate %zu bytes of workspace", wsb);
        }
    }
    *out = p;
    return CP_OK;
}

cp_status cp_plan_run(cp_plan *p, const float *x, const float *bias, float *y,
                      const cp_exec *exec) {
    if (!p || !x || !y) return CP_EINVAL;
    cp_exec serial = cp_exec_serial();
    /* A plan sized for fewer workers than the executor has must not let the
     * kernel index past its workspace slices. */
    if (exec && cp_exec_threads(exec) > p->nthreads) exec = &serial;
    cp_run_args args = {
        .shape = &p->shape,
        .flip = p->flip,
        .params = &p->params,
        .x = x,
        .weights = p->prepared ? (const void *)p->prepared : (const void *)p->raw,
        .bias = bias,
        .y = y,
        .workspace = p->workspace,
        .exec = exec,
    };
    return p->algo->run(&args);
}

const cp_algo *cp_plan_algo(const cp_plan *p) { return p->algo; }
const cp_params *cp_plan_params(const cp_plan *p) { return &p->params; }

void cp_plan_destroy(cp_plan *p) {
    if (!p) return;
    plan_release(p, p->raw, p->raw_bytes);
    plan_release(p, p->prepared, p->prepared_bytes);
    plan_release(p, p->workspace, p->workspace_bytes);
    free(p);
}
