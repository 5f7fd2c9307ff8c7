/* The machine as JSON: the device object every format embeds (tables, bench
 * results, the cache study, `convpick probe --json`), spelled one way
 * (docs/table-format.md, "Shared objects").  Built with jansson only. */
#include <jansson.h>

#include "harness/machine/machine.h"

static json_t *isa_json(const cph_machine *m) {
    const struct {
        const char *name;
        int on;
    } f[] = {
        {"sse4_2", m->sse42},       {"avx", m->avx},           {"avx2", m->avx2},
        {"fma", m->fma},            {"avx512f", m->avx512f},   {"avx512bw", m->avx512bw},
        {"avx512vl", m->avx512vl},  {"avx512dq", m->avx512dq}, {"avx512_vnni", m->avx512_vnni},
        {"avx512_bf16", m->avx512_bf16},
    };
    json_t *a = json_array();
    for (size_t i = 0; a && i < sizeof f / sizeof f[0]; i++)
        if (f[i].on && json_array_append_new(a, json_string(f[i].name)) != 0) {
            json_decref(a);
            return NULL;
        }
    return a;
}

static json_t *caches_json(const cph_machine *m) {
    json_t *a = json_array();
    if (!a) return NULL;
    for (int i = 0; i < m->ncaches && i < CPH_MAX_CACHES; i++) {
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

json_t *cph_device_json(const cph_machine *m) {
    return json_pack("{s:s, s:b, s:{s:s, s:s, s:i, s:i, s:i}, s:{s:i, s:i, s:i, s:i, s:I}, s:o, "
                     "s:o, s:{s:s, s:s}, s:{s:s, s:s}}",
                     "fingerprint", m->fingerprint, "synthetic", m->synthetic,
                     "cpu", "vendor", m->vendor, "model", m->model, "family", m->family,
                     "model_id", m->model_id, "stepping", m->stepping,
                     "topology", "packages", m->packages, "numa_nodes", m->numa_nodes, "cores",
                     m->cores, "pus", m->pus, "memory_bytes", (json_int_t)m->memory_bytes,
                     "caches", caches_json(m), "isa", isa_json(m),
                     "blas", "version", m->blas_version, "core", m->blas_core,
                     "build", "compiler", m->compiler, "flags", m->build_flags);
}

json_t *cph_roofs_widths_json(const cph_roofs *r) {
    json_t *a = json_array();
    for (int i = 0; a && i < r->nwidths; i++) {
        const cph_roof_width *w = &r->widths[i];
        json_array_append_new(a, json_pack("{s:i, s:s, s:f, s:f}", "bits", w->bits, "isa", w->isa,
                                           "peak_1core_gflops", w->peak_1core_gflops,
                                           "peak_all_gflops", w->peak_all_gflops));
    }
    return a;
}

/* 0 (not measured) as null. */
static json_t *gbs_or_null(double v) { return v > 0 ? json_real(v) : json_null(); }

void cph_roofs_levels_json(const cph_roofs *r, json_t *o) {
    json_object_set_new(o, "bw_l2_1core_gbs", gbs_or_null(r->bw_l2_1core_gbs));
    json_object_set_new(o, "bw_l2_all_gbs", gbs_or_null(r->bw_l2_all_gbs));
    json_object_set_new(o, "bw_l3_1core_gbs", gbs_or_null(r->bw_l3_1core_gbs));
    json_object_set_new(o, "bw_l3_all_gbs", gbs_or_null(r->bw_l3_all_gbs));
    json_object_set_new(o, "l2_triad_array_bytes", json_integer((json_int_t)r->l2_triad_bytes));
    json_object_set_new(o, "l3_triad_array_bytes", json_integer((json_int_t)r->l3_triad_bytes));
}

json_t *cph_roofs_json(const cph_roofs *r) {
    json_t *o = json_pack("{s:f, s:f, s:i, s:o, s:o, s:f, s:f, s:f, s:f, s:i, s:b, s:b, s:I, s:s}",
                          "peak_1core_gflops", r->peak_1core_gflops, "peak_all_gflops",
                          r->peak_all_gflops, "roof_bits", r->roof_bits, "widths",
                          cph_roofs_widths_json(r), "ratio_512_256",
                          r->ratio_512_256 > 0 ? json_real(r->ratio_512_256) : json_null(),
                          "bw_1core_gbs", r->bw_1core_gbs, "bw_all_gbs", r->bw_all_gbs,
                          "ridge_1core", r->ridge_1core, "ridge_all", r->ridge_all, "cores_used",
                          r->cores_used, "portable_peak", r->portable_peak, "pinned", r->pinned,
                          "triad_array_bytes", (json_int_t)r->triad_bytes, "bandwidth_counting",
                          "stream: 12 bytes/element, write-allocate not counted");
    if (o) json_object_set_new(o, "peak_basis", json_string("the widest width (roof_bits)"));
    if (o) cph_roofs_levels_json(r, o);
    return o;
}

json_t *cph_machine_to_json(const cph_machine *m, const cph_roofs *roofs) {
    const cp_cache_sizes cs = cph_machine_caches(m);
    json_t *o = cph_device_json(m);
    if (!o) return NULL;
    json_t *ac = json_pack("{s:I, s:I, s:I, s:I}", "l1d", (json_int_t)cs.l1d, "l2",
                           (json_int_t)cs.l2, "l3", (json_int_t)cs.l3, "line", (json_int_t)cs.line);
    if (json_object_set_new(o, "algorithm_caches", ac) != 0 ||
        json_object_set_new(o, "llc_total_bytes",
                            json_integer((json_int_t)cph_machine_llc_total(m))) != 0 ||
        json_object_set_new(o, "roofs", roofs ? cph_roofs_json(roofs) : json_null()) != 0) {
        json_decref(o);
        return NULL;
    }
    return o;
}
