/* Memory accounting of verify, run, bench and tune (see membudget.h).
 * Sizes are added and multiplied saturating at UINT64_MAX, so a shape whose
 * buffers cannot be expressed is refused instead of wrapping to a small
 * allocation. */
#include "harness/machine/membudget.h"

#include <ctype.h>
#include <errno.h>
#include <hwloc.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "algos/core/cpa.h"


static uint64_t add_sat(uint64_t a, uint64_t b) { return a > UINT64_MAX - b ? UINT64_MAX : a + b; }
static uint64_t mul_sat(uint64_t a, uint64_t b) {
    if (a == 0 || b == 0) return 0;
    return a > UINT64_MAX / b ? UINT64_MAX : a * b;
}

/* Product of shape fields (each >= 1 once validated), saturating. */
static uint64_t prod(const int64_t *f, int n) {
    uint64_t acc = 1;
    for (int i = 0; i < n; i++) acc = mul_sat(acc, f[i] > 0 ? (uint64_t)f[i] : 0);
    return acc;
}

uint64_t cph_mem_machine_bytes(void) {
    hwloc_topology_t t;
    if (hwloc_topology_init(&t) != 0) return 0;
    uint64_t bytes = 0;
    if (hwloc_topology_load(t) == 0) bytes = hwloc_get_root_obj(t)->total_memory;
    hwloc_topology_destroy(t);
    return bytes;
}

uint64_t cph_mem_default(void) {
    const uint64_t m = cph_mem_machine_bytes();
    return m ? m / 100 * CPH_MEM_DEFAULT_PERCENT : UINT64_MAX;
}

cp_status cph_mem_parse(const char *arg, uint64_t machine_bytes, uint64_t *out, char *msg,
                        size_t cap) {
    static const char expected[] = "expected BYTES (suffix K, M or G) or PERCENT%";
    const char *p = arg;
    if (!isdigit((unsigned char)*p))
        return cpa_fail(CP_EINVAL, msg, cap, "--max-memory '%s': %s", arg, expected);
    errno = 0;
    char *end;
    unsigned long long v = strtoull(p, &end, 10);
    if (errno == ERANGE)
        return cpa_fail(CP_EINVAL, msg, cap, "--max-memory '%s': number out of range", arg);
    uint64_t bytes;
    if (strcmp(end, "%") == 0) {
        if (v < 1 || v > 100)
            return cpa_fail(CP_EINVAL, msg, cap, "--max-memory '%s': a percentage must be 1..100",
                            arg);
        if (!machine_bytes)
            return cpa_fail(CP_EINVAL, msg, cap,
                            "--max-memory '%s': the machine's memory is unknown: give bytes", arg);
        bytes = machine_bytes / 100 * v;
    } else {
        uint64_t unit = 1;
        if (*end == 'K' || *end == 'k') unit = 1ull << 10;
        else if (*end == 'M' || *end == 'm') unit = 1ull << 20;
        else if (*end == 'G' || *end == 'g') unit = 1ull << 30;
        else if (*end)
            return cpa_fail(CP_EINVAL, msg, cap, "--max-memory '%s': %s", arg, expected);
        if (*end && end[1])
            return cpa_fail(CP_EINVAL, msg, cap,
                            "--max-memory '%s': unexpected '%s' after the unit", arg, end + 1);
        bytes = mul_sat(v, unit);
        if (bytes == UINT64_MAX)
            return cpa_fail(CP_EINVAL, msg, cap, "--max-memory '%s': number out of range", arg);
    }
    if (bytes == 0)
        return cpa_fail(CP_EINVAL, msg, cap, "--max-memory '%s': must be more than 0 bytes", arg);
    *out = bytes;
    return CP_OK;
}

cph_mem_need cph_mem_layer_need(const cp_shape *s, const cp_flip *flips, int nflips,
                                const cp_algo *const *algos, size_t nalgos, int nthreads,
                                int with_reference, const cp_cache_sizes *caches) {
    cph_mem_need n = {0, 0, 0, 0};
    const int64_t p = cp_shape_out_h(s), q = cp_shape_out_w(s);
    const int64_t in[] = {s->n, s->c, s->h, s->w};
    const int64_t wt[] = {s->k, s->groups > 0 ? s->c / s->groups : 0, s->r, s->s};
    const int64_t out[] = {s->n, s->k, p, q};
    const uint64_t nx = prod(in, 4), nw = prod(wt, 4), ny = prod(out, 4);
    n.tensors = mul_sat(add_sat(add_sat(nx, nw), add_sat(ny, s->k > 0 ? (uint64_t)s->k : 0)),
                        sizeof(float));
    n.reference = with_reference ? mul_sat(ny, 2 * sizeof(double)) : 0;
    /* Plans: the algorithms' size functions compute in int64, which is only
     * safe for shapes the validation accepts. */
    if (cp_shape_validate(s, NULL, 0) == CP_SHAPE_OK) {
        for (size_t ai = 0; ai < nalgos; ai++)
            for (int mi = 0; mi < nflips; mi++) {
                const cp_algo *a = algos[ai];
                if (!a->supports(s, flips[mi], NULL, 0)) continue;
                cp_params prm;
                cp_algo_defaults(a, s, caches, &prm);
                uint64_t prep = a->prepared_size ? a->prepared_size(s, flips[mi], &prm) : 0;
                if (prep == 0) prep = mul_sat(nw, sizeof(float)); /* the plan's weight copy */
                const uint64_t ws =
                    a->workspace_size ? a->workspace_size(s, flips[mi], &prm, nthreads) : 0;
                const uint64_t plan = add_sat(prep, ws);
                if (plan > n.plan) n.plan = plan;
            }
    } else {
        n.plan = UINT64_MAX;
    }
    n.total = add_sat(add_sat(n.tensors, n.reference), n.plan);
    return n;
}

static void human(uint64_t b, char *buf, size_t cap) {
    if (b == UINT64_MAX)
        snprintf(buf, cap, "more than 2^64 bytes");
    else if (b >= (1ull << 30))
        snprintf(buf, cap, "%llu bytes (%.1f GiB)", (unsigned long long)b, (double)b / (1ull << 30));
    else if (b >= (1ull << 20))
        snprintf(buf, cap, "%llu bytes (%.1f MiB)", (unsigned long long)b, (double)b / (1ull << 20));
    else
        snprintf(buf, cap, "%llu bytes", (unsigned long long)b);
}

cp_status cph_mem_check(const char *what, const cph_mem_need *need, uint64_t budget, char *msg,
                        size_t cap) {
    if (need->total <= budget) return CP_OK;
    char t[64], b[64];
    human(need->total, t, sizeof t);
    human(budget, b, sizeof b);
    if (msg && cap)
        snprintf(msg, cap,
                 "%s needs %s (tensors %llu, reference %llu, plan %llu bytes), more than the "
                 "memory budget of %s (--max-memory)",
                 what, t, (unsigned long long)need->tensors, (unsigned long long)need->reference,
                 need->plan == UINT64_MAX ? 0ull : (unsigned long long)need->plan, b);
    return CP_ENOMEM;
}

cp_status cph_mem_check_selection(const cph_selection *sel, int nthreads, int with_reference,
                                  uint64_t budget, char *msg, size_t cap) {
    const cp_cache_sizes caches = cp_cache_sizes_fallback();
    for (size_t i = 0; i < sel->layers.n; i++) {
        const cph_layer *L = &sel->layers.v[i];
        const cph_mem_need need = cph_mem_layer_need(&L->shape, sel->flips, sel->nflips, sel->algos,
                                                     sel->nalgos, nthreads, with_reference, &caches);
        char what[96];
        snprintf(what, sizeof what, "layer %s", L->name);
        const cp_status st = cph_mem_check(what, &need, budget, msg, cap);
        if (st != CP_OK) return st;
    }
    return CP_OK;
}
