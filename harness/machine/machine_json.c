/* The machine as JSON: what `convpick probe --json` prints and what reports
 * and tables embed as the device description.  Built with jansson only. */
#include <jansson.h>

#include "harness/machine/machine.h"

static int put(json_t *o, const char *key, json_t *v) { return json_object_set_new(o, key, v); }

static json_t *isa_json(const cph_machine *m) {
    json_t *o = json_object();
    if (!o) return NULL;
    put(o, "sse4_2", json_boolean(m->sse42));
    put(o, "avx", json_boolean(m->avx));
    put(o, "avx2", json_boolean(m->avx2));
    put(o, "fma", json_boolean(m->fma));
    put(o, "avx512f", json_boolean(m->avx512f));
    put(o, "avx512bw", json_boolean(m->avx512bw));
    put(o, "avx512vl", json_boolean(m->avx512vl));
    put(o, "avx512dq", json_boolean(m->avx512dq));
    put(o, "avx512_vnni", json_boolean(m->avx512_vnni));
    put(o, "avx512_bf16", json_boolean(m->avx512_bf16));
    return o;
}

static json_t *caches_json(const cph_machine *m) {
    json_t *a = json_array();
    if (!a) return NULL;
    for (int i = 0; i < m->ncaches; i++) {
        const cph_cache_level *c = &m->caches[i];
        json_t *o = json_pack("{s:i, s:s, s:I, s:I, s:i, s:i, s:i}", "level", c->level, "kind",
                              c->kind, "size", (json_int_t)c->size, "line", (json_int_t)c->line,
                              "assoc", c->assoc, "instances", c->instances, "cores_sharing",
                              c->cores_sharing);
        if (!o || json_array_append_new(a, o) != 0) {
            json_decref(a);
            return NULL;
        }
    }
    return a;
}

static json_t *roofs_json(const cph_roofs *r) {
    return json_pack("{s:f, s:f, s:f, s:f, s:f, s:f, s:i, s:b, s:b, s:I, s:s}",
                     "peak_1core_gflops", r->peak_1core_gflops, "peak_all_gflops",
                     r->peak_all_gflops, "bw_1core_gbs", r->bw_1core_gbs, "bw_all_gbs",
                     r->bw_all_gbs, "ridge_1core", r->ridge_1core, "ridge_all", r->ridge_all,
                     "cores_used", r->cores_used, "portable_peak", r->portable_peak, "pinned",
                     r->pinned, "triad_array_bytes", (json_int_t)r->triad_bytes,
                     "bandwidth_counting", "stream: 12 bytes/element, write-allocate not counted");
}

json_t *cph_machine_to_json(const cph_machine *m, const cph_roofs *roofs) {
    const cp_cache_sizes cs = cph_machine_caches(m);
    json_t *o = json_pack(
        "{s:s, s:b, s:{s:s, s:s, s:i, s:i, s:i}, s:{s:i, s:i, s:i, s:i, s:I}, s:o, "
        "s:{s:I, s:I, s:I, s:I}, s:I, s:o, s:{s:s, s:s}, s:{s:s, s:s}}",
        "fingerprint", m->fingerprint, "synthetic", m->synthetic,
        "cpu", "vendor", m->vendor, "brand", m->model, "family", m->family, "model", m->model_id,
        "stepping", m->stepping,
        "topology", "packages", m->packages, "numa_nodes", m->numa_nodes, "cores", m->cores, "pus",
        m->pus, "memory_bytes", (json_int_t)m->memory_bytes,
        "caches", caches_json(m),
        "algorithm_caches", "l1d", (json_int_t)cs.l1d, "l2", (json_int_t)cs.l2, "l3",
        (json_int_t)cs.l3, "line", (json_int_t)cs.line,
        "llc_total_bytes", (json_int_t)cph_machine_llc_total(m),
        "isa", isa_json(m),
        "blas", "config", m->blas_version, "core", m->blas_core,
        "build", "compiler", m->compiler, "flags", m->build_flags);
    if (!o) return NULL;
    if (put(o, "roofs", roofs ? roofs_json(roofs) : json_null()) != 0) {
        json_decref(o);
        return NULL;
    }
    return o;
}
