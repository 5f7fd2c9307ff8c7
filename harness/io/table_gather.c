/* convpick gather: shard tables -> one table (table_gather.h).  Every input
 * is read by the table writer's reader (migrated, checked by the loader);
 * the output is built so that its bytes depend on the set of inputs only:
 * the header comes from the input whose header sorts first, "created" is the
 * latest, the thread lists are united, and entries are written sorted by
 * their key with conflicts resolved by a rule that looks at the entries
 * alone (docs/table-format.md, "Gathering shards"). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "algos/core/cpa.h"
#include "harness/io/report_json.h"
#include "harness/io/table_doc_impl.h"
#include "harness/io/table_gather.h"

typedef struct shard {
    const char *path;
    json_t *root;
    char fp[17];
    char *head;     /* the header without entries and created: compact, keys sorted */
    char *settings; /* settings without threads: compact, keys sorted */
} shard;

#define CANON (JSON_COMPACT | JSON_SORT_KEYS | JSON_REAL_PRECISION(17))

void cph_evidence_path(const char *table, char *out, size_t cap) {
    const size_t n = strlen(table);
    if (n > 5 && strcmp(table + n - 5, ".json") == 0)
        snprintf(out, cap, "%.*s.evidence.json", (int)(n - 5), table);
    else
        snprintf(out, cap, "%s.evidence.json", table);
}

/* A dump of obj without the named keys (a shallow copy), or NULL. */
static char *canon_without(const json_t *obj, const char *k1, const char *k2) {
    json_t *c = json_copy((json_t *)obj);
    if (!c) return NULL;
    json_object_del(c, k1);
    if (k2) json_object_del(c, k2);
    char *s = json_dumps(c, CANON);
    json_decref(c);
    return s;
}

static int head_cmp(const void *pa, const void *pb) {
    const shard *a = pa, *b = pb;
    return strcmp(a->head, b->head);
}

static double entry_median(const json_t *e) {
    const json_t *m = json_object_get(json_object_get(json_object_get(e, "timing"), "stats"),
                                      "median");
    return json_is_number(m) ? json_number_value(m) : INFINITY;
}

/* The conflict rule: the lower median of the chosen algorithm wins; equal
 * medians, the entry whose canonical text sorts first.  1 when b beats a. */
static int beats(const json_t *a, const json_t *b) {
    const double ma = entry_median(a), mb = entry_median(b);
    if (ma != mb) return mb < ma;
    char *ta = json_dumps(a, CANON), *tb = json_dumps(b, CANON);
    const int r = ta && tb && strcmp(tb, ta) < 0;
    free(ta);
    free(tb);
    return r;
}

static int str_cmp(const void *a, const void *b) {
    return strcmp(*(const char *const *)a, *(const char *const *)b);
}

static int int_cmp(const void *a, const void *b) {
    const json_int_t x = *(const json_int_t *)a, y = *(const json_int_t *)b;
    return (x > y) - (x < y);
}

/* Every shard's thread counts, sorted, each once. */
static json_t *united_threads(const shard *s, size_t n) {
    size_t total = 0, k = 0;
    for (size_t i = 0; i < n; i++)
        total += json_array_size(json_object_get(json_object_get(s[i].root, "settings"),
                                                 "threads"));
    json_int_t *v = malloc((total ? total : 1) * sizeof *v);
    json_t *out = json_array();
    if (!v || !out) {
        free(v);
        json_decref(out);
        return NULL;
    }
    for (size_t i = 0; i < n; i++) {
        size_t j;
        json_t *t;
        json_array_foreach(json_object_get(json_object_get(s[i].root, "settings"), "threads"), j,
                           t) v[k++] = json_integer_value(t);
    }
    qsort(v, k, sizeof *v, int_cmp);
    for (size_t i = 0; i < k; i++)
        if (i == 0 || v[i] != v[i - 1]) json_array_append_new(out, json_integer(v[i]));
    free(v);
    return out;
}

/* The mismatches between shards (device, settings) as text lines. */
static json_t *mismatches(const shard *s, size_t n) {
    json_t *lines = json_array();
    char buf[1024];
    for (size_t i = 1; lines && i < n; i++) {
        if (strcmp(s[i].fp, s[0].fp) != 0) {
            snprintf(buf, sizeof buf, "device: shards of devices %s and %s; the table carries %s",
                     s[0].fp, s[i].fp, s[0].fp);
            json_array_append_new(lines, json_string(buf));
        }
        if (strcmp(s[i].settings, s[0].settings) != 0) {
            json_array_append_new(lines, json_string("settings: shards measured with different "
                                                     "settings; the table carries the first's"));
        }
    }
    return lines;
}

/* The refusal of mismatched shards: the first pair that differs, by file. */
static cp_status refuse(const shard *s, size_t n, char *msg, size_t cap) {
    for (size_t i = 1; i < n; i++) {
        if (strcmp(s[i].fp, s[0].fp) != 0)
            return cpa_fail(CP_EDEVICE, msg, cap, "%s (device %s) and %s (device %s): shards of "
                            "different devices (--mixed gathers them anyway)", s[0].path,
                            s[0].fp, s[i].path, s[i].fp);
        if (strcmp(s[i].settings, s[0].settings) != 0)
            return cpa_fail(CP_EINVAL, msg, cap, "%s and %s: shards measured with different "
                            "settings (--mixed gathers them anyway)", s[0].path, s[i].path);
    }
    return CP_OK;
}

/* The entries of every shard by key, conflicts resolved; a sorted array. */
static cp_status gather_entries(const shard *s, size_t n, json_t **out, size_t *conflicts,
                                char *msg, size_t cap) {
    json_t *by = json_object();
    if (!by) return cpa_fail(CP_ENOMEM, msg, cap, "gather: out of memory");
    char k[512];
    for (size_t i = 0; i < n; i++) {
        size_t j;
        json_t *e;
        json_array_foreach(json_object_get(s[i].root, "entries"), j, e) {
            if (!cph_table_entry_key(e, k, sizeof k)) continue;
            json_t *have = json_object_get(by, k);
            if (have) (*conflicts)++;
            if (!have || beats(have, e)) json_object_set(by, k, e);
        }
    }
    const size_t m = json_object_size(by);
    const char **keys = malloc((m ? m : 1) * sizeof *keys);
    json_t *arr = json_array();
    if (!keys || !arr) {
        free(keys);
        json_decref(arr);
        json_decref(by);
        return cpa_fail(CP_ENOMEM, msg, cap, "gather: out of memory");
    }
    size_t i = 0;
    const char *key;
    json_t *v;
    json_object_foreach(by, key, v) keys[i++] = key;
    qsort(keys, m, sizeof *keys, str_cmp);
    for (i = 0; i < m; i++) json_array_append(arr, json_object_get(by, keys[i]));
    free(keys);
    json_decref(by);
    *out = arr;
    return CP_OK;
}

/* The output document: format and version, then "gathered", then the first
 * shard's header (created: the latest; settings.threads: united), entries. */
static json_t *build_doc(const shard *s, size_t n, json_t *entries, size_t conflicts,
                         json_t *mixed) {
    const char *created = json_string_value(json_object_get(s[0].root, "created"));
    for (size_t i = 1; i < n; i++) {
        const char *c = json_string_value(json_object_get(s[i].root, "created"));
        if (c && (!created || strcmp(c, created) > 0)) created = c;
    }
    json_t *doc = json_object();
    json_t *g = json_pack("{s:I, s:I, s:s}", "shards", (json_int_t)n, "conflicts",
                          (json_int_t)conflicts, "rule",
                          "same shape, flip and threads in several shards: the lower median of "
                          "the chosen algorithm wins, then the entry whose text sorts first");
    if (!doc || !g) {
        json_decref(doc);
        json_decref(g);
        return NULL;
    }
    if (json_array_size(mixed)) json_object_set(g, "mixed", mixed);
    json_object_set(doc, "format", json_object_get(s[0].root, "format"));
    json_object_set(doc, "version", json_object_get(s[0].root, "version"));
    json_object_set_new(doc, "gathered", g);
    const char *key;
    json_t *v;
    json_object_foreach(s[0].root, key, v) {
        if (!strcmp(key, "format") || !strcmp(key, "version") || !strcmp(key, "entries") ||
            !strcmp(key, "gathered") || !strcmp(key, "evidence"))
            continue;
        if (!strcmp(key, "created")) {
            json_object_set_new(doc, key, json_string(created));
        } else if (!strcmp(key, "settings")) {
            json_t *st = json_copy(v);
            if (st) json_object_set_new(st, "threads", united_threads(s, n));
            json_object_set_new(doc, key, st);
        } else {
            json_object_set(doc, key, v);
        }
    }
    json_object_set(doc, "entries", entries);
    return doc;
}

/* The lean copy of doc: entries without candidates and tried, "evidence"
 * naming the side file (its base name: the two ship side by side). */
static json_t *lean_of(const json_t *doc, const char *evidence) {
    json_t *lean = json_copy((json_t *)doc), *entries = json_array();
    if (!lean || !entries) {
        json_decref(lean);
        json_decref(entries);
        return NULL;
    }
    size_t i;
    json_t *e;
    json_array_foreach(json_object_get(doc, "entries"), i, e) {
        json_t *c = json_copy(e);
        json_object_del(c, "candidates");
        json_object_del(c, "tried");
        json_array_append_new(entries, c);
    }
    const char *base = strrchr(evidence, '/');
    json_object_set_new(lean, "evidence", json_string(base ? base + 1 : evidence));
    json_object_set_new(lean, "entries", entries);
    return lean;
}

static cp_status write_out(json_t *doc, const char *out, const cph_gather_opts *o,
                           cph_gather_result *res, char *msg, size_t cap) {
    if (!o->lean) return cph_json_write_atomic(doc, out, msg, cap);
    cph_evidence_path(out, res->evidence, sizeof res->evidence);
    json_t *lean = lean_of(doc, res->evidence);
    if (!lean) return cpa_fail(CP_ENOMEM, msg, cap, "gather: out of memory");
    cp_status st = cph_json_write_atomic(doc, res->evidence, msg, cap);
    if (st == CP_OK) st = cph_json_write_atomic(lean, out, msg, cap);
    json_decref(lean);
    return st;
}

static cp_status read_shards(const char *const *inputs, size_t n, shard *s, char *msg,
                             size_t cap) {
    for (size_t i = 0; i < n; i++) {
        s[i].path = inputs[i];
        cp_status st = cph_table_read_tree(inputs[i], &s[i].root, s[i].fp, msg, cap);
        if (st != CP_OK) return st;
        s[i].head = canon_without(s[i].root, "entries", "created");
        s[i].settings = canon_without(json_object_get(s[i].root, "settings"), "threads", NULL);
        if (!s[i].head || !s[i].settings)
            return cpa_fail(CP_ENOMEM, msg, cap, "%s: out of memory", inputs[i]);
    }
    return CP_OK;
}

cp_status cph_table_gather(const char *const *inputs, size_t n, const char *out,
                           const cph_gather_opts *o, cph_gather_result *res, char *msg,
                           size_t cap) {
    memset(res, 0, sizeof *res);
    if (n == 0) return cpa_fail(CP_EINVAL, msg, cap, "no shard tables given");
    shard *s = calloc(n, sizeof *s);
    if (!s) return cpa_fail(CP_ENOMEM, msg, cap, "gather: out of memory");
    cp_status st = read_shards(inputs, n, s, msg, cap);
    json_t *mixed = NULL, *entries = NULL, *doc = NULL;
    if (st == CP_OK) {
        qsort(s, n, sizeof *s, head_cmp);
        mixed = mismatches(s, n);
        if (!mixed) st = cpa_fail(CP_ENOMEM, msg, cap, "gather: out of memory");
    }
    if (st == CP_OK && json_array_size(mixed) && !o->allow_mixed) st = refuse(s, n, msg, cap);
    if (st == CP_OK) st = gather_entries(s, n, &entries, &res->conflicts, msg, cap);
    if (st == CP_OK && !(doc = build_doc(s, n, entries, res->conflicts, mixed)))
        st = cpa_fail(CP_ENOMEM, msg, cap, "gather: out of memory");
    if (st == CP_OK) st = write_out(doc, out, o, res, msg, cap);
    res->inputs = n;
    res->entries = json_array_size(entries);
    res->mixed = json_array_size(mixed) > 0;
    json_decref(doc);
    json_decref(entries);
    json_decref(mixed);
    for (size_t i = 0; i < n; i++) {
        json_decref(s[i].root);
        free(s[i].head);
        free(s[i].settings);
    }
    free(s);
    return st;
}
