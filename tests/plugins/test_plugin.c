/* The test plugins (tests/cli/cli_plugins.sh), one source built seven ways by
 * tests/CMakeLists.txt; TP_VARIANT picks what is wrong with it:
 *   TP_GOOD      plugin "tp", algorithm "tp_loops": plain direct loops, one
 *                parameter "unroll" in [1, 4] (ignored by the arithmetic)
 *   TP_GOOD2     the same plugin rebuilt with another TP_BUILD_TAG string: the
 *                same names, other bytes (a "different build", another hash)
 *   TP_WRONG     "tp_wrong": the loops skip the last input channel (an off-by-
 *                one), so verify and tune must reject it before timing
 *   TP_CRASH     "tp_crash": run() writes through a NULL pointer (SIGSEGV)
 *   TP_CLASH     an algorithm named "direct", like the built-in one
 *   TP_BADABI    abi_version CP_PLUGIN_ABI_VERSION + 98
 *   TP_BADPARAM  "tp_badparam" whose parameter range is empty (min > max)
 *   TP_NOENTRY   no entry point at all
 * It uses only the public headers and links nothing of convpick (what a
 * user's plugin does, examples/plugin/). */
#include <stdio.h>
#include <string.h>

#include "convpick/plugin.h"

#ifndef TP_BUILD_TAG
#define TP_BUILD_TAG "1"
#endif
/* Kept in the binary so that two tags give two different files. */
const char tp_build_tag[] = "tp build " TP_BUILD_TAG;

#if defined(TP_WRONG)
#define TP_NAME "tp_wrong"
#define TP_C_END(c) ((c) - 1) /* the off-by-one: the last channel is never read */
#else
#define TP_C_END(c) (c)
#endif
#if defined(TP_GOOD) || defined(TP_GOOD2)
#define TP_NAME "tp_loops"
#elif defined(TP_CRASH)
#define TP_NAME "tp_crash"
#elif defined(TP_CLASH)
#define TP_NAME "direct"
#elif defined(TP_BADPARAM)
#define TP_NAME "tp_badparam"
#elif !defined(TP_NAME)
#define TP_NAME "tp_other"
#endif

static int tp_supports(const cp_shape *s, cp_flip flip, char *why, size_t cap) {
    (void)flip;
    if (s->groups != 1) {
        if (why && cap) snprintf(why, cap, "groups > 1");
        return 0;
    }
    return 1;
}

static void tp_defaults(const cp_shape *s, const cp_cache_sizes *caches, cp_params *out) {
    (void)s;
    (void)caches;
    memset(out, 0, sizeof *out);
    out->v[0] = 1;
}

static size_t tp_workspace(const cp_shape *s, cp_flip flip, const cp_params *p, int nthreads) {
    (void)s, (void)flip, (void)p, (void)nthreads;
    return 0;
}

static cp_status tp_run(const cp_run_args *a) {
#if defined(TP_CRASH)
    volatile float *nowhere = NULL;
    nowhere[a->shape->k] = 1.0f; /* SIGSEGV on its first run */
#endif
    const cp_shape *s = a->shape;
    const int64_t P = (s->h + s->pad_top + s->pad_bottom - s->dil_h * (s->r - 1) - 1) / s->stride_h + 1;
    const int64_t Q = (s->w + s->pad_left + s->pad_right - s->dil_w * (s->s - 1) - 1) / s->stride_w + 1;
    const float *w = a->weights;
    for (int64_t n = 0; n < s->n; n++)
        for (int64_t k = 0; k < s->k; k++)
            for (int64_t p = 0; p < P; p++)
                for (int64_t q = 0; q < Q; q++) {
                    double acc = a->bias ? a->bias[k] : 0.0;
                    for (int64_t c = 0; c < TP_C_END(s->c); c++)
                        for (int64_t r = 0; r < s->r; r++)
                            for (int64_t t = 0; t < s->s; t++) {
                                const int64_t ih = p * s->stride_h - s->pad_top + r * s->dil_h;
                                const int64_t iw = q * s->stride_w - s->pad_left + t * s->dil_w;
                                if (ih < 0 || ih >= s->h || iw < 0 || iw >= s->w) continue;
                                /* true convolution reads the kernel flipped */
                                const int64_t rr = a->flip == CP_CONV ? s->r - 1 - r : r;
                                const int64_t tt = a->flip == CP_CONV ? s->s - 1 - t : t;
                                acc += (double)a->x[((n * s->c + c) * s->h + ih) * s->w + iw] *
                                       w[((k * s->c + c) * s->r + rr) * s->s + tt];
                            }
                    a->y[((n * s->k + k) * P + p) * Q + q] = (float)acc;
                }
    return CP_OK;
}

static const cp_param_desc tp_params[] = {
#if defined(TP_BADPARAM)
    {"unroll", "an empty range: refused at load", 4, 1},
#else
    {"unroll", "declared only to carry a parameter through tables (1)", 1, 4},
#endif
};

static const cp_algo tp_algo = {
    .name = TP_NAME,
    .summary = "test plugin: plain direct loops (" TP_BUILD_TAG ")",
    .tolerance = 1e-5,
    .nparams = 1,
    .params = tp_params,
    .supports = tp_supports,
    .defaults = tp_defaults,
    .workspace_size = tp_workspace,
    .run = tp_run,
};

#if !defined(TP_NOENTRY)
static const cp_algo *const tp_algos[] = {&tp_algo};

static const cp_plugin_info tp_info = {
#if defined(TP_BADABI)
    CP_PLUGIN_ABI_VERSION + 98,
#else
    CP_PLUGIN_ABI_VERSION,
#endif
#if defined(TP_GOOD) || defined(TP_GOOD2)
    "tp",
#else
    TP_NAME "_plugin",
#endif
    1, tp_algos};

const cp_plugin_info *convpick_plugin_entry(void);
const cp_plugin_info *convpick_plugin_entry(void) { return &tp_info; }
#else
int tp_not_a_plugin(void);
int tp_not_a_plugin(void) { return tp_algo.nparams; }
#endif
