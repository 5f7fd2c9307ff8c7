/* Older spellings -> the current ones, rewriting the JSON tree in place before
 * it is decoded, so that one decoder serves every version
 * (docs/table-format.md, "Migration").  Lenient by design: what does not look
 * as the old version wrote it is left alone and then reported by the decoder
 * under its current name. */
#include <string.h>

#include "loader/codec.h"

int cpl_rename(json_t *obj, const char *from, const char *to) {
    json_t *v = json_object_get(obj, from);
    if (!v || json_object_get(obj, to)) return 1;
    if (json_object_set(obj, to, v) != 0) return 0;
    return json_object_del(obj, from) == 0;
}

int cpl_migrate_shape(json_t *shape) {
    if (!json_is_object(shape)) return 1;
    if (!cpl_rename(shape, "dil_h", "dilation_h") || !cpl_rename(shape, "dil_w", "dilation_w"))
        return 0;
    if (!json_object_get(shape, "layout"))
        return json_object_set_new(shape, "layout", json_string(CPL_LAYOUT)) == 0;
    return 1;
}

/* "xcorr" -> false, "conv" -> true; anything else stays (the decoder then
 * reports "flipped: missing"). */
static json_t *flipped_of(const json_t *mode) {
    if (!json_is_string(mode)) return NULL;
    if (strcmp(json_string_value(mode), "xcorr") == 0) return json_false();
    if (strcmp(json_string_value(mode), "conv") == 0) return json_true();
    return NULL;
}

int cpl_migrate_mode(json_t *obj) {
    json_t *f = flipped_of(json_object_get(obj, "mode"));
    if (!f || json_object_get(obj, "flipped")) return 1;
    if (json_object_set_new(obj, "flipped", f) != 0) return 0;
    return json_object_del(obj, "mode") == 0;
}

int cpl_migrate_params(json_t *obj) {
    json_t *p = json_object_get(obj, "params");
    return !json_is_object(p) || cpl_rename(p, "ukernel", "tile_isa");
}

/* Version 1 wrote "mode" lists as ["xcorr", "conv"]: the same as flipped. */
int cpl_migrate_mode_list(json_t *obj, const char *from) {
    json_t *modes = json_object_get(obj, from);
    if (!json_is_array(modes) || json_object_get(obj, "flipped")) return 1;
    json_t *out = json_array();
    size_t i;
    json_t *m;
    json_array_foreach(modes, i, m) {
        json_t *f = flipped_of(m);
        if (!f || json_array_append_new(out, f) != 0) {
            json_decref(out);
            return f != NULL ? 0 : 1;
        }
    }
    if (json_object_set_new(obj, "flipped", out) != 0) return 0;
    return json_object_del(obj, from) == 0;
}

/* Moves obj[keys...] into a new sub-object obj[name] (kept if present). */
static int nest(json_t *obj, const char *name, const char *const *keys, size_t n) {
    json_t *sub = json_object_get(obj, name);
    if (sub) return 1;
    sub = json_object();
    if (!sub || json_object_set_new(obj, name, sub) != 0) return 0;
    for (size_t i = 0; i < n; i++) {
        json_t *v = json_object_get(obj, keys[i]);
        if (!v) continue;
        if (json_object_set(sub, keys[i], v) != 0 || json_object_del(obj, keys[i]) != 0) return 0;
    }
    return 1;
}

int cpl_migrate_device(json_t *dev) {
    if (!json_is_object(dev)) return 1;
    json_t *cpu = json_object_get(dev, "cpu");
    if (json_is_object(cpu) && json_object_get(cpu, "brand")) {
        /* bench results v1: cpu.brand is the model text, cpu.model its number */
        if (!cpl_rename(cpu, "model", "model_id") || !cpl_rename(cpu, "brand", "model")) return 0;
    } else if (!cpu && json_is_string(json_object_get(dev, "model"))) {
        /* tuning table v1: one flat object */
        static const char *const c[] = {"vendor", "model", "family", "model_id", "stepping"};
        static const char *const t[] = {"packages", "numa_nodes", "cores", "pus", "memory_bytes"};
        static const char *const b[] = {"compiler", "flags"};
        if (!nest(dev, "cpu", c, 5) || !nest(dev, "topology", t, 5) || !nest(dev, "build", b, 2))
            return 0;
    }
    json_t *blas = json_object_get(dev, "blas");
    if (json_is_object(blas) && !cpl_rename(blas, "config", "version")) return 0;
    json_t *isa = json_object_get(dev, "isa");
    if (json_is_object(isa)) { /* {"avx2": true, ...} -> ["avx2", ...] */
        json_t *list = json_array();
        const char *k;
        json_t *v;
        json_object_foreach(isa, k, v)
            if (json_is_true(v) && json_array_append_new(list, json_string(k)) != 0) {
                json_decref(list);
                return 0;
            }
        return json_object_set_new(dev, "isa", list) == 0;
    }
    size_t i;
    json_t *v;
    json_array_foreach(isa, i, v) /* table v1 spelled it "sse4.2" */
        if (json_is_string(v) && strcmp(json_string_value(v), "sse4.2") == 0 &&
            json_array_set_new(isa, i, json_string("sse4_2")) != 0)
            return 0;
    return 1;
}

/* Table v1 timing {"median_s", "ci_lo_s", "ci_hi_s", "samples", "noisy",
 * "samples_s"} -> {"stats": {"median", "ci_lo", "ci_hi", "n", "noisy"},
 * "samples"}. */
static int migrate_timing(json_t *t) {
    if (!json_is_object(t) || json_object_get(t, "stats")) return 1;
    static const char *const from[] = {"median_s", "ci_lo_s", "ci_hi_s", "samples", "noisy"};
    static const char *const to[] = {"median", "ci_lo", "ci_hi", "n", "noisy"};
    json_t *stats = json_object();
    if (!stats) return 0;
    for (size_t i = 0; i < 5; i++) {
        json_t *v = json_object_get(t, from[i]);
        if (v && json_object_set(stats, to[i], v) != 0) {
            json_decref(stats);
            return 0;
        }
        json_object_del(t, from[i]);
    }
    return json_object_set_new(t, "stats", stats) == 0 && cpl_rename(t, "samples_s", "samples");
}

/* Table v1 settings: the timing fields at the top, "caches": "cold"|"warm". */
static int migrate_settings(json_t *s) {
    if (!json_is_object(s) || json_object_get(s, "timing")) return 1;
    static const char *const k[] = {"warmup", "min_samples", "max_samples", "target_rel_ci",
                                    "confidence", "max_seconds"};
    if (!nest(s, "timing", k, 6)) return 0;
    json_t *caches = json_object_get(s, "caches");
    if (json_is_string(caches)) {
        json_t *cold = strcmp(json_string_value(caches), "cold") == 0   ? json_true()
                       : strcmp(json_string_value(caches), "warm") == 0 ? json_false()
                                                                        : NULL;
        if (cold) {
            if (json_object_set_new(json_object_get(s, "timing"), "cold", cold) != 0) return 0;
            json_object_del(s, "caches");
        }
    }
    return 1;
}

int cpl_table_migrate_entry(json_t *e, int from) {
    if (from == CP_TABLE_VERSION || !json_is_object(e)) return 1;
    if (!cpl_migrate_shape(json_object_get(e, "shape")) || !cpl_migrate_mode(e) ||
        !cpl_migrate_params(json_object_get(e, "choice")) ||
        !cpl_migrate_params(json_object_get(e, "runner_up")) ||
        !migrate_timing(json_object_get(e, "timing")))
        return 0;
    size_t i;
    json_t *cand;
    json_array_foreach(json_object_get(e, "candidates"), i, cand)
        if (json_is_object(cand) &&
            (!cpl_migrate_params(cand) || !migrate_timing(json_object_get(cand, "timing"))))
            return 0;
    return 1;
}

cp_status cpl_table_migrate(const cpl_jctx *c, json_t *root, int *from) {
    json_t *v = json_object_get(root, "version");
    *from = CP_TABLE_VERSION;
    if (!json_is_integer(v) || json_integer_value(v) == CP_TABLE_VERSION) return CP_OK;
    if (json_integer_value(v) != 1)
        return cpl_jfail(c, CP_EVERSION,
                         "version: %lld is not supported (this build reads versions 1 to %d)",
                         (long long)json_integer_value(v), CP_TABLE_VERSION);
    *from = 1;
    int ok = cpl_migrate_device(json_object_get(root, "device")) &&
             migrate_settings(json_object_get(root, "settings"));
    size_t i;
    json_t *e;
    json_array_foreach(json_object_get(root, "entries"), i, e) if (ok) ok = cpl_table_migrate_entry(e, 1);
    if (ok) ok = json_object_set_new(root, "version", json_integer(CP_TABLE_VERSION)) == 0;
    return ok ? CP_OK : cpl_jfail(c, CP_ENOMEM, "out of memory migrating version 1");
}

