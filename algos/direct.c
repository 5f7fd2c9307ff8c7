/* direct: the plain nested loops, the slow baseline that supports everything.
 * direct_flipidx: the same loops computing true convolution by reading the
 * kernel in reverse inside the loops (no preparation), for the cache study.
 * Both take one parameter, the loop order (see direct_loops.h): 0 sums each
 * output in a register, 1 sweeps whole output planes once per kernel tap.
 *
 * This file is also compiled a second time, with traced loads and stores and
 * renamed algorithms, by harness/cache/cache_traced_direct.c. */

#include "algos/core/cpa.h"

#define CPA_DIRECT_FN direct_loops
#define CPA_DIRECT_FLIP 0
#define CPA_DIRECT_ORDER 0
#include "algos/direct_loops.h"
#undef CPA_DIRECT_FN
#undef CPA_DIRECT_FLIP
#undef CPA_DIRECT_ORDER

#define CPA_DIRECT_FN direct_loops_flipidx
#define CPA_DIRECT_FLIP 1
#define CPA_DIRECT_ORDER 0
#include "algos/direct_loops.h"
#undef CPA_DIRECT_FN
#undef CPA_DIRECT_FLIP
#undef CPA_DIRECT_ORDER

#define CPA_DIRECT_FN direct_loops_o1
#define CPA_DIRECT_FLIP 0
#define CPA_DIRECT_ORDER 1
#include "algos/direct_loops.h"
#undef CPA_DIRECT_FN
#undef CPA_DIRECT_FLIP
#undef CPA_DIRECT_ORDER

#define CPA_DIRECT_FN direct_loops_flipidx_o1
#define CPA_DIRECT_FLIP 1
#define CPA_DIRECT_ORDER 1
#include "algos/direct_loops.h"
#undef CPA_DIRECT_FN
#undef CPA_DIRECT_FLIP
#undef CPA_DIRECT_ORDER

enum { P_ORDER = 0, NPARAMS };

static const cp_param_desc direct_params[NPARAMS] = {
    {"order", "loop order: 0 = (n,k,p,q,c,r,s), each output summed in a register; "
              "1 = (n,k,c,r,s,p,q), accumulating into the output plane; default 0", 0, 1},
};

static void direct_defaults(const cp_shape *s, const cp_cache_sizes *caches, cp_params *out) {
    (void)s; (void)caches;
    out->v[P_ORDER] = 0;
}

typedef void (*direct_loops_fn)(const cp_shape *sh, const float *x, const float *w,
                                const float *bias, float *y, int64_t nk_begin, int64_t nk_end);

typedef struct {
    const cp_run_args *a;
    direct_loops_fn loops;
} direct_job;

static void direct_task(void *arg, int64_t begin, int64_t end, int worker) {
    (void)worker;
    const direct_job *j = arg;
    const cp_run_args *a = j->a;
    j->loops(a->shape, a->x, a->weights, a->bias, a->y, begin, end);
}

static int64_t order_of(const cp_run_args *a) {
    return a->params ? a->params->v[P_ORDER] : 0;
}

static int direct_supports(const cp_shape *s, cp_flip flip, char *why, size_t cap) {
    (void)s; (void)flip; (void)why; (void)cap;
    return 1;
}

static int flipidx_supports(const cp_shape *s, cp_flip flip, char *why, size_t cap) {
    (void)s;
    if (flip != CP_CONV)
        return cpa_refuse(why, cap, "computes true convolution only (flipped indexing); "
                                    "use direct for cross-correlation");
    return 1;
}

/* True convolution through `direct` flips the weights once, in prepare. */
static size_t direct_prepared_size(const cp_shape *s, cp_flip flip, const cp_params *p) {
    (void)p;
    return cpa_preflip_size(s, flip, 0);
}

static cp_status direct_run(const cp_run_args *a) {
    direct_job j = {a, order_of(a) == 1 ? direct_loops_o1 : direct_loops};
    cp_parallel_for(a->exec, a->shape->n * a->shape->k, direct_task, &j);
    return CP_OK;
}

static cp_status flipidx_run(const cp_run_args *a) {
    direct_job j = {a, order_of(a) == 1 ? direct_loops_flipidx_o1 : direct_loops_flipidx};
    cp_parallel_for(a->exec, a->shape->n * a->shape->k, direct_task, &j);
    return CP_OK;
}

/* Tolerance: float accumulation of up to C*R*S products in a fixed order;
 * measured errors on the suites stay below 1e-6 relative to sum|x||w|
 * (convpick verify); 1e-5 leaves room for very deep reductions. */
const cp_algo cpa_direct = {
    .name = "direct",
    .summary = "plain nested loops (order 0: n,k,p,q,c,r,s; 1: n,k,c,r,s,p,q); every shape",
    .tolerance = 1e-5,
    .nparams = NPARAMS,
    .params = direct_params,
    .supports = direct_supports,
    .defaults = direct_defaults,
    .prepared_size = direct_prepared_size,
    .prepare = cpa_preflip_prepare,
    .run = direct_run,
};

const cp_algo cpa_direct_flipidx = {
    .name = "direct_flipidx",
    .summary = "plain nested loops reading the kernel reversed (true convolution only)",
    .tolerance = 1e-5,
    .nparams = NPARAMS,
    .params = direct_params,
    .supports = flipidx_supports,
    .defaults = direct_defaults,
    .run = flipidx_run,
};
