/* Input files of the report -> sources (report.h).  Each format goes through
 * its one reader: tables through the loader (cp_table_load_buffer, which also
 * migrates version 1), bench results through harness/io/results_read.h; probe
 * output and the cache study are recognised here and only their roofs and
 * device description are read (leniently: fields added later are ignored). */
#include <jansson.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "harness/io/codec_encode.h"
#include "harness/io/results_read.h"
#include "harness/report/report.h"
#include "loader/codec.h"

#define REPORT_MAX_BYTES ((size_t)1 << 31)

const char *cph_rep_kind_name(cph_rep_kind k) {
    switch (k) {
    case CPH_REP_TABLE: return "tuning table";
    case CPH_REP_BENCH: return "bench results";
    case CPH_REP_PROBE: return "probe output";
    case CPH_REP_CACHE: return "cache study";
    }
    return "?";
}

static const char *jstr(const json_t *o, const char *k) {
    const json_t *v = json_is_object(o) ? json_object_get(o, k) : NULL;
    return json_is_string(v) ? json_string_value(v) : NULL;
}

static long long jint(const json_t *o, const char *k) {
    const json_t *v = json_is_object(o) ? json_object_get(o, k) : NULL;
    return json_is_integer(v) ? json_integer_value(v) : 0;
}

/* The device object (either spelling of the cpu's name) -> one line. */
static int describe_device(const json_t *dev, cph_rep_source *s) {
    const json_t *cpu = json_object_get(dev, "cpu");
    const char *model = jstr(cpu, "model");
    if (!model) model = jstr(cpu, "brand");
    if (!model) model = jstr(dev, "model"); /* version 1 tables, before migration */
    snprintf(s->model, sizeof s->model, "%s", model ? model : "unknown processor");
    const char *fp = jstr(dev, "fingerprint");
    if (fp && !s->fingerprint[0]) snprintf(s->fingerprint, sizeof s->fingerprint, "%s", fp);
    const json_t *topo = json_object_get(dev, "topology");
    int cores = (int)jint(topo ? topo : dev, "cores");
    char caches[160] = "";
    const json_t *cs = json_object_get(dev, "caches");
    for (size_t i = 0; i < json_array_size(cs) && i < 4; i++) {
        const json_t *c = json_array_get(cs, i);
        const size_t len = strlen(caches);
        snprintf(caches + len, sizeof caches - len, "%sL%lld %lld KiB", i ? ", " : "",
                 jint(c, "level"), jint(c, "size") / 1024);
    }
    snprintf(s->description, sizeof s->description, "%s (%s, cpuid family %lld model %lld); "
             "%d physical cores; caches %s", s->model, jstr(cpu, "vendor") ? jstr(cpu, "vendor")
             : "?", jint(cpu, "family"), jint(cpu, cpu && jint(cpu, "model_id") ? "model_id"
             : "model"), cores, caches[0] ? caches : "unknown");
    return cores > 0 ? cores : 1;
}

static cp_status from_table(const char *data, size_t len, const char *path, json_t *root,
                            cph_rep_source *s, char *msg, size_t cap) {
    cp_table *t;
    cp_status st = cp_table_load_buffer(data, len, path, 0, &t, msg, cap);
    if (st != CP_OK) return st;
    cpl_jctx jc = {path, msg, cap};
    int from;
    if ((st = cpl_table_migrate(&jc, root, &from)) != CP_OK) { /* the device's current spelling */
        cp_table_free(t);
        return st;
    }
    snprintf(s->fingerprint, sizeof s->fingerprint, "%s", cp_table_fingerprint(t));
    describe_device(json_object_get(root, "device"), s);
    const size_t n = cp_table_count(t);
    s->entries = n ? calloc(n, sizeof *s->entries) : NULL;
    if (n && !s->entries) goto oom;
    for (size_t i = 0; i < n; i++) {
        const cp_table_entry *e = cp_table_entry_at(t, i);
        cph_rep_entry *x = &s->entries[s->nentries++];
        snprintf(x->layer, sizeof x->layer, "%s", e->name);
        x->shape = e->shape;
        x->flip = e->flip;
        x->threads = e->threads;
        x->count = 1;
        x->choice = -1;
        x->cands = e->ncandidates ? calloc(e->ncandidates, sizeof *x->cands) : NULL;
        if (e->ncandidates && !x->cands) goto oom;
        char chosen[160];
        cp_params_format(e->algo, &e->params, chosen, sizeof chosen);
        for (size_t k = 0; k < e->ncandidates; k++) {
            const cp_candidate *c = &e->candidates[k];
            if (c->failed || c->disqualified || !(c->timing.median > 0)) continue;
            cph_rep_cand *y = &x->cands[x->ncands];
            snprintf(y->algo, sizeof y->algo, "%s", c->algo);
            const cp_algo *a = cp_algo_find(c->algo);
            if (a) cp_params_format(a, &c->params, y->params, sizeof y->params);
            y->median = c->timing.median;
            y->ci_lo = c->timing.ci_lo;
            y->ci_hi = c->timing.ci_hi;
            y->noisy = c->timing.noisy;
            y->rel_err = c->rel_err;
            if (x->choice < 0 && strcmp(y->algo, e->algo->name) == 0 &&
                strcmp(y->params, chosen) == 0)
                x->choice = (long)x->ncands;
            x->ncands++;
        }
        x->margin = x->margin_lo = x->margin_hi = NAN;
        if (e->runner_up) {
            char rp[160];
            cp_params_format(e->runner_up, &e->runner_up_params, rp, sizeof rp);
            snprintf(x->runner, sizeof x->runner, "%s%s%s%s", e->runner_up->name,
                     rp[0] ? " (" : "", rp, rp[0] ? ")" : "");
            x->margin = e->margin;
            x->margin_lo = e->margin_lo;
            x->margin_hi = e->margin_hi;
            x->confident = !e->margin_in_noise;
        }
    }
    cp_table_free(t);
    return CP_OK;
oom:
    cp_table_free(t);
    snprintf(msg, cap, "%s: out of memory", path);
    return CP_ENOMEM;
}

/* The index of it's point among s's entries, appended (without candidates)
 * when new. */
static size_t bench_entry(cph_rep_source *s, const cph_result_item *it) {
    for (size_t i = 0; i < s->nentries; i++) {
        const cph_rep_entry *e = &s->entries[i];
        if (e->threads == it->threads && e->flip == it->flip && cp_shape_equal(&e->shape, &it->shape))
            return i;
    }
    cph_rep_entry *e = &s->entries[s->nentries];
    snprintf(e->layer, sizeof e->layer, "%s", it->layer);
    e->shape = it->shape;
    e->flip = it->flip;
    e->threads = it->threads;
    e->count = it->count > 0 ? it->count : 1;
    e->count_known = it->count > 0;
    e->choice = -1;
    e->margin = e->margin_lo = e->margin_hi = NAN;
    return s->nentries++;
}

/* Rows of algorithms (the SGEMM reference rows are not: no registry name). */
static int bench_row(const cph_result_item *it) { return cp_algo_find(it->algo) != NULL; }

static cp_status from_bench(const char *data, size_t len, const char *path, const json_t *root,
                            cph_rep_source *s, char *msg, size_t cap) {
    cph_results r;
    cp_status st = cph_results_read_buffer(data, len, path, &r, msg, cap);
    if (st != CP_OK) return st;
    snprintf(s->fingerprint, sizeof s->fingerprint, "%s", r.fingerprint);
    const int cores = describe_device(json_object_get(root, "device"), s);
    cph_rep_roofs_read(json_object_get(root, "roofs"), cores, s);
    cph_rep_roofs_read(json_object_get(json_object_get(root, "device"), "roofs"), cores, s);
    /* Two passes: the entries and their sizes, then the candidates. */
    s->entries = r.nitems ? calloc(r.nitems, sizeof *s->entries) : NULL;
    size_t *at = r.nitems ? calloc(r.nitems, sizeof *at) : NULL;
    st = r.nitems && (!s->entries || !at) ? CP_ENOMEM : CP_OK;
    for (size_t i = 0; i < r.nitems && st == CP_OK; i++)
        if (bench_row(&r.items[i])) s->entries[at[i] = bench_entry(s, &r.items[i])].ncands++;
    for (size_t k = 0; k < s->nentries && st == CP_OK; k++) {
        s->entries[k].cands = calloc(s->entries[k].ncands, sizeof *s->entries[k].cands);
        if (!s->entries[k].cands) st = CP_ENOMEM;
        s->entries[k].ncands = 0;
    }
    for (size_t i = 0; i < r.nitems && st == CP_OK; i++) {
        const cph_result_item *it = &r.items[i];
        if (!bench_row(it)) continue;
        cph_rep_entry *e = &s->entries[at[i]];
        cph_rep_cand *c = &e->cands[e->ncands++];
        snprintf(c->algo, sizeof c->algo, "%s", it->algo);
        snprintf(c->params, sizeof c->params, "%s", it->params);
        c->median = it->median;
        c->ci_lo = it->timing.ci_lo;
        c->ci_hi = it->timing.ci_hi;
        c->noisy = it->timing.noisy;
        c->rel_err = NAN;
    }
    free(at);
    cph_results_free(&r);
    if (st == CP_ENOMEM) snprintf(msg, cap, "%s: out of memory", path);
    return st;
}

/* One file -> s. */
static cp_status read_one(const char *path, cph_rep_source *s, char *msg, size_t cap) {
    cpl_jctx c = {path, msg, cap};
    char *data;
    size_t len;
    snprintf(s->path, sizeof s->path, "%s", path);
    cp_status st = cpl_read_file(&c, path, REPORT_MAX_BYTES, "input", "convpick", &data, &len);
    if (st != CP_OK) return st;
    json_error_t err;
    json_t *root = json_loadb(data, len, 0, &err);
    if (!root || !json_is_object(root)) {
        if (root)
            snprintf(msg, cap, "%s: expected a JSON object at the top", path);
        else
            snprintf(msg, cap, "%s:%d:%d: malformed JSON: %s", path, err.line, err.column,
                     err.text);
        json_decref(root);
        free(data);
        return CP_EFORMAT;
    }
    const char *fmt = jstr(root, "format");
    if (fmt && strcmp(fmt, CP_TABLE_FORMAT) == 0) {
        s->kind = CPH_REP_TABLE;
        st = from_table(data, len, path, root, s, msg, cap);
    } else if (fmt && strcmp(fmt, CPH_BENCH_FORMAT) == 0) {
        s->kind = CPH_REP_BENCH;
        st = from_bench(data, len, path, root, s, msg, cap);
    } else if (fmt && strcmp(fmt, "convpick-cache-study") == 0) {
        s->kind = CPH_REP_CACHE;
        describe_device(json_object_get(root, "machine"), s);
        s->cache_json = data;
        s->cache_len = len;
        data = NULL;
    } else if (!fmt && jstr(root, "fingerprint") && json_object_get(root, "roofs")) {
        s->kind = CPH_REP_PROBE; /* convpick probe --json: the device object itself */
        const int cores = describe_device(root, s);
        cph_rep_roofs_read(json_object_get(root, "roofs"), cores, s);
    } else {
        snprintf(msg, cap, "%s: format: %s%s%s is not a tuning table, bench results, probe "
                 "output (convpick probe --json) or a cache study", path, fmt ? "\"" : "",
                 fmt ? fmt : "missing", fmt ? "\"" : "");
        st = CP_EFORMAT;
    }
    json_decref(root);
    free(data);
    return st;
}

cp_status cph_report_collect(const char *const *paths, size_t npaths, cph_report *out, char *msg,
                             size_t cap) {
    memset(out, 0, sizeof *out);
    out->src = calloc(npaths ? npaths : 1, sizeof *out->src);
    if (!out->src) {
        snprintf(msg, cap, "out of memory");
        return CP_ENOMEM;
    }
    for (size_t i = 0; i < npaths; i++) {
        cp_status st = read_one(paths[i], &out->src[i], msg, cap);
        out->n = i + 1;
        if (st != CP_OK) {
            cph_report_free(out);
            return st;
        }
    }
    /* Bench results tell how often each shape occurs; tables do not record it. */
    for (size_t i = 0; i < out->n; i++)
        for (size_t k = 0; k < out->src[i].nentries; k++) {
            const cph_rep_entry *b = &out->src[i].entries[k];
            if (out->src[i].kind == CPH_REP_BENCH && b->count_known)
                cph_rep_set_count(out, &b->shape, b->count);
        }
    return CP_OK;
}

void cph_report_free(cph_report *r) {
    for (size_t i = 0; i < r->n; i++) {
        for (size_t k = 0; k < r->src[i].nentries; k++) free(r->src[i].entries[k].cands);
        free(r->src[i].entries);
        free(r->src[i].cache_json);
    }
    free(r->src);
    r->src = NULL;
    r->n = 0;
}
