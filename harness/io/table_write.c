/* Building and atomically writing tuning tables (format: docs/table-format.md).
 * Existing entries of a resumed table are kept as the JSON they were read as,
 * so that nothing a newer writer added is lost. */
#define _POSIX_C_SOURCE 200809L
#include "harness/io/table_write.h"
#include "algos/core/cpa.h"

#include "harness/io/rawfile.h"

#include <errno.h>
#include <fcntl.h>
#include <jansson.h>
#include <math.h>
#include <sys/file.h>
#include <sys/stat.h>
#include <unistd.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#ifndef CP_GIT_REV
#define CP_GIT_REV "unknown"
#endif

/* Which file a path named at some moment: every atomic write makes a new
 * inode, so a changed identity means someone wrote the table. */
typedef struct file_id {
    int exists;
    dev_t dev;
    ino_t ino;
    off_t size;
    struct timespec mtime;
} file_id;

struct cph_table_doc {
    json_t *root;    /* the whole document */
    json_t *entries; /* borrowed from root */
    json_t *mine;    /* entry key -> entry put by this process (they win a merge) */
    char key[17];
    char fingerprint[17];
    file_id start;   /* the file the document was read from or replaces */
    file_id last;    /* the file this process last wrote */
};

static file_id identify(const char *path) {
    file_id id;
    memset(&id, 0, sizeof id);
    struct stat sb;
    if (stat(path, &sb) == 0) {
        id.exists = 1;
        id.dev = sb.st_dev;
        id.ino = sb.st_ino;
        id.size = sb.st_size;
        id.mtime = sb.st_mtim;
    }
    return id;
}

static int same_file(const file_id *a, const file_id *b) {
    return a->exists && b->exists && a->dev == b->dev && a->ino == b->ino && a->size == b->size &&
           a->mtime.tv_sec == b->mtime.tv_sec && a->mtime.tv_nsec == b->mtime.tv_nsec;
}

/* json_real() refuses NaN and infinities: those are written as null. */
static json_t *real_or_null(double x) { return isfinite(x) ? json_real(x) : json_null(); }

static uint64_t fnv(uint64_t h, const void *p, size_t n) {
    const unsigned char *b = p;
    for (size_t i = 0; i < n; i++) h = (h ^ b[i]) * 1099511628211ull;
    return h;
}

void cph_table_settings_key(const cph_table_settings *s, char out[17]) {
    /* Hash the printed values, not the struct bytes: no padding, same on every
     * build that prints the same numbers. */
    char buf[512];
    int n = snprintf(buf, sizeof buf, "%.17g|%.17g|%.17g|%d|%d|%zu|%zu|%.17g|%.17g|%d|%llu",
                     s->target_rel_ci, s->confidence, s->max_seconds, s->cold, s->warmup,
                     s->min_samples, s->max_samples, s->max_rel_err, s->budget_seconds,
                     s->max_candidates, (unsigned long long)s->seed);
    uint64_t h = fnv(1469598103934665603ull, buf, n > 0 ? (size_t)n : 0);
    snprintf(out, 17, "%016llx", (unsigned long long)h);
}

static json_t *settings_json(const cph_table_settings *s) {
    json_t *th = json_array();
    for (int i = 0; i < s->nthreads && i < CPH_TABLE_MAX_THREADS; i++)
        json_array_append_new(th, json_integer(s->threads[i]));
    return json_pack("{s:o, s:o, s:o, s:s, s:i, s:I, s:I, s:o, s:o, s:i, s:I, s:o}",
                     "target_rel_ci", real_or_null(s->target_rel_ci), "confidence",
                     real_or_null(s->confidence), "max_seconds", real_or_null(s->max_seconds),
                     "caches", s->cold ? "cold" : "warm", "warmup", s->warmup, "min_samples",
                     (json_int_t)s->min_samples, "max_samples", (json_int_t)s->max_samples,
                     "max_rel_err", real_or_null(s->max_rel_err), "budget_s",
                     real_or_null(s->budget_seconds), "max_candidates", s->max_candidates, "seed",
                     (json_int_t)s->seed, "threads", th);
}

static json_t *device_json(const cph_machine *m) {
    json_t *caches = json_array();
    for (int i = 0; i < m->ncaches && i < CPH_MAX_CACHES; i++) {
        const cph_cache_level *c = &m->caches[i];
        json_array_append_new(caches, json_pack("{s:i, s:s, s:I, s:I, s:i, s:i, s:i}", "level",
                                                c->level, "kind", c->kind, "size",
                                                (json_int_t)c->size, "line", (json_int_t)c->line,
                                                "assoc", c->assoc, "instances", c->instances,
                                                "cores_sharing", c->cores_sharing));
    }
    json_t *isa = json_array();
    const struct { const char *name; int on; } f[] = {
        {"sse4.2", m->sse42},       {"avx", m->avx},           {"avx2", m->avx2},
        {"fma", m->fma},            {"avx512f", m->avx512f},   {"avx512bw", m->avx512bw},
        {"avx512vl", m->avx512vl},  {"avx512dq", m->avx512dq}, {"avx512_vnni", m->avx512_vnni},
        {"avx512_bf16", m->avx512_bf16},
    };
    for (size_t i = 0; i < sizeof f / sizeof f[0]; i++)
        if (f[i].on) json_array_append_new(isa, json_string(f[i].name));
    return json_pack("{s:s, s:s, s:i, s:i, s:i, s:i, s:i, s:i, s:i, s:I, s:o, s:o, s:{s:s, s:s}, "
                     "s:s, s:s, s:b, s:s}",
                     "vendor", m->vendor, "model", m->model, "family", m->family, "model_id",
                     m->model_id, "stepping", m->stepping, "packages", m->packages, "numa_nodes",
                     m->numa_nodes, "cores", m->cores, "pus", m->pus, "memory_bytes",
                     (json_int_t)m->memory_bytes, "caches", caches, "isa", isa, "blas", "version",
                     m->blas_version, "core", m->blas_core, "compiler", m->compiler, "flags",
                     m->build_flags, "synthetic", m->synthetic, "fingerprint", m->fingerprint);
}

static json_t *params_json(const cp_algo *a, const cp_params *p) {
    json_t *o = json_object();
    for (int i = 0; a && i < a->nparams; i++)
        json_object_set_new(o, a->params[i].name, json_integer((json_int_t)p->v[i]));
    return o;
}

static json_t *timing_json(const cp_timing *t, const double *samples, size_t n) {
    json_t *o = json_pack("{s:o, s:o, s:o, s:I, s:b}", "median_s", real_or_null(t->median),
                          "ci_lo_s", real_or_null(t->ci_lo), "ci_hi_s", real_or_null(t->ci_hi),
                          "samples", (json_int_t)t->samples, "noisy", t->noisy ? 1 : 0);
    if (o && samples && n) {
        json_t *a = json_array();
        for (size_t i = 0; i < n; i++) json_array_append_new(a, real_or_null(samples[i]));
        json_object_set_new(o, "samples_s", a);
    }
    return o;
}

static json_t *shape_json(const cp_shape *s) {
    return json_pack("{s:I, s:I, s:I, s:I, s:I, s:I, s:I, s:I, s:I, s:I, s:I, s:I, s:I, s:I, "
                     "s:I, s:I, s:s}",
                     "n", (json_int_t)s->n, "c", (json_int_t)s->c, "h", (json_int_t)s->h, "w",
                     (json_int_t)s->w, "k", (json_int_t)s->k, "r", (json_int_t)s->r, "s",
                     (json_int_t)s->s, "stride_h", (json_int_t)s->stride_h, "stride_w",
                     (json_int_t)s->stride_w, "pad_top", (json_int_t)s->pad_top, "pad_left",
                     (json_int_t)s->pad_left, "pad_bottom", (json_int_t)s->pad_bottom,
                     "pad_right", (json_int_t)s->pad_right, "dilation_h", (json_int_t)s->dil_h,
                     "dilation_w", (json_int_t)s->dil_w, "groups", (json_int_t)s->groups,
                     "layout", "NCHW/KCRS");
}

static const char *flip_str(cp_flip m) { return m == CP_CONV ? "conv" : "xcorr"; }

static json_t *entry_json(const cp_table_entry *e, const cph_entry_notes *n, const char *key) {
    json_t *cands = json_array();
    for (size_t i = 0; i < e->ncandidates; i++) {
        const cp_candidate *c = &e->candidates[i];
        const cp_algo *a = cp_algo_find(c->algo);
        const char *note = n && n->candidate_notes && n->candidate_notes[i] ? n->candidate_notes[i] : "";
        int timed = !c->failed && !(c->disqualified && c->timing.samples == 0);
        json_array_append_new(
            cands, json_pack("{s:s, s:o, s:o, s:o, s:s, s:s}", "algo", c->algo, "params",
                             params_json(a, &c->params), "timing",
                             timed ? timing_json(&c->timing, c->samples, c->nsamples) : json_null(),
                             "rel_err", c->failed ? json_null() : real_or_null(c->rel_err),
                             "status", c->failed ? "failed" : c->disqualified ? "disqualified" : "ok",
                             "note", note));
    }
    json_t *ru = json_null();
    if (e->runner_up)
        ru = json_pack("{s:s, s:o, s:o, s:b}", "algo", e->runner_up->name, "params",
                       params_json(e->runner_up, &e->runner_up_params), "margin",
                       real_or_null(e->margin), "in_noise", e->margin_in_noise ? 1 : 0);
    json_t *notes = json_array();
    for (size_t i = 0; n && n->search_notes && i < n->nsearch_notes; i++)
        json_array_append_new(notes, json_string(n->search_notes[i] ? n->search_notes[i] : ""));
    cph_entry_notes zero = {0};
    if (!n) n = &zero;
    json_t *tried = json_pack("{s:i, s:i, s:i, s:i, s:i, s:i, s:o, s:o}", "planned", n->planned,
                              "measured", n->measured, "skipped", n->skipped, "disqualified",
                              n->disqualified, "failed", n->failed, "unsupported", n->unsupported,
                              "seconds", real_or_null(n->seconds), "notes", notes);
    return json_pack("{s:s, s:o, s:s, s:i, s:{s:s, s:o}, s:o, s:o, s:o, s:o, s:s}", "name",
                     e->name, "shape", shape_json(&e->shape), "mode", flip_str(e->flip),
                     "threads", e->threads, "choice", "algo", e->algo ? e->algo->name : "",
                     "params", params_json(e->algo, &e->params), "timing",
                     timing_json(&e->timing, NULL, 0), "runner_up", ru, "candidates", cands,
                     "tried", tried, "settings_key", key);
}

static cp_status doc_init(cph_table_doc **out, const cph_machine *m, const cph_table_settings *s,
                          char *msg, size_t cap) {
    *out = calloc(1, sizeof **out);
    if (!*out) return cpa_fail(CP_ENOMEM, msg, cap, "table: out of memory");
    (*out)->mine = json_object();
    if (!(*out)->mine) {
        free(*out);
        *out = NULL;
        return cpa_fail(CP_ENOMEM, msg, cap, "table: out of memory");
    }
    cph_table_settings_key(s, (*out)->key);
    snprintf((*out)->fingerprint, sizeof (*out)->fingerprint, "%s", m->fingerprint);
    return CP_OK;
}

/* The identity of an entry for merging: its shape, mode and threads, printed.
 * NULL when the entry lacks them (never for a table cp_table_load accepted). */
static int entry_key(const json_t *e, char *buf, size_t cap) {
    static const char *const keys[] = {"n", "c", "h", "w", "k", "r", "s", "stride_h", "stride_w",
                                       "pad_top", "pad_left", "pad_bottom", "pad_right",
                                       "dilation_h", "dilation_w", "groups"};
    const json_t *sh = json_object_get(e, "shape");
    const json_t *md = json_object_get(e, "mode"), *th = json_object_get(e, "threads");
    const json_t *lay = json_object_get(sh, "layout");
    if (!json_is_object(sh) || !json_is_string(md) || !json_is_integer(th) || !json_is_string(lay))
        return 0;
    size_t len = 0;
    for (size_t i = 0; i < sizeof keys / sizeof keys[0]; i++) {
        const json_t *v = json_object_get(sh, keys[i]);
        if (!json_is_integer(v)) return 0;
        int n = snprintf(buf + len, cap - len, "%lld,", (long long)json_integer_value(v));
        if (n < 0 || (size_t)n >= cap - len) return 0;
        len += (size_t)n;
    }
    int n = snprintf(buf + len, cap - len, "%s|%s|%lld", json_string_value(lay),
                     json_string_value(md), (long long)json_integer_value(th));
    return n >= 0 && (size_t)n < cap - len;
}

cp_status cph_table_doc_new(const cph_machine *m, const cph_table_settings *s,
                            cph_table_doc **out, char *msg, size_t cap) {
    cp_status st = doc_init(out, m, s, msg, cap);
    if (st != CP_OK) return st;
    char created[32];
    time_t now = time(NULL);
    struct tm tm;
    gmtime_r(&now, &tm);
    strftime(created, sizeof created, "%Y-%m-%dT%H:%M:%SZ", &tm);
    json_t *root = json_pack("{s:s, s:i, s:s, s:{s:s, s:s}, s:o, s:o, s:[]}", "format",
                             CP_TABLE_FORMAT, "version", CP_TABLE_VERSION, "created", created,
                             "convpick", "version", CONVPICK_VERSION, "git", CP_GIT_REV, "device",
                             device_json(m), "settings", settings_json(s), "entries");
    if (!root) {
        cph_table_doc_free(*out);
        *out = NULL;
        return cpa_fail(CP_EINVAL, msg, cap, "table: cannot build the document (a string of the "
                                         "machine description is not valid UTF-8?)");
    }
    (*out)->root = root;
    (*out)->entries = json_object_get(root, "entries");
    return CP_OK;
}

cp_status cph_table_doc_open(const char *path, const cph_machine *m, const cph_table_settings *s,
                             cph_table_doc **out, char *msg, size_t cap) {
    *out = NULL;
    const file_id start = identify(path); /* before reading: a later write then merges */
    cp_table *t;
    cp_status st = cp_table_load(path, 0, &t, msg, cap);
    if (st != CP_OK) return st;
    int same = strcmp(cp_table_fingerprint(t), m->fingerprint) == 0;
    char fp[17];
    snprintf(fp, sizeof fp, "%s", cp_table_fingerprint(t));
    cp_table_free(t);
    if (!same)
        return cpa_fail(CP_EDEVICE, msg, cap,
                    "%s: made on device %s, this machine is %s: cannot resume it here", path, fp,
                    m->fingerprint);
    json_error_t err;
    json_t *root = json_load_file(path, JSON_REJECT_DUPLICATES, &err);
    if (!root) return cpa_fail(CP_EFORMAT, msg, cap, "%s:%d:%d: %s", path, err.line, err.column, err.text);
    if ((st = doc_init(out, m, s, msg, cap)) != CP_OK) {
        json_decref(root);
        return st;
    }
    (*out)->start = start;
    json_object_set_new(root, "settings", settings_json(s));
    (*out)->root = root;
    (*out)->entries = json_object_get(root, "entries");
    return CP_OK;
}

void cph_table_doc_replaces(cph_table_doc *d, const char *path) { d->start = identify(path); }

void cph_table_doc_free(cph_table_doc *d) {
    if (!d) return;
    json_decref(d->mine);
    json_decref(d->root);
    free(d);
}

size_t cph_table_doc_count(const cph_table_doc *d) { return json_array_size(d->entries); }

const char *cph_table_doc_settings_key(const cph_table_doc *d) { return d->key; }

/* Index of the entry of that shape, mode and threads, or -1. */
static long find_index(const cph_table_doc *d, const cp_shape *s, cp_flip flip, int threads) {
    json_t *sj = shape_json(s);
    long found = -1;
    size_t i;
    json_t *e;
    json_array_foreach(d->entries, i, e) {
        json_t *md = json_object_get(e, "mode"), *th = json_object_get(e, "threads");
        if (json_equal(json_object_get(e, "shape"), sj) && json_is_string(md) &&
            strcmp(json_string_value(md), flip_str(flip)) == 0 && json_is_integer(th) &&
            json_integer_value(th) == threads) {
            found = (long)i;
            break;
        }
    }
    json_decref(sj);
    return found;
}

int cph_table_doc_find(const cph_table_doc *d, const cp_shape *s, cp_flip flip, int threads) {
    long i = find_index(d, s, flip, threads);
    if (i < 0) return CPH_TABLE_ABSENT;
    json_t *k = json_object_get(json_array_get(d->entries, (size_t)i), "settings_key");
    return json_is_string(k) && strcmp(json_string_value(k), d->key) == 0 ? CPH_TABLE_SAME
                                                                          : CPH_TABLE_STALE;
}

cp_status cph_table_doc_put(cph_table_doc *d, const cp_table_entry *e, const cph_entry_notes *n,
                            char *msg, size_t cap) {
    if (!e->algo) return cpa_fail(CP_EINVAL, msg, cap, "table entry '%s': no chosen algorithm", e->name);
    json_t *ej = entry_json(e, n, d->key);
    if (!ej)
        return cpa_fail(CP_EINVAL, msg, cap, "table entry '%s': cannot build it (name or note not "
                                         "valid UTF-8?)", e->name);
    char k[512];
    if (!entry_key(ej, k, sizeof k) || json_object_set(d->mine, k, ej) != 0) {
        json_decref(ej);
        return cpa_fail(CP_ENOMEM, msg, cap, "table: out of memory");
    }
    long i = find_index(d, &e->shape, e->flip, e->threads);
    int rc = i >= 0 ? json_array_set_new(d->entries, (size_t)i, ej)
                    : json_array_append_new(d->entries, ej);
    return rc == 0 ? CP_OK : cpa_fail(CP_ENOMEM, msg, cap, "table: out of memory");
}

/* Under the lock: the table on disk was written by someone else since this
 * process read or last wrote it.  The merged list is the disk's entries in
 * their order, each replaced by this process's own measurement of it, then
 * this process's entries the disk lacks.  A disk table that is no longer a
 * valid table of this device is left alone (an error, nothing written). */
static cp_status merge_from_disk(cph_table_doc *d, const char *path, char *msg, size_t cap) {
    cp_table *t = NULL;
    char why[512];
    cp_status st = cp_table_load(path, 0, &t, why, sizeof why);
    if (st != CP_OK)
        return cpa_fail(st, msg, cap, "%s changed on disk during this run and cannot be merged (%s); "
                                  "it was left as it is", path, why);
    int same = strcmp(cp_table_fingerprint(t), d->fingerprint) == 0;
    cp_table_free(t);
    if (!same)
        return cpa_fail(CP_EDEVICE, msg, cap, "%s was replaced during this run by a table of another "
                                          "device; it was left as it is", path);
    json_error_t err;
    json_t *disk = json_load_file(path, JSON_REJECT_DUPLICATES, &err);
    json_t *dent = disk ? json_object_get(disk, "entries") : NULL;
    json_t *merged = json_array(), *seen = json_object();
    st = CP_OK;
    if (!json_is_array(dent) || !merged || !seen) {
        st = cpa_fail(CP_EFORMAT, msg, cap, "%s changed on disk while being merged; it was left as it "
                                        "is", path);
        goto out;
    }
    char k[512];
    size_t i;
    json_t *e;
    json_array_foreach(dent, i, e) {
        if (!entry_key(e, k, sizeof k)) continue;
        json_t *ours = json_object_get(d->mine, k);
        json_array_append(merged, ours ? ours : e);
        json_object_set_new(seen, k, json_true());
    }
    json_array_foreach(d->entries, i, e) {
        if (!entry_key(e, k, sizeof k) || json_object_get(seen, k)) continue;
        json_array_append(merged, e);
        json_object_set_new(seen, k, json_true());
    }
    if (json_object_set(d->root, "entries", merged) != 0) {
        st = cpa_fail(CP_ENOMEM, msg, cap, "table: out of memory");
        goto out;
    }
    d->entries = merged;
out:
    json_decref(merged);
    json_decref(seen);
    json_decref(disk);
    return st;
}

/* The advisory lock of a table: PATH.lock, created once and left in place
 * (removing it would let a third process lock a new file while a second
 * still holds the old one).  Returns the descriptor, or -1 with msg set. */
static int lock_table(const char *path, char *msg, size_t cap) {
    const size_t len = strlen(path) + 6;
    char *lp = malloc(len);
    if (!lp) {
        cpa_fail(CP_ENOMEM, msg, cap, "%s: out of memory", path);
        return -1;
    }
    snprintf(lp, len, "%s.lock", path);
    int fd = open(lp, O_RDWR | O_CREAT | O_CLOEXEC, 0666);
    if (fd < 0) {
        cpa_fail(CP_EIO, msg, cap, "%s: cannot open the lock file %s: %s; the table was left as it is",
             path, lp, strerror(errno));
        free(lp);
        return -1;
    }
    int rc;
    while ((rc = flock(fd, LOCK_EX)) != 0 && errno == EINTR) {
    }
    if (rc != 0) {
        cpa_fail(CP_EIO, msg, cap, "%s: cannot lock %s: %s; the table was left as it is", path, lp,
             strerror(errno));
        close(fd);
        fd = -1;
    }
    free(lp);
    return fd;
}

static cp_status write_locked(cph_table_doc *d, const char *path, char *msg, size_t cap) {
    const file_id now = identify(path);
    if (now.exists && !same_file(&now, &d->last) && !same_file(&now, &d->start)) {
        cp_status st = merge_from_disk(d, path, msg, cap);
        if (st != CP_OK) return st;
    }
    char *text = json_dumps(d->root, JSON_INDENT(1) | JSON_REAL_PRECISION(17));
    if (!text) return cpa_fail(CP_ENOMEM, msg, cap, "%s: cannot serialise the table", path);
    size_t len = strlen(text);
    char *nl = realloc(text, len + 2);
    if (!nl) {
        free(text);
        return cpa_fail(CP_ENOMEM, msg, cap, "%s: out of memory", path);
    }
    text = nl;
    text[len++] = '\n';
    text[len] = '\0';
    cp_status st = cph_write_atomic(path, text, len, msg, cap);
    free(text);
    if (st == CP_OK) d->last = identify(path);
    return st;
}

cp_status cph_table_doc_write(cph_table_doc *d, const char *path, char *msg, size_t cap) {
    int fd = lock_table(path, msg, cap);
    if (fd < 0) return CP_EIO;
    cp_status st = write_locked(d, path, msg, cap);
    close(fd); /* releases the lock */
    return st;
}
