/* Bench results and tuning tables -> one list of measured items (see
 * results_read.h).  The field names follow harness/cmd_bench.c and
 * harness/report_json.h (bench) and docs/table.schema.json (tables). */
#define _POSIX_C_SOURCE 200809L
#include "harness/io/results_read.h"

#include <errno.h>
#include <fcntl.h>
#include <jansson.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <stdint.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#define BENCH_FORMAT "convpick-bench-results"
#define BENCH_VERSION 1

typedef struct ctx {
    const char *file;
    char *msg;
    size_t cap;
    cph_results *r;
    size_t items_cap;
} ctx;

static cp_status fail(const ctx *c, cp_status st, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));
static cp_status fail(const ctx *c, cp_status st, const char *fmt, ...) {
    if (c->msg && c->cap) {
        const int n = snprintf(c->msg, c->cap, "%s: ", c->file);
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
    if (!v) return "nothing";
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

/* obj[key] of the wanted type, else a message "where.key: ...". */
static cp_status get(const ctx *c, const json_t *obj, const char *where, const char *key,
                     json_type kind, json_t **out) {
    static const char *const want[] = {
        [JSON_OBJECT] = "an object", [JSON_ARRAY] = "an array", [JSON_STRING] = "a string",
        [JSON_INTEGER] = "an integer", [JSON_REAL] = "a number",
    };
    json_t *v = json_object_get(obj, key);
    const char *dot = where[0] ? "." : "";
    if (!v) return fail(c, CP_EFORMAT, "%s%s%s: missing (expected %s)", where, dot, key, want[kind]);
    const int ok = kind == JSON_REAL ? json_is_number(v) : json_typeof(v) == kind;
    if (!ok)
        return fail(c, CP_EFORMAT, "%s%s%s: expected %s, found %s", where, dot, key, want[kind],
                    type_name(v));
    *out = v;
    return CP_OK;
}

static cp_status get_text(const ctx *c, const json_t *obj, const char *where, const char *key,
                          char *out, size_t cap) {
    json_t *v = NULL;
    cp_status st = get(c, obj, where, key, JSON_STRING, &v);
    if (st) return st;
    const char *s = json_string_value(v);
    if (strlen(s) >= cap)
        return fail(c, CP_EFORMAT, "%s.%s: longer than %zu characters", where, key, cap - 1);
    memcpy(out, s, strlen(s) + 1);
    return CP_OK;
}

static cp_status get_int(const ctx *c, const json_t *obj, const char *where, const char *key,
                         long long lo, long long hi, long long *out) {
    json_t *v = NULL;
    cp_status st = get(c, obj, where, key, JSON_INTEGER, &v);
    if (st) return st;
    const long long x = (long long)json_integer_value(v);
    if (x < lo || x > hi)
        return fail(c, CP_EFORMAT, "%s.%s: %lld is outside [%lld, %lld]", where, key, x, lo, hi);
    *out = x;
    return CP_OK;
}

static cp_status get_mode(const ctx *c, const json_t *obj, const char *where, cp_flip *out) {
    char m[16];
    cp_status st = get_text(c, obj, where, "mode", m, sizeof m);
    if (st) return fail(c, CP_EFORMAT, "%s.mode: expected \"xcorr\" or \"conv\"", where);
    if (strcmp(m, "xcorr") == 0)
        *out = CP_XCORR;
    else if (strcmp(m, "conv") == 0)
        *out = CP_CONV;
    else
        return fail(c, CP_EFORMAT, "%s.mode: expected \"xcorr\" or \"conv\", found \"%s\"", where, m);
    return CP_OK;
}

/* Shapes: bench names dilation dil_h/dil_w, tables dilation_h/dilation_w. */
static cp_status get_shape(const ctx *c, const json_t *obj, const char *where, int table,
                           cp_shape *out) {
    char sub[160];
    json_t *s;
    cp_status st = get(c, obj, where, "shape", JSON_OBJECT, &s);
    if (st) return st;
    snprintf(sub, sizeof sub, "%s.shape", where);
    const char *keys[16] = {"n", "c", "h", "w", "k", "r", "s", "stride_h", "stride_w", "pad_top",
                            "pad_left", "pad_bottom", "pad_right",
                            table ? "dilation_h" : "dil_h", table ? "dilation_w" : "dil_w",
                            "groups"};
    int64_t *fields[16] = {&out->n, &out->c, &out->h, &out->w, &out->k, &out->r,
                           &out->s, &out->stride_h, &out->stride_w, &out->pad_top,
                           &out->pad_left, &out->pad_bottom, &out->pad_right, &out->dil_h,
                           &out->dil_w, &out->groups};
    *out = cp_shape_init();
    for (int i = 0; i < 16; i++) {
        long long v = 0;
        if ((st = get_int(c, s, sub, keys[i], 0, (long long)1 << 40, &v))) return st;
        *fields[i] = (int64_t)v;
    }
    char why[256];
    if (cp_shape_validate(out, why, sizeof why) != CP_SHAPE_OK)
        return fail(c, CP_EFORMAT, "%s: %s", sub, why);
    return CP_OK;
}

/* Where a parameter name sorts: its index in the algorithm's declaration,
 * names the algorithm does not declare after all of them. */
static int param_rank(const cp_algo *a, const char *name) {
    const int i = a ? cp_algo_param_index(a, name) : -1;
    return i >= 0 ? i : 64;
}

/* {"kt": 4, "kb": 64} -> "kb=64,kt=4": the algorithm's declaration order
 * (as everywhere parameters are printed); names it does not declare (the
 * SGEMM reference rows' m, k, n, ...) after, in the order the writer wrote them. */
static cp_status get_params(const ctx *c, const json_t *obj, const char *where, const char *algo,
                            char *out, size_t cap) {
    json_t *p;
    cp_status st = get(c, obj, where, "params", JSON_OBJECT, &p);
    if (st) return st;
    const char *names[64];
    size_t n = 0;
    const char *key;
    json_t *v = NULL;
    json_object_foreach(p, key, v) {
        if (!json_is_integer(v))
            return fail(c, CP_EFORMAT, "%s.params.%s: expected an integer, found %s", where, key,
                        type_name(v));
        if (n == 64) return fail(c, CP_EFORMAT, "%s.params: more than 64 parameters", where);
        names[n++] = key;
    }
    const cp_algo *a = cp_algo_find(algo);
    for (size_t i = 1; i < n; i++) /* insertion sort: at most a few names */
        for (size_t j = i; j > 0; j--) {
            const int rj = param_rank(a, names[j]), rp = param_rank(a, names[j - 1]);
            if (rp <= rj) break; /* equal: undeclared names keep the file's order */
            const char *t = names[j];
            names[j] = names[j - 1];
            names[j - 1] = t;
        }
    size_t len = 0;
    out[0] = '\0';
    for (size_t i = 0; i < n; i++) {
        const int w = snprintf(out + len, cap - len, "%s%s=%lld", i ? "," : "", names[i],
                               (long long)json_integer_value(json_object_get(p, names[i])));
        if (w < 0 || (size_t)w >= cap - len)
            return fail(c, CP_EFORMAT, "%s.params: too long", where);
        len += (size_t)w;
    }
    return CP_OK;
}

static int cmp_double(const void *a, const void *b) {
    const double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

static double median_of(const double *v, size_t n) {
    double *s = malloc(n * sizeof *s);
    if (!s) return NAN;
    memcpy(s, v, n * sizeof *s);
    qsort(s, n, sizeof *s, cmp_double);
    const double m = n % 2 ? s[n / 2] : 0.5 * (s[n / 2 - 1] + s[n / 2]);
    free(s);
    return m;
}

/* arr -> a new array of n seconds; "where" names arr. */
static cp_status get_samples(const ctx *c, const json_t *arr, const char *where, double **out,
                             size_t *n) {
    *out = NULL;
    *n = json_array_size(arr);
    if (!*n) return CP_OK;
    double *v = malloc(*n * sizeof *v);
    if (!v) return fail(c, CP_ENOMEM, "%s: out of memory", where);
    for (size_t i = 0; i < *n; i++) {
        const json_t *x = json_array_get(arr, i);
        const double t = json_is_number(x) ? json_number_value(x) : -1.0;
        if (!(t >= 0.0) || !isfinite(t)) {
            free(v);
            return fail(c, CP_EFORMAT, "%s[%zu]: expected a number >= 0 (seconds), found %s",
                        where, i, json_is_number(x) ? "a negative or non-finite number" : type_name(x));
        }
        v[i] = t;
    }
    *out = v;
    return CP_OK;
}

static cp_status push_item(ctx *c, const cph_result_item *it) {
    cph_results *r = c->r;
    if (r->nitems == c->items_cap) {
        const size_t nc = c->items_cap ? 2 * c->items_cap : 64;
        cph_result_item *v = realloc(r->items, nc * sizeof *v);
        if (!v) return fail(c, CP_ENOMEM, "out of memory");
        r->items = v;
        c->items_cap = nc;
    }
    r->items[r->nitems++] = *it;
    return CP_OK;
}

static void note_cold(cph_results *r, int cold, int *first) {
    if (*first) {
        r->cold = cold;
        *first = 0;
    } else if (r->cold != cold) {
        r->cold = -1;
    }
}

static cp_status check_version(const ctx *c, const json_t *root, const char *format, int version) {
    json_t *v = NULL;
    cp_status st = get(c, root, "", "version", JSON_INTEGER, &v);
    if (st) return st;
    if (json_integer_value(v) != version)
        return fail(c, CP_EVERSION, "version: %s version %lld is not supported (this build reads "
                    "version %d)", format, (long long)json_integer_value(v), version);
    return CP_OK;
}

/* ---- bench results ---------------------------------------------------------- */

static cp_status read_bench(ctx *c, const json_t *root) {
    cph_results *r = c->r;
    cp_status st = check_version(c, root, BENCH_FORMAT, BENCH_VERSION);
    if (st) return st;
    if ((st = get_text(c, root, "", "fingerprint", r->fingerprint, sizeof r->fingerprint)))
        return st;
    const json_t *dev = json_object_get(root, "device");
    const json_t *model = json_is_object(dev) ? json_object_get(dev, "model") : NULL;
    if (json_is_string(model)) snprintf(r->model, sizeof r->model, "%s", json_string_value(model));
    json_t *results;
    if ((st = get(c, root, "", "results", JSON_ARRAY, &results))) return st;
    int first = 1;
    for (size_t i = 0; i < json_array_size(results); i++) {
        const json_t *e = json_array_get(results, i);
        cph_result_item it;
        memset(&it, 0, sizeof it);
        snprintf(it.where, sizeof it.where, "results[%zu]", i);
        if (!json_is_object(e))
            return fail(c, CP_EFORMAT, "%s: expected an object, found %s", it.where, type_name(e));
        char status[16];
        if ((st = get_text(c, e, it.where, "status", status, sizeof status)))
            return fail(c, CP_EFORMAT, "%s.status: expected \"ok\", \"unsupported\" or \"error\"",
                        it.where);
        if (strcmp(status, "unsupported") == 0) {
            r->nunsupported++;
            continue;
        }
        if (strcmp(status, "error") == 0) {
            r->nfailed++;
            continue;
        }
        if (strcmp(status, "ok") != 0)
            return fail(c, CP_EFORMAT, "%s.status: expected \"ok\", \"unsupported\" or \"error\", "
                        "found \"%s\"", it.where, status);
        long long thr = 0;
        if ((st = get_text(c, e, it.where, "layer", it.layer, sizeof it.layer)) ||
            (st = get_shape(c, e, it.where, 0, &it.shape)) ||
            (st = get_mode(c, e, it.where, &it.flip)) ||
            (st = get_int(c, e, it.where, "threads", 1, 65536, &thr)) ||
            (st = get_text(c, e, it.where, "algo", it.algo, sizeof it.algo)) ||
            (st = get_params(c, e, it.where, it.algo, it.params, sizeof it.params)))
            return st;
        it.threads = (int)thr;
        char sub[128];
        json_t *meas, *samples, *settings, *cold;
        snprintf(sub, sizeof sub, "%s.measurement", it.where);
        if ((st = get(c, e, it.where, "measurement", JSON_OBJECT, &meas)) ||
            (st = get(c, meas, sub, "samples", JSON_ARRAY, &samples)))
            return st;
        settings = json_object_get(meas, "settings");
        cold = json_is_object(settings) ? json_object_get(settings, "cold") : NULL;
        if (!json_is_boolean(cold))
            return fail(c, CP_EFORMAT, "%s.settings.cold: expected true or false, found %s", sub,
                        type_name(cold));
        note_cold(r, json_is_true(cold), &first);
        snprintf(sub, sizeof sub, "%s.measurement.samples", it.where);
        if ((st = get_samples(c, samples, sub, &it.samples, &it.nsamples))) return st;
        if (!it.nsamples) {
            return fail(c, CP_EFORMAT, "%s: status \"ok\" without samples", sub);
        }
        it.median = median_of(it.samples, it.nsamples);
        if ((st = push_item(c, &it))) {
            free(it.samples);
            return st;
        }
    }
    return CP_OK;
}

/* ---- tuning tables ------------------------------------------------------------ */

static cp_status read_candidate(ctx *c, const json_t *cand, const char *where,
                                cph_result_item *it, int *usable) {
    *usable = 0;
    cp_status st;
    char status[16];
    if (!json_is_object(cand))
        return fail(c, CP_EFORMAT, "%s: expected an object, found %s", where, type_name(cand));
    if ((st = get_text(c, cand, where, "algo", it->algo, sizeof it->algo)) ||
        (st = get_params(c, cand, where, it->algo, it->params, sizeof it->params)))
        return st;
    if (get_text(c, cand, where, "status", status, sizeof status))
        return fail(c, CP_EFORMAT, "%s.status: expected \"ok\", \"disqualified\" or \"failed\"",
                    where);
    if (strcmp(status, "ok") != 0) {
        if (strcmp(status, "disqualified") && strcmp(status, "failed"))
            return fail(c, CP_EFORMAT, "%s.status: expected \"ok\", \"disqualified\" or \"failed\", "
                        "found \"%s\"", where, status);
        c->r->nfailed++;
        return CP_OK;
    }
    json_t *t = json_object_get(cand, "timing");
    char sub[160];
    snprintf(sub, sizeof sub, "%s.timing", where);
    if (!json_is_object(t))
        return fail(c, CP_EFORMAT, "%s: expected an object for a candidate of status \"ok\", found %s",
                    sub, type_name(t));
    json_t *med, *sv = json_object_get(t, "samples_s");
    if ((st = get(c, t, sub, "median_s", JSON_REAL, &med))) return st;
    it->median = json_number_value(med);
    if (!(it->median >= 0.0) || !isfinite(it->median))
        return fail(c, CP_EFORMAT, "%s.median_s: expected a number >= 0", sub);
    if (sv) {
        char ss[192];
        snprintf(ss, sizeof ss, "%s.samples_s", sub);
        if (!json_is_array(sv))
            return fail(c, CP_EFORMAT, "%s: expected an array, found %s", ss, type_name(sv));
        if ((st = get_samples(c, sv, ss, &it->samples, &it->nsamples))) return st;
        if (it->nsamples) it->median = median_of(it->samples, it->nsamples);
    }
    *usable = 1;
    return CP_OK;
}

static cp_status read_entry(ctx *c, const json_t *e, size_t i, int *first_cold, int cold) {
    cph_results *r = c->r;
    char where[48];
    snprintf(where, sizeof where, "entries[%zu]", i);
    if (!json_is_object(e))
        return fail(c, CP_EFORMAT, "%s: expected an object, found %s", where, type_name(e));
    cph_result_choice ch;
    memset(&ch, 0, sizeof ch);
    long long thr = 0;
    json_t *choice, *cands;
    char sub[96];
    cp_status st;
    snprintf(sub, sizeof sub, "%s.choice", where);
    if ((st = get_text(c, e, where, "name", ch.layer, sizeof ch.layer)) ||
        (st = get_shape(c, e, where, 1, &ch.shape)) || (st = get_mode(c, e, where, &ch.flip)) ||
        (st = get_int(c, e, where, "threads", 1, 65536, &thr)) ||
        (st = get(c, e, where, "choice", JSON_OBJECT, &choice)) ||
        (st = get_text(c, choice, sub, "algo", ch.algo, sizeof ch.algo)) ||
        (st = get_params(c, choice, sub, ch.algo, ch.params, sizeof ch.params)) ||
        (st = get(c, e, where, "candidates", JSON_ARRAY, &cands)))
        return st;
    ch.threads = (int)thr;
    ch.median = NAN;
    for (size_t j = 0; j < json_array_size(cands); j++) {
        cph_result_item it;
        memset(&it, 0, sizeof it);
        snprintf(it.where, sizeof it.where, "%s.candidates[%zu]", where, j);
        int usable;
        if ((st = read_candidate(c, json_array_get(cands, j), it.where, &it, &usable))) return st;
        if (!usable) continue;
        memcpy(it.layer, ch.layer, sizeof it.layer);
        it.shape = ch.shape;
        it.flip = ch.flip;
        it.threads = ch.threads;
        it.entry = i;
        it.chosen = strcmp(it.algo, ch.algo) == 0 && strcmp(it.params, ch.params) == 0;
        if (it.chosen) ch.median = it.median;
        note_cold(r, cold, first_cold);
        if ((st = push_item(c, &it))) {
            free(it.samples);
            return st;
        }
    }
    r->choices[r->nchoices++] = ch;
    return CP_OK;
}

static cp_status read_table(ctx *c, const json_t *root) {
    cph_results *r = c->r;
    cp_status st = check_version(c, root, CP_TABLE_FORMAT, CP_TABLE_VERSION);
    if (st) return st;
    json_t *dev, *settings, *entries;
    if ((st = get(c, root, "", "device", JSON_OBJECT, &dev)) ||
        (st = get_text(c, dev, "device", "fingerprint", r->fingerprint, sizeof r->fingerprint)) ||
        (st = get(c, root, "", "settings", JSON_OBJECT, &settings)) ||
        (st = get(c, root, "", "entries", JSON_ARRAY, &entries)))
        return st;
    const json_t *model = json_object_get(dev, "model");
    if (json_is_string(model)) snprintf(r->model, sizeof r->model, "%s", json_string_value(model));
    char caches[8];
    if ((st = get_text(c, settings, "settings", "caches", caches, sizeof caches)) ||
        (strcmp(caches, "warm") && strcmp(caches, "cold")))
        return fail(c, CP_EFORMAT, "settings.caches: expected \"warm\" or \"cold\"");
    const int cold = strcmp(caches, "cold") == 0;
    const size_t n = json_array_size(entries);
    r->choices = n ? calloc(n, sizeof *r->choices) : NULL;
    if (n && !r->choices) return fail(c, CP_ENOMEM, "out of memory");
    int first = 1;
    for (size_t i = 0; i < n; i++)
        if ((st = read_entry(c, json_array_get(entries, i), i, &first, cold))) return st;
    if (first) r->cold = cold;
    return CP_OK;
}

/* ---- entry point ----------------------------------------------------------- */

/* Reads a whole file into memory (at most RESULTS_MAX_BYTES): a directory is
 * refused, a FIFO without a writer reads as empty instead of blocking, a
 * regular file that grows while read is refused rather than chased. */
#define RESULTS_MAX_BYTES (1ull << 31)
static cp_status read_all(const ctx *c, const char *path, char **data, size_t *len) {
    *data = NULL;
    *len = 0;
    struct stat sb;
    if (stat(path, &sb) != 0) return fail(c, CP_EIO, "cannot read: %s", strerror(errno));
    if (S_ISDIR(sb.st_mode)) return fail(c, CP_EIO, "cannot read: is a directory");
    int fd = open(path, O_RDONLY | O_NONBLOCK | O_CLOEXEC);
    if (fd < 0) return fail(c, CP_EIO, "cannot read: %s", strerror(errno));
    int fl = fcntl(fd, F_GETFL);
    if (fl != -1) (void)fcntl(fd, F_SETFL, fl & ~O_NONBLOCK);
    const int regular = S_ISREG(sb.st_mode);
    const size_t limit = regular ? (size_t)sb.st_size : (size_t)RESULTS_MAX_BYTES;
    if (regular && (uintmax_t)sb.st_size > RESULTS_MAX_BYTES) {
        close(fd);
        return fail(c, CP_EFORMAT, "larger than %llu bytes", (unsigned long long)RESULTS_MAX_BYTES);
    }
    size_t size = 0, n = 0;
    char *buf = NULL;
    for (;;) {
        if (n == size) {
            size_t ncap = size ? size + (size >> 1) : (regular ? limit + 1 : 65536);
            if (ncap > limit + 1) ncap = limit + 1;
            char *nb = realloc(buf, ncap ? ncap : 1);
            if (!nb) {
                free(buf);
                close(fd);
                return fail(c, CP_ENOMEM, "out of memory reading %zu bytes", size);
            }
            buf = nb;
            size = ncap;
        }
        ssize_t got = read(fd, buf + n, size - n);
        if (got < 0 && errno == EINTR) continue;
        if (got < 0) {
            int e = errno;
            free(buf);
            close(fd);
            return fail(c, CP_EIO, "read error: %s", strerror(e));
        }
        if (got == 0) break;
        n += (size_t)got;
        if (n > limit) break;
    }
    close(fd);
    if (n > limit) {
        free(buf);
        return regular ? fail(c, CP_EIO, "the file grew while being read (beyond its %zu bytes): "
                                         "is another program writing it?", limit)
                       : fail(c, CP_EFORMAT, "more than %llu bytes",
                              (unsigned long long)RESULTS_MAX_BYTES);
    }
    *data = buf;
    *len = n;
    return CP_OK;
}

cp_status cph_results_read(const char *path, cph_results *out, char *msg, size_t cap) {
    memset(out, 0, sizeof *out);
    ctx c = {path, msg, cap, out, 0};
    char *data;
    size_t len;
    cp_status st = read_all(&c, path, &data, &len);
    if (st != CP_OK) return st;
    st = cph_results_read_buffer(data, len, path, out, msg, cap);
    free(data);
    return st;
}

cp_status cph_results_read_buffer(const void *data, size_t len, const char *name,
                                  cph_results *out, char *msg, size_t cap) {
    if (!name) name = "(buffer)";
    memset(out, 0, sizeof *out);
    snprintf(out->path, sizeof out->path, "%s", name);
    ctx c = {name, msg, cap, out, 0};
    json_error_t err;
    json_t *root = json_loadb(data ? data : "", data ? len : 0, JSON_REJECT_DUPLICATES, &err);
    if (!root) {
        if (msg && cap) snprintf(msg, cap, "%s:%d:%d: malformed JSON: %s", name, err.line,
                                 err.column, err.text);
        return CP_EFORMAT;
    }
    cp_status st;
    json_t *fmt = json_object_get(root, "format");
    if (!json_is_object(root)) {
        st = fail(&c, CP_EFORMAT, "expected a JSON object at the top, found %s", type_name(root));
    } else if (!json_is_string(fmt)) {
        st = fail(&c, CP_EFORMAT, "format: %s (expected \"%s\" or \"%s\")",
                  fmt ? "not a string" : "missing", BENCH_FORMAT, CP_TABLE_FORMAT);
    } else if (strcmp(json_string_value(fmt), BENCH_FORMAT) == 0) {
        out->kind = CPH_RESULTS_BENCH;
        st = read_bench(&c, root);
    } else if (strcmp(json_string_value(fmt), CP_TABLE_FORMAT) == 0) {
        out->kind = CPH_RESULTS_TABLE;
        st = read_table(&c, root);
    } else {
        st = fail(&c, CP_EFORMAT, "format: \"%s\" is neither \"%s\" nor \"%s\"",
                  json_string_value(fmt), BENCH_FORMAT, CP_TABLE_FORMAT);
    }
    json_decref(root);
    if (st) cph_results_free(out);
    return st;
}

void cph_results_free(cph_results *r) {
    for (size_t i = 0; i < r->nitems; i++) free(r->items[i].samples);
    free(r->items);
    free(r->choices);
    r->items = NULL;
    r->choices = NULL;
    r->nitems = r->nchoices = 0;
}

const char *cph_results_kind_name(cph_results_kind k) {
    return k == CPH_RESULTS_TABLE ? "tuning table" : "bench results";
}

int cph_result_same_point(const cph_result_item *a, const cph_result_item *b) {
    return a->flip == b->flip && a->threads == b->threads && strcmp(a->algo, b->algo) == 0 &&
           strcmp(a->params, b->params) == 0 && cp_shape_equal(&a->shape, &b->shape);
}
