/* The CPA_LD / CPA_ST hooks the traced builds define before including an
 * algorithm's source (see cache_traced.h).  Loads report before returning the
 * value; a store's value is computed (its loads reported) before the store
 * itself is reported, the order the hardware sees. */
#ifndef CONVPICK_CACHE_TRACED_HOOKS_H
#define CONVPICK_CACHE_TRACED_HOOKS_H

#include <stdint.h>

#include "harness/cache/cachesim.h"

extern _Thread_local cph_cachesim *cph_trace_target;

static inline float cph_tld_f(const float *p) {
    if (cph_trace_target) cph_sim_access(cph_trace_target, (uintptr_t)p, sizeof *p, 0);
    return *p;
}

static inline int64_t cph_tld_i64(const int64_t *p) {
    if (cph_trace_target) cph_sim_access(cph_trace_target, (uintptr_t)p, sizeof *p, 0);
    return *p;
}

static inline void cph_tst_f(float *p, float v) {
    if (cph_trace_target) cph_sim_access(cph_trace_target, (uintptr_t)p, sizeof *p, 1);
    *p = v;
}

#define CPA_LD(ptr)                                                                        \
    _Generic((ptr), float *: cph_tld_f, const float *: cph_tld_f, int64_t *: cph_tld_i64, \
             const int64_t *: cph_tld_i64)(ptr)
#define CPA_ST(ptr, v) cph_tst_f((ptr), (v))

#endif
