/* convpick pack: tables -> one bundle file (harness/io/bundle_pack.h). */
#define _POSIX_C_SOURCE 200809L /* strdup */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "algos/core/cpa.h"
#include "convpick/bundle.h"
#include "harness/io/bundle_pack.h"
#include "harness/io/rawfile.h"
#include "loader/codec.h"
#include "loader/table_impl.h"

typedef struct member {
    char *path;       /* where it was read */
    const char *name; /* its file name (within path) */
    char fingerprint[17];
    char *data;
    size_t len;
} member;

typedef struct pack {
    member *m;
    size_t n, cap;
} pack;

static void pack_free(pack *p) {
    for (size_t i = 0; i < p->n; i++) {
        free(p->m[i].path);
        free(p->m[i].data);
    }
    free(p->m);
}

/* Loads path as a table (the loader's checks), keeps its bytes. */
static cp_status add_table(pack *p, const char *path, char *msg, size_t cap) {
    if (p->n == p->cap) {
        const size_t nc = p->cap ? 2 * p->cap : 8;
        member *m = realloc(p->m, nc * sizeof *m);
        if (!m) return cpa_fail(CP_ENOMEM, msg, cap, "pack: out of memory");
        p->m = m;
        p->cap = nc;
    }
    member *m = &p->m[p->n];
    memset(m, 0, sizeof *m);
    /* Read once: the bytes checked are the bytes packed. */
    const cpl_jctx c = {path, msg, cap};
    cp_status st = cpl_read_file(&c, path, CPT_MAX_BYTES, "table", CP_TABLE_FORMAT, &m->data,
                                 &m->len);
    cp_table *t = NULL;
    if (st == CP_OK) st = cp_table_load_buffer(m->data, m->len, path, 0, &t, msg, cap);
    if (st == CP_OK) snprintf(m->fingerprint, sizeof m->fingerprint, "%s", cp_table_fingerprint(t));
    cp_table_free(t);
    if (st == CP_OK && !(m->path = strdup(path)))
        st = cpa_fail(CP_ENOMEM, msg, cap, "pack: out of memory");
    if (st != CP_OK) {
        free(m->data);
        return st;
    }
    const char *slash = strrchr(m->path, '/');
    m->name = slash ? slash + 1 : m->path;
    p->n++;
    return CP_OK;
}

static int by_name(const void *a, const void *b) {
    return strcmp(((const member *)a)->name, ((const member *)b)->name);
}

/* The framing of loader/bundle_file.c: a plain file name ending in .json. */
static int name_ok(const char *s) {
    const size_t n = strlen(s);
    if (n < 6 || n > 63 || s[0] == '.' || strcmp(s + n - 5, ".json") != 0) return 0;
    return strspn(s, "abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ0123456789._-") == n;
}

static cp_status gather_inputs(pack *p, const char *const *inputs, size_t n, char *msg,
                               size_t cap) {
    for (size_t i = 0; i < n; i++) {
        struct stat sb;
        if (stat(inputs[i], &sb) == 0 && S_ISDIR(sb.st_mode)) {
            cp_bundle *b = NULL;
            cp_status st = cp_bundle_open(inputs[i], &b, msg, cap);
            for (size_t k = 0; st == CP_OK && k < cp_bundle_count(b); k++)
                st = add_table(p, cp_bundle_path(b, k), msg, cap);
            cp_bundle_free(b);
            if (st != CP_OK) return st;
        } else if (cp_bundle_is(inputs[i])) {
            return cpa_fail(CP_EFORMAT, msg, cap,
                            "%s: a bundle file; pack takes tables and bundle directories",
                            inputs[i]);
        } else {
            cp_status st = add_table(p, inputs[i], msg, cap);
            if (st != CP_OK) return st;
        }
    }
    return CP_OK;
}

cp_status cph_bundle_pack(const char *const *inputs, size_t n, const char *out, size_t *ntables,
                          char *msg, size_t cap) {
    pack p = {NULL, 0, 0};
    *ntables = 0;
    cp_status st = gather_inputs(&p, inputs, n, msg, cap);
    if (st == CP_OK && p.n == 0) st = cpa_fail(CP_EFORMAT, msg, cap, "no tables to pack");
    if (st == CP_OK) qsort(p.m, p.n, sizeof *p.m, by_name);
    size_t bytes = 64;
    for (size_t i = 0; st == CP_OK && i < p.n; i++) {
        const member *m = &p.m[i];
        if (!name_ok(m->name))
            st = cpa_fail(CP_EFORMAT, msg, cap,
                          "%s: the name '%s' cannot go in a bundle (a plain file name ending "
                          "in .json: letters, digits, '.', '_', '-'; at most 63 bytes)",
                          m->path, m->name);
        for (size_t k = 0; st == CP_OK && k < i; k++) {
            if (strcmp(p.m[k].name, m->name) == 0)
                st = cpa_fail(CP_EFORMAT, msg, cap, "%s and %s: two tables named %s", p.m[k].path,
                              m->path, m->name);
            else if (strcmp(p.m[k].fingerprint, m->fingerprint) == 0)
                st = cpa_fail(CP_EFORMAT, msg, cap,
                              "%s and %s: two tables of device %s (a bundle holds one table "
                              "per device; gather them into one first)",
                              p.m[k].path, m->path, m->fingerprint);
        }
        bytes += 96 + m->len;
    }
    char *buf = st == CP_OK ? malloc(bytes) : NULL;
    if (st == CP_OK && !buf) st = cpa_fail(CP_ENOMEM, msg, cap, "pack: out of memory");
    if (st == CP_OK) {
        size_t len = (size_t)snprintf(buf, bytes, "convpick-table-bundle 1\n");
        for (size_t i = 0; i < p.n; i++) {
            len += (size_t)snprintf(buf + len, bytes - len, "table %s %zu\n", p.m[i].name,
                                    p.m[i].len);
            memcpy(buf + len, p.m[i].data, p.m[i].len);
            len += p.m[i].len;
            buf[len++] = '\n';
        }
        len += (size_t)snprintf(buf + len, bytes - len, "end\n");
        st = cph_write_atomic(out, buf, len, msg, cap);
    }
    if (st == CP_OK) *ntables = p.n;
    free(buf);
    pack_free(&p);
    return st;
}
