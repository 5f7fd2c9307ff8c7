/* The tuning-table loader: JSON (jansson) -> cp_table, checking every field a
 * lookup relies on and naming the field at fault ("file: entries[3].shape.k:
 * expected integer"), so that a deploying program never dispatches on a table
 * it misread.  Format: docs/table-format.md.  No hwloc, no harness code. */
#define _POSIX_C_SOURCE 200809L /* fdopen, O_CLOEXEC */
#include <errno.h>
#include <fcntl.h>
#include <jansson.h>
#include <limits.h>
#include <math.h>
#include <stdarg.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "loader/table_impl.h"

typedef struct ctx {
    const char *file;
    char *msg;
    size_t cap;
} ctx;

static cp_status fail(const ctx *c, cp_status st, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));
static cp_status fail(const ctx *c, cp_status st, const char *fmt, ...) {
    if (c->msg && c->cap) {
        int n = snprintf(c->msg, c->cap, "%s: ", c->file);
        if (n >= 0 && (size_t)n < c->cap) {
            va_list ap;
            va_start(ap, fmt);
            vsnprintf(c->msg + n, c->cap - (size_t)n, fmt, ap);
            va_end(ap);
        }
    }
    return st;
}

static const char *type_name(const json_t *v) {
    switch (json_typeof(v)) {
    case JSON_OBJECT: return "an object";
    case JSON_ARRAY: return "an array";
    case JSON_STRING: return "a string";
    case JSON_INTEGER: return "an integer";
    case JSON_REAL: return "a real number";
    case JSON_TRUE:
    case JSON_FALSE: return "a boolean";
    case JSON_NULL: return "null";
    }
    return "something else";
}

/* Fetches obj[key] of the given kind, else a message naming where.key.
 * kind: JSON_OBJECT, JSON_ARRAY, JSON_STRING, JSON_INTEGER, JSON_REAL (any
 * number) or JSON_TRUE (a boolean).  nullable: null is accepted (returns it). */
static cp_status field(const ctx *c, const json_t *obj, const char *where, const char *key,
                       json_type kind, int nullable, json_t **out) {
    static const char *const want[] = {
        [JSON_OBJECT] = "object", [JSON_ARRAY] = "array",   [JSON_STRING] = "string",
        [JSON_INTEGER] = "integer", [JSON_REAL] = "number", [JSON_TRUE] = "boolean",
    };
    json_t *v = json_object_get(obj, key);
    const char *dot = where[0] ? "." : "";
    if (!v) return fail(c, CP_EFORMAT, "%s%s%s: missing (expected %s)", where, dot, key, want[kind]);
    int ok;
    switch (kind) {
    case JSON_REAL: ok = json_is_number(v); break;
    case JSON_TRUE: ok = json_is_boolean(v); break;
    default: ok = json_typeof(v) == kind; break;
    }
    if (!ok && !(nullable && json_is_null(v)))
        return fail(c, CP_EFORMAT, "%s%s%s: expected %s%s, found %s", where, dot, key, want[kind],
                    nullable ? " or null" : "", type_name(v));
    *out = v;
    return CP_OK;
}

static cp_status get_int(const ctx *c, const json_t *obj, const char *where, const char *key,
                         long long lo, long long hi, long long *out) {
    json_t *v = NULL;
    cp_status st = field(c, obj, where, key, JSON_INTEGER, 0, &v);
    if (st != CP_OK) return st;
    long long x = (long long)json_integer_value(v);
    if (x < lo || x > hi)
        return fail(c, CP_EFORMAT, "%s.%s: %lld is outside [%lld, %lld]", where, key, x, lo, hi);
    *out = x;
    return CP_OK;
}

static cp_status get_real(const ctx *c, const json_t *obj, const char *where, const char *key,
                          double *out) {
    json_t *v = NULL;
    cp_status st = field(c, obj, where, key, JSON_REAL, 0, &v);
    if (st != CP_OK) return st;
    *out = json_number_value(v);
    if (!isfinite(*out) || *out < 0)
        return fail(c, CP_EFORMAT, "%s.%s: expected a finite number >= 0", where, key);
    return CP_OK;
}

static cp_status get_str(const ctx *c, const json_t *obj, const char *where, const char *key,
                         const char **out) {
    json_t *v = NULL;
    cp_status st = field(c, obj, where, key, JSON_STRING, 0, &v);
    if (st == CP_OK) *out = json_string_value(v);
    return st;
}

static cp_status get_bool(const ctx *c, const json_t *obj, const char *where, const char *key,
                          int *out) {
    json_t *v = NULL;
    cp_status st = field(c, obj, where, key, JSON_TRUE, 0, &v);
    if (st == CP_OK) *out = json_is_true(v);
    return st;
}

static cp_status get_algo(const ctx *c, const json_t *obj, const char *where,
                          const cp_algo **out) {
    const char *name;
    cp_status st = get_str(c, obj, where, "algo", &name);
    if (st != CP_OK) return st;
    *out = cp_algo_find(name);
    if (!*out) {
        char known[256] = "";
        size_t len = 0;
        for (size_t i = 0; i < cp_algo_count() && len < sizeof known; i++) {
            int n = snprintf(known + len, sizeof known - len, "%s%s", i ? ", " : "",
                             cp_algo_at(i)->name);
            if (n < 0) break;
            len += (size_t)n;
        }
        return fail(c, CP_ENOTFOUND, "%s.algo: unknown algorithm '%s' (this build has: %s)", where,
                    name, known);
    }
    return CP_OK;
}

/* "params": {name: integer}, each a parameter of the algorithm.  A parameter
 * the object lacks takes the algorithm's default for the entry's shape and the
 * table's cache sizes: tables written before an algorithm gained a parameter
 * still load, and run as that default says. */
static cp_status get_params(const ctx *c, const json_t *obj, const char *where, const cp_algo *a,
                            const cp_shape *shape, const cp_cache_sizes *caches, cp_params *out) {
    json_t *p = NULL;
    cp_status st = field(c, obj, where, "params", JSON_OBJECT, 0, &p);
    if (st != CP_OK) return st;
    memset(out, 0, sizeof *out);
    const char *key;
    json_t *v = NULL;
    json_object_foreach(p, key, v) {
        if (cp_algo_param_index(a, key) < 0)
            return fail(c, CP_EFORMAT, "%s.params.%s: %s has no parameter of that name", where,
                        key, a->name);
    }
    char sub[160];
    snprintf(sub, sizeof sub, "%s.params", where);
    cp_params defaults;
    cp_algo_defaults(a, shape, caches, &defaults);
    for (int i = 0; i < a->nparams; i++) {
        long long x;
        if (!json_object_get(p, a->params[i].name)) {
            out->v[i] = defaults.v[i];
            continue;
        }
        st = get_int(c, p, sub, a->params[i].name, LLONG_MIN, LLONG_MAX, &x);
        if (st != CP_OK) return st;
        out->v[i] = (int64_t)x;
    }
    char why[200];
    if (cp_params_check(a, out, why, sizeof why) != CP_OK)
        return fail(c, CP_EFORMAT, "%s.params: %s", where, why);
    return CP_OK;
}

static cp_status get_timing(const ctx *c, const json_t *t, const char *where, cp_timing *out) {
    cp_status st;
    long long samples;
    if ((st = get_real(c, t, where, "median_s", &out->median)) != CP_OK) return st;
    if ((st = get_real(c, t, where, "ci_lo_s", &out->ci_lo)) != CP_OK) return st;
    if ((st = get_real(c, t, where, "ci_hi_s", &out->ci_hi)) != CP_OK) return st;
    if ((st = get_int(c, t, where, "samples", 0, UINT32_MAX, &samples)) != CP_OK) return st;
    if ((st = get_bool(c, t, where, "noisy", &out->noisy)) != CP_OK) return st;
    out->samples = (uint32_t)samples;
    if (out->ci_lo > out->median || out->median > out->ci_hi)
        return fail(c, CP_EFORMAT, "%s: expected ci_lo_s <= median_s <= ci_hi_s", where);
    return CP_OK;
}

static const char *const shape_keys[] = {
    "n",      "c",       "h",        "w",          "k",         "r",          "s",          "stride_h",
    "stride_w", "pad_top", "pad_left", "pad_bottom", "pad_right", "dilation_h", "dilation_w", "groups",
};

static cp_status get_shape(const ctx *c, const json_t *e, const char *where, cp_shape *out) {
    json_t *sh = NULL;
    cp_status st = field(c, e, where, "shape", JSON_OBJECT, 0, &sh);
    if (st != CP_OK) return st;
    char sub[96];
    snprintf(sub, sizeof sub, "%s.shape", where);
    int64_t *dst[] = {&out->n,        &out->c,        &out->h,        &out->w,
                      &out->k,        &out->r,        &out->s,        &out->stride_h,
                      &out->stride_w, &out->pad_top,  &out->pad_left, &out->pad_bottom,
                      &out->pad_right, &out->dil_h,   &out->dil_w,    &out->groups};
    *out = cp_shape_init();
    for (size_t i = 0; i < sizeof shape_keys / sizeof shape_keys[0]; i++) {
        long long x;
        st = get_int(c, sh, sub, shape_keys[i], LLONG_MIN, LLONG_MAX, &x);
        if (st != CP_OK) return st;
        *dst[i] = (int64_t)x;
    }
    const char *layout;
    if ((st = get_str(c, sh, sub, "layout", &layout)) != CP_OK) return st;
    if (strcmp(layout, "NCHW/KCRS") != 0)
        return fail(c, CP_EFORMAT, "%s.layout: '%s' is not a layout this build has (NCHW/KCRS)",
                    sub, layout);
    char why[200];
    if (cp_shape_validate(out, why, sizeof why) != CP_SHAPE_OK)
        return fail(c, CP_EFORMAT, "%s: invalid shape: %s", sub, why);
    return CP_OK;
}

static cp_status get_candidate(const ctx *c, const json_t *cj, const char *where,
                               const cp_shape *shape, const cp_cache_sizes *caches,
                               cp_candidate *out) {
    cp_status st;
    const cp_algo *a;
    memset(out, 0, sizeof *out);
    if (!json_is_object(cj)) return fail(c, CP_EFORMAT, "%s: expected object, found %s", where, type_name(cj));
    if ((st = get_algo(c, cj, where, &a)) != CP_OK) return st;
    snprintf(out->algo, sizeof out->algo, "%s", a->name);
    if ((st = get_params(c, cj, where, a, shape, caches, &out->params)) != CP_OK) return st;
    const char *status, *note;
    if ((st = get_str(c, cj, where, "status", &status)) != CP_OK) return st;
    if ((st = get_str(c, cj, where, "note", &note)) != CP_OK) return st;
    if (strcmp(status, "ok") == 0) {
    } else if (strcmp(status, "disqualified") == 0) {
        out->disqualified = 1;
    } else if (strcmp(status, "failed") == 0) {
        out->failed = 1;
    } else {
        return fail(c, CP_EFORMAT, "%s.status: '%s' (expected ok, disqualified or failed)", where,
                    status);
    }
    json_t *t = NULL, *re = NULL;
    if ((st = field(c, cj, where, "timing", JSON_OBJECT, 1, &t)) != CP_OK) return st;
    if ((st = field(c, cj, where, "rel_err", JSON_REAL, 1, &re)) != CP_OK) return st;
    if (!out->failed && !out->disqualified && json_is_null(t))
        return fail(c, CP_EFORMAT, "%s.timing: null only when status is disqualified or failed",
                    where);
    if (!out->failed && !out->disqualified && json_is_null(re))
        return fail(c, CP_EFORMAT, "%s.rel_err: null only when status is disqualified or failed",
                    where);
    if (!json_is_null(t)) {
        char sub[112];
        snprintf(sub, sizeof sub, "%s.timing", where);
        if ((st = get_timing(c, t, sub, &out->timing)) != CP_OK) return st;
        json_t *sv = json_object_get(t, "samples_s");
        if (sv) {
            if (!json_is_array(sv))
                return fail(c, CP_EFORMAT, "%s.samples_s: expected array, found %s", sub, type_name(sv));
            out->nsamples = json_array_size(sv);
            out->samples = out->nsamples ? malloc(out->nsamples * sizeof *out->samples) : NULL;
            if (out->nsamples && !out->samples) return fail(c, CP_ENOMEM, "%s: out of memory", sub);
            for (size_t i = 0; i < out->nsamples; i++) {
                json_t *x = json_array_get(sv, i);
                if (!json_is_number(x))
                    return fail(c, CP_EFORMAT, "%s.samples_s[%zu]: expected number, found %s", sub, i,
                                type_name(x));
                out->samples[i] = json_number_value(x);
            }
        }
    }
    out->rel_err = NAN;
    if (!json_is_null(re)) {
        if ((st = get_real(c, cj, where, "rel_err", &out->rel_err)) != CP_OK) return st;
    }
    return CP_OK;
}

static cp_status get_entry(const ctx *c, const json_t *e, size_t idx, cp_table_entry *out,
                           char *key, size_t keycap, const cp_cache_sizes *caches) {
    char where[48];
    snprintf(where, sizeof where, "entries[%zu]", idx);
    if (!json_is_object(e)) return fail(c, CP_EFORMAT, "%s: expected object, found %s", where, type_name(e));
    cp_status st;
    const char *s;
    if ((st = get_str(c, e, where, "name", &s)) != CP_OK) return st;
    if (strlen(s) >= sizeof out->name)
        return fail(c, CP_EFORMAT, "%s.name: longer than %zu bytes", where, sizeof out->name - 1);
    snprintf(out->name, sizeof out->name, "%s", s);
    if ((st = get_shape(c, e, where, &out->shape)) != CP_OK) return st;
    if ((st = get_str(c, e, where, "mode", &s)) != CP_OK) return st;
    if (strcmp(s, "xcorr") == 0)
        out->flip = CP_XCORR;
    else if (strcmp(s, "conv") == 0)
        out->flip = CP_CONV;
    else
        return fail(c, CP_EFORMAT, "%s.mode: '%s' (expected xcorr or conv)", where, s);
    long long th;
    if ((st = get_int(c, e, where, "threads", 1, 65536, &th)) != CP_OK) return st;
    out->threads = (int)th;

    char sub[96];
    json_t *ch = NULL, *t = NULL, *ru = NULL, *cands = NULL, *tried = NULL;
    if ((st = field(c, e, where, "choice", JSON_OBJECT, 0, &ch)) != CP_OK) return st;
    snprintf(sub, sizeof sub, "%s.choice", where);
    if ((st = get_algo(c, ch, sub, &out->algo)) != CP_OK) return st;
    if ((st = get_params(c, ch, sub, out->algo, &out->shape, caches, &out->params)) != CP_OK)
        return st;
    char why[200];
    if (!out->algo->supports(&out->shape, out->flip, why, sizeof why))
        return fail(c, CP_EFORMAT, "%s.algo: %s does not support this entry's shape: %s", sub,
                    out->algo->name, why);

    if ((st = field(c, e, where, "timing", JSON_OBJECT, 0, &t)) != CP_OK) return st;
    snprintf(sub, sizeof sub, "%s.timing", where);
    if ((st = get_timing(c, t, sub, &out->timing)) != CP_OK) return st;

    if ((st = field(c, e, where, "runner_up", JSON_OBJECT, 1, &ru)) != CP_OK) return st;
    out->runner_up = NULL;
    if (!json_is_null(ru)) {
        snprintf(sub, sizeof sub, "%s.runner_up", where);
        if ((st = get_algo(c, ru, sub, &out->runner_up)) != CP_OK) return st;
        if ((st = get_params(c, ru, sub, out->runner_up, &out->shape, caches,
                             &out->runner_up_params)) != CP_OK)
            return st;
        if ((st = get_real(c, ru, sub, "margin", &out->margin)) != CP_OK) return st;
        if ((st = get_bool(c, ru, sub, "in_noise", &out->margin_in_noise)) != CP_OK) return st;
    }

    if ((st = field(c, e, where, "candidates", JSON_ARRAY, 0, &cands)) != CP_OK) return st;
    out->ncandidates = json_array_size(cands);
    if (out->ncandidates) {
        out->candidates = calloc(out->ncandidates, sizeof *out->candidates);
        if (!out->candidates) return fail(c, CP_ENOMEM, "%s: out of memory", where);
    }
    for (size_t i = 0; i < out->ncandidates; i++) {
        snprintf(sub, sizeof sub, "%s.candidates[%zu]", where, i);
        if ((st = get_candidate(c, json_array_get(cands, i), sub, &out->shape, caches,
                                &out->candidates[i])) != CP_OK)
            return st;
    }
    if ((st = field(c, e, where, "tried", JSON_OBJECT, 0, &tried)) != CP_OK) return st;
    if ((st = get_str(c, e, where, "settings_key", &s)) != CP_OK) return st;
    if (strlen(s) >= keycap)
        return fail(c, CP_EFORMAT, "%s.settings_key: longer than %zu bytes", where, keycap - 1);
    snprintf(key, keycap, "%s", s);
    return CP_OK;
}

static cp_status get_device(const ctx *c, const json_t *root, cp_table *t) {
    json_t *dev = NULL, *caches = NULL;
    const char *fp;
    cp_status st;
    if ((st = field(c, root, "", "device", JSON_OBJECT, 0, &dev)) != CP_OK) return st;
    if ((st = get_str(c, dev, "device", "fingerprint", &fp)) != CP_OK) return st;
    if (strlen(fp) != 16 || strspn(fp, "0123456789abcdef") != 16)
        return fail(c, CP_EFORMAT, "device.fingerprint: '%s' is not 16 lower-case hex digits", fp);
    memcpy(t->fingerprint, fp, 17);
    t->caches = cp_cache_sizes_fallback();
    if ((st = field(c, dev, "device", "caches", JSON_ARRAY, 0, &caches)) != CP_OK) return st;
    for (size_t i = 0; i < json_array_size(caches); i++) {
        char sub[48];
        snprintf(sub, sizeof sub, "device.caches[%zu]", i);
        json_t *cj = json_array_get(caches, i);
        if (!json_is_object(cj)) return fail(c, CP_EFORMAT, "%s: expected object, found %s", sub, type_name(cj));
        long long level, size, line;
        const char *kind;
        if ((st = get_int(c, cj, sub, "level", 1, 8, &level)) != CP_OK) return st;
        if ((st = get_int(c, cj, sub, "size", 1, LLONG_MAX, &size)) != CP_OK) return st;
        if ((st = get_int(c, cj, sub, "line", 1, 65536, &line)) != CP_OK) return st;
        if ((st = get_str(c, cj, sub, "kind", &kind)) != CP_OK) return st;
        if (level == 1 && strcmp(kind, "data") == 0) t->caches.l1d = (size_t)size;
        if (level == 1) t->caches.line = (size_t)line;
        if (level == 2) t->caches.l2 = (size_t)size;
        if (level == 3) t->caches.l3 = (size_t)size;
    }
    char here[17];
    cp_device_fingerprint(here);
    t->device_matches = strcmp(here, t->fingerprint) == 0;
    return CP_OK;
}

/* qsort has no context argument: the entries being sorted. */
static _Thread_local const cp_table_entry *sort_base;

static int order_cmp(const void *pa, const void *pb) {
    size_t ia = *(const size_t *)pa, ib = *(const size_t *)pb;
    int r = cpl_entry_cmp(&sort_base[ia], &sort_base[ib]);
    if (r) return r;
    return (ia > ib) - (ia < ib);
}

/* Everything before the entries: format, version, provenance, device. */
static cp_status build_header(const ctx *c, const json_t *root, unsigned flags, cp_table *t,
                              json_t **entries) {
    cp_status st;
    if (!json_is_object(root))
        return fail(c, CP_EFORMAT, "expected a JSON object at the top level, found %s", type_name(root));
    const char *fmt;
    if ((st = get_str(c, root, "", "format", &fmt)) != CP_OK) return st;
    if (strcmp(fmt, CP_TABLE_FORMAT) != 0)
        return fail(c, CP_EFORMAT, "format: '%s' is not a %s", fmt, CP_TABLE_FORMAT);
    json_t *v = NULL;
    if ((st = field(c, root, "", "version", JSON_INTEGER, 0, &v)) != CP_OK) return st;
    if (json_integer_value(v) != CP_TABLE_VERSION)
        return fail(c, CP_EVERSION, "version: %lld is not supported (this build reads version %d)",
                    (long long)json_integer_value(v), CP_TABLE_VERSION);
    const char *created;
    json_t *cpj = NULL, *settings = NULL;
    if ((st = get_str(c, root, "", "created", &created)) != CP_OK) return st;
    if ((st = field(c, root, "", "convpick", JSON_OBJECT, 0, &cpj)) != CP_OK) return st;
    if ((st = field(c, root, "", "settings", JSON_OBJECT, 0, &settings)) != CP_OK) return st;
    if ((st = get_device(c, root, t)) != CP_OK) return st;
    if ((flags & CP_TABLE_STRICT_DEVICE) && !t->device_matches) {
        char here[17];
        cp_device_fingerprint(here);
        return fail(c, CP_EDEVICE, "device.fingerprint: %s is not this machine's (%s)",
                    t->fingerprint, here);
    }
    return field(c, root, "", "entries", JSON_ARRAY, 0, entries);
}

static cp_status alloc_entries(const ctx *c, cp_table *t, size_t n) {
    if (!n) return CP_OK;
    t->entries = calloc(n, sizeof *t->entries);
    t->settings_keys = calloc(n, sizeof *t->settings_keys);
    t->order = calloc(n, sizeof *t->order);
    if (!t->entries || !t->settings_keys || !t->order)
        return fail(c, CP_ENOMEM, "out of memory for %zu entries", n);
    return CP_OK;
}

/* Entry i from its JSON value. */
static cp_status add_entry(const ctx *c, cp_table *t, const json_t *e, size_t i) {
    t->n = i + 1; /* so that cp_table_free releases the candidates read so far */
    cp_status st =
        get_entry(c, e, i, &t->entries[i], t->settings_keys[i], CPT_KEY_MAX, &t->caches);
    t->order[i] = i;
    return st;
}

/* The index (sorted order) and the duplicate check, once all n entries are in. */
static cp_status finish(const ctx *c, cp_table *t, size_t n) {
    sort_base = t->entries;
    if (n) qsort(t->order, n, sizeof *t->order, order_cmp);
    for (size_t i = 1; i < n; i++)
        if (cpl_entry_cmp(&t->entries[t->order[i - 1]], &t->entries[t->order[i]]) == 0)
            return fail(c, CP_EFORMAT,
                        "entries[%zu]: same shape, mode and threads as entries[%zu]",
                        t->order[i], t->order[i - 1]);
    return CP_OK;
}

/* The reference path: the whole document as one jansson tree.  Its messages
 * (jansson's line:column for malformed JSON, then the first field at fault)
 * are the loader's messages. */
static cp_status load_whole(const ctx *c, const char *data, size_t len, unsigned flags,
                            cp_table *t) {
    json_error_t err;
    json_t *root = json_loadb(data, len, JSON_REJECT_DUPLICATES, &err);
    if (!root) {
        if (c->msg && c->cap)
            snprintf(c->msg, c->cap, "%s:%d:%d: %s", c->file, err.line, err.column, err.text);
        return CP_EFORMAT;
    }
    json_t *entries = NULL;
    cp_status st = build_header(c, root, flags, t, &entries);
    const size_t n = st == CP_OK ? json_array_size(entries) : 0;
    if (st == CP_OK) st = alloc_entries(c, t, n);
    for (size_t i = 0; i < n && st == CP_OK; i++) st = add_entry(c, t, json_array_get(entries, i), i);
    if (st == CP_OK) st = finish(c, t, n);
    json_decref(root);
    return st;
}

/* --- the fast path --------------------------------------------------------
 * A large table is mostly its entries.  Parsed as one tree, jansson builds
 * (and later frees) millions of small objects spread over the whole heap;
 * parsed one entry at a time, each tree is small and freed at once, which
 * measured ~40 % less CPU time on a 100 000-entry table.  A byte scanner finds
 * the top-level "entries" array and counts its elements; the rest of the
 * document is parsed with the array emptied, and each element on its own
 * (JSON_DISABLE_EOF_CHECK gives where it ended).  Anything unexpected, and any
 * error at all, falls back to load_whole, so that messages and results are
 * exactly the reference path's (fuzz_table_load checks both agree). */

static int is_ws(char ch) { return ch == ' ' || ch == '\t' || ch == '\n' || ch == '\r'; }

/* Index just past the string starting at d[i] == '"', or 0 if unterminated. */
static size_t skip_string(const char *d, size_t len, size_t i) {
    for (i++; i < len; i++) {
        if (d[i] == '\\') {
            i++;
        } else if (d[i] == '"') {
            return i + 1;
        }
    }
    return 0;
}

/* Finds the top-level "entries" array: d[*open] == '[', d[*close] == ']',
 * *count elements.  0 when the document does not look as expected. */
static int find_entries(const char *d, size_t len, size_t *open, size_t *close, size_t *count) {
    size_t i = 0;
    while (i < len && is_ws(d[i])) i++;
    if (i >= len || d[i] != '{') return 0;
    int depth = 0, expect_key = 0;
    for (; i < len; i++) {
        const char ch = d[i];
        if (ch == '"') {
            size_t end = skip_string(d, len, i);
            if (!end) return 0;
            if (depth == 1 && expect_key) {
                expect_key = 0;
                const int is_entries = end - i == 9 && memcmp(d + i + 1, "entries", 7) == 0;
                size_t j = end;
                while (j < len && is_ws(d[j])) j++;
                if (j >= len || d[j] != ':') return 0;
                j++;
                while (j < len && is_ws(d[j])) j++;
                if (is_entries) {
                    if (j >= len || d[j] != '[') return 0;
                    *open = j;
                    size_t n = 0;
                    int ad = 0, any = 0;
                    for (size_t k = j; k < len; k++) {
                        const char a = d[k];
                        if (a == '"') {
                            size_t e = skip_string(d, len, k);
                            if (!e) return 0;
                            k = e - 1;
                            any = 1;
                        } else if (a == '[' || a == '{') {
                            if (ad == 1) any = 1;
                            ad++;
                        } else if (a == ']' || a == '}') {
                            ad--;
                            if (ad == 0) {
                                if (a != ']') return 0;
                                *close = k;
                                *count = any ? n + 1 : 0;
                                return 1;
                            }
                        } else if (a == ',' && ad == 1) {
                            n++;
                        } else if (!is_ws(a) && ad == 1) {
                            any = 1;
                        }
                    }
                    return 0;
                }
            }
            i = end - 1;
            continue;
        }
        if (ch == '{' || ch == '[') {
            depth++;
            if (depth == 1) expect_key = 1;
        } else if (ch == '}' || ch == ']') {
            depth--;
            if (depth <= 0) return 0;
        } else if (ch == ',' && depth == 1) {
            expect_key = 1;
        }
    }
    return 0;
}

/* CP_OK, or anything else meaning "use load_whole". */
static cp_status load_fast(const ctx *c, const char *d, size_t len, unsigned flags, cp_table *t) {
    size_t open, close, count;
    if (!find_entries(d, len, &open, &close, &count)) return CP_EFORMAT;
    /* The document with "entries": [] */
    const size_t hlen = open + 2 + (len - close - 1);
    char *head = malloc(hlen);
    if (!head) return CP_ENOMEM;
    memcpy(head, d, open);
    head[open] = '[';
    head[open + 1] = ']';
    memcpy(head + open + 2, d + close + 1, len - close - 1);
    json_error_t err;
    json_t *root = json_loadb(head, hlen, JSON_REJECT_DUPLICATES, &err);
    free(head);
    if (!root) return CP_EFORMAT;
    json_t *entries = NULL;
    cp_status st = build_header(c, root, flags, t, &entries);
    json_decref(root);
    if (st == CP_OK) st = alloc_entries(c, t, count);
    size_t p = open + 1;
    for (size_t i = 0; i < count && st == CP_OK; i++) {
        while (p < close && is_ws(d[p])) p++;
        json_t *e = json_loadb(d + p, close - p,
                               JSON_REJECT_DUPLICATES | JSON_DISABLE_EOF_CHECK | JSON_DECODE_ANY,
                               &err);
        if (!e) {
            st = CP_EFORMAT;
            break;
        }
        p += (size_t)err.position;
        st = add_entry(c, t, e, i);
        json_decref(e);
        while (p < close && is_ws(d[p])) p++;
        if (st == CP_OK && i + 1 < count && (p >= close || d[p] != ',')) st = CP_EFORMAT;
        p++;
    }
    if (st == CP_OK && count && p != close + 1) st = CP_EFORMAT;
    if (st == CP_OK) st = finish(c, t, count);
    return st;
}

static void clear_table(cp_table *t) {
    for (size_t i = 0; i < t->n; i++) {
        for (size_t j = 0; j < t->entries[i].ncandidates; j++) free(t->entries[i].candidates[j].samples);
        free(t->entries[i].candidates);
    }
    free(t->entries);
    free(t->settings_keys);
    free(t->order);
    memset(t, 0, sizeof *t);
}

cp_status cp_table_load(const char *path, unsigned flags, cp_table **out, char *msg, size_t cap) {
    ctx c = {path ? path : "(null)", msg, cap};
    *out = NULL;
    if (!path) return fail(&c, CP_EINVAL, "no table path given");
    struct stat sb;
    if (stat(path, &sb) != 0) return fail(&c, CP_EIO, "cannot read: %s", strerror(errno));
    if (S_ISDIR(sb.st_mode)) return fail(&c, CP_EIO, "cannot read: is a directory");
    /* Opened without blocking, then switched back to blocking reads: a FIFO
     * that no program writes reads as empty instead of hanging in open(). */
    int fd = open(path, O_RDONLY | O_NONBLOCK | O_CLOEXEC);
    if (fd < 0) return fail(&c, CP_EIO, "cannot read: %s", strerror(errno));
    int fl = fcntl(fd, F_GETFL);
    if (fl != -1) (void)fcntl(fd, F_SETFL, fl & ~O_NONBLOCK);
    FILE *f = fdopen(fd, "rb");
    if (!f) {
        int e = errno;
        close(fd);
        return fail(&c, CP_EIO, "cannot read: %s", strerror(e));
    }
    if (S_ISREG(sb.st_mode) && sb.st_size == 0) {
        fclose(f);
        return fail(&c, CP_EFORMAT, "empty file (expected a %s JSON document)", CP_TABLE_FORMAT);
    }
    /* One read into memory, then json_loadb: jansson's stream reader takes
     * the file a character at a time, noticeably slower on large tables.  A
     * regular file is read up to the size it had when opened (a file that
     * grows meanwhile is refused rather than chased); anything else (a pipe)
     * up to CPT_MAX_BYTES, so /dev/zero cannot exhaust memory. */
    const int regular = S_ISREG(sb.st_mode);
    if (regular && (uintmax_t)sb.st_size > CPT_MAX_BYTES) {
        fclose(f);
        return fail(&c, CP_EFORMAT, "%jd bytes: larger than the %llu bytes a table may have",
                    (intmax_t)sb.st_size, (unsigned long long)CPT_MAX_BYTES);
    }
    const size_t limit = regular ? (size_t)sb.st_size : (size_t)CPT_MAX_BYTES;
    size_t size = 0, len = 0, want = regular ? (size_t)sb.st_size + 1 : 65536;
    char *buf = NULL;
    for (;;) {
        if (len == size) {
            size_t ncap = size ? size + (size >> 1) : want;
            if (ncap > limit + 1) ncap = limit + 1;
            char *nb = realloc(buf, ncap);
            if (!nb) {
                free(buf);
                fclose(f);
                return fail(&c, CP_ENOMEM, "out of memory reading %zu bytes", size);
            }
            buf = nb;
            size = ncap;
        }
        size_t got = fread(buf + len, 1, size - len, f);
        len += got;
        if (got == 0 || len > limit) break;
        /* A stream that does not start like a JSON object (/dev/zero, a
         * binary pipe) is refused before gigabytes of it are read. */
        if (!regular && len == got) {
            size_t i = 0;
            while (i < len && (buf[i] == ' ' || buf[i] == '\t' || buf[i] == '\n' || buf[i] == '\r'))
                i++;
            if (i < len && buf[i] != '{') {
                free(buf);
                fclose(f);
                return fail(&c, CP_EFORMAT, "does not start with '{' (expected a %s JSON object)",
                            CP_TABLE_FORMAT);
            }
        }
    }
    int rerr = ferror(f);
    fclose(f);
    if (rerr) {
        free(buf);
        return fail(&c, CP_EIO, "read error: %s", strerror(errno));
    }
    if (len > limit) {
        free(buf);
        if (regular)
            return fail(&c, CP_EIO, "the file grew while being read (beyond its %zu bytes): "
                                    "is another program writing it?", limit);
        return fail(&c, CP_EFORMAT, "more than the %llu bytes a table may have",
                    (unsigned long long)CPT_MAX_BYTES);
    }
    if (len == 0) {
        free(buf);
        return fail(&c, CP_EFORMAT, "empty file (expected a %s JSON document)", CP_TABLE_FORMAT);
    }
    cp_status st = cp_table_load_buffer(buf, len, path, flags, out, msg, cap);
    free(buf);
    return st;
}

cp_status cp_table_load_buffer(const void *data, size_t len, const char *name, unsigned flags,
                               cp_table **out, char *msg, size_t cap) {
    ctx c = {name ? name : "(buffer)", msg, cap};
    *out = NULL;
    if (!data || len == 0)
        return fail(&c, CP_EFORMAT, "empty file (expected a %s JSON document)", CP_TABLE_FORMAT);
    cp_table *t = calloc(1, sizeof *t);
    if (!t) return fail(&c, CP_ENOMEM, "out of memory");
    cp_status st = (flags & CPT_LOAD_WHOLE) ? CP_EFORMAT : load_fast(&c, data, len, flags, t);
    if (st != CP_OK) {
        clear_table(t);
        st = load_whole(&c, data, len, flags & ~(unsigned)CPT_LOAD_WHOLE, t);
    }
    if (st != CP_OK) {
        cp_table_free(t);
        return st;
    }
    *out = t;
    return CP_OK;
}

void cp_table_free(cp_table *t) {
    if (!t) return;
    for (size_t i = 0; i < t->n; i++) {
        for (size_t j = 0; j < t->entries[i].ncandidates; j++) free(t->entries[i].candidates[j].samples);
        free(t->entries[i].candidates);
    }
    free(t->entries);
    free(t->settings_keys);
    free(t->order);
    free(t);
}
