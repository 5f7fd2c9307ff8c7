/* Tuning tables, the document: JSON text -> cp_table.  The header (format,
 * version, device) is read here; each entry by table_entry.c; the index and
 * the duplicate check by table_index.c.  A document of an older version is
 * migrated in place first (codec_migrate.c).  Format: docs/table-format.md.
 * No hwloc, no harness code. */
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "loader/codec.h"
#include "loader/table_impl.h"

/* Everything before the entries: format, version (older ones migrated),
 * provenance, device.  *from: the version the document was written in. */
static cp_status build_header(const cpl_jctx *c, json_t *root, unsigned flags, cp_table *t,
                              json_t **entries, int *from) {
    cp_status st;
    if (!json_is_object(root))
        return cpl_jfail(c, CP_EFORMAT, "expected a JSON object at the top level, found %s",
                         cpl_json_type_name(root));
    const char *fmt;
    if ((st = cpl_jstr(c, root, "", "format", &fmt)) != CP_OK) return st;
    if (strcmp(fmt, CP_TABLE_FORMAT) != 0)
        return cpl_jfail(c, CP_EFORMAT, "format: '%s' is not a %s", fmt, CP_TABLE_FORMAT);
    json_t *v = NULL, *cpj = NULL, *settings = NULL;
    if ((st = cpl_jfield(c, root, "", "version", JSON_INTEGER, 0, &v)) != CP_OK) return st;
    if ((st = cpl_table_migrate(c, root, from)) != CP_OK) return st;
    const char *created;
    if ((st = cpl_jstr(c, root, "", "created", &created)) != CP_OK ||
        (st = cpl_jfield(c, root, "", "convpick", JSON_OBJECT, 0, &cpj)) != CP_OK ||
        (st = cpl_jfield(c, root, "", "settings", JSON_OBJECT, 0, &settings)) != CP_OK ||
        (st = cpl_decode_device(c, root, t->fingerprint, &t->caches)) != CP_OK)
        return st;
    char here[17];
    cp_device_fingerprint(here);
    t->device_matches = strcmp(here, t->fingerprint) == 0;
    if ((flags & CP_TABLE_STRICT_DEVICE) && !t->device_matches)
        return cpl_jfail(c, CP_EDEVICE, "device.fingerprint: %s is not this machine's (%s)",
                         t->fingerprint, here);
    return cpl_jfield(c, root, "", "entries", JSON_ARRAY, 0, entries);
}

/* A parsed document -> t (entries, index). */
static cp_status build(const cpl_jctx *c, json_t *root, unsigned flags, cp_table *t) {
    json_t *entries = NULL;
    int from;
    cp_status st = build_header(c, root, flags, t, &entries, &from);
    const size_t n = st == CP_OK ? json_array_size(entries) : 0;
    if (st == CP_OK) st = cpl_table_alloc(c, t, n);
    for (size_t i = 0; i < n && st == CP_OK; i++)
        st = cpl_table_add(c, t, json_array_get(entries, i), i);
    if (st == CP_OK) st = cpl_table_index(c, t);
    return st;
}

/* The reference path: the whole document as one jansson tree.  Its messages
 * (jansson's line:column for malformed JSON, then the first field at fault)
 * are the loader's messages. */
static cp_status load_whole(const cpl_jctx *c, const char *data, size_t len, unsigned flags,
                            cp_table *t) {
    json_error_t err;
    json_t *root = json_loadb(data, len, JSON_REJECT_DUPLICATES, &err);
    if (!root) {
        if (c->msg && c->cap)
            snprintf(c->msg, c->cap, "%s:%d:%d: %s", c->file, err.line, err.column, err.text);
        return CP_EFORMAT;
    }
    cp_status st = build(c, root, flags, t);
    json_decref(root);
    return st;
}

/* The entries of d[open..close] (count of them, or 0 when not counted: then
 * the arrays grow as entries are read, and the entries must end exactly at
 * close).  Each entry by the entry reader (table_read.c), or, when it
 * declines, as a jansson tree (JSON_DISABLE_EOF_CHECK gives where it ended). */
static cp_status load_entries(const cpl_jctx *c, const char *d, size_t open, size_t close,
                              size_t count, int from, unsigned flags, cp_table *t) {
    const int reader = from == CP_TABLE_VERSION && !(flags & CPT_LOAD_TREES);
    cp_status st = count ? cpl_table_alloc(c, t, count) : CP_OK;
    cpl_entry_reader *rd = NULL;
    size_t p = open + 1;
    while (p < close && cpl_is_ws(d[p])) p++;
    const int empty = p == close;
    for (size_t i = 0; st == CP_OK && !empty && (count ? i < count : p < close); i++) {
        if (!count && (st = cpl_table_reserve(c, t, i + 1)) != CP_OK) break;
        size_t used;
        if (reader && cpl_read_entry(&rd, c, d + p, close - p, t, i, &used)) {
            p += used;
        } else { /* declined (version 1, or not as the reader takes it): the tree */
            json_error_t err;
            json_t *e = json_loadb(d + p, close - p,
                                   JSON_REJECT_DUPLICATES | JSON_DISABLE_EOF_CHECK |
                                       JSON_DECODE_ANY,
                                   &err);
            if (!e) {
                st = CP_EFORMAT;
                break;
            }
            p += (size_t)err.position;
            st = cpl_table_migrate_entry(e, from) ? cpl_table_add(c, t, e, i) : CP_ENOMEM;
            json_decref(e);
        }
        while (p < close && cpl_is_ws(d[p])) p++;
        if (st == CP_OK && p < close) {
            if (d[p] != ',') st = CP_EFORMAT;
            p++;
            while (p < close && cpl_is_ws(d[p])) p++;
            if (p >= close) st = CP_EFORMAT; /* a ',' before the ']' */
        }
    }
    cpl_entry_reader_free(rd);
    if (st == CP_OK && p != close) st = CP_EFORMAT;
    if (st == CP_OK && count && t->n != count) st = CP_EFORMAT;
    return st;
}

/* The fast path (why: table_scan.c, table_read.c): the header parsed with the
 * entries emptied, then each entry on its own (load_entries).  The entries
 * are first taken to be the document's last member (cpl_entries_last: no pass
 * over them before they are read); when that guess fails, they are found and
 * counted by a scan, and read again.  Anything unexpected, and any error at
 * all, falls back to load_whole, so that messages and results are exactly the
 * reference path's (fuzz_table_load checks both agree). */
/* CP_OK, or anything else meaning "use load_whole". */
static cp_status load_fast(const cpl_jctx *c, const char *d, size_t len, unsigned flags,
                           cp_table *t) {
    size_t open, close, count = 0;
    if (!cpl_scan_entries(d, len, &open, NULL, NULL)) return CP_EFORMAT;
    for (int guess = cpl_entries_last(d, len, open, &close);; guess = 0) {
        if (!guess && !cpl_scan_entries(d, len, &open, &close, &count)) return CP_EFORMAT;
        /* The document with "entries": [] */
        size_t hlen;
        char *head = cpl_header_text(d, len, open, close, &hlen);
        if (!head) return CP_ENOMEM;
        json_t *root = json_loadb(head, hlen, JSON_REJECT_DUPLICATES, NULL);
        free(head);
        json_t *entries = NULL;
        int from = CP_TABLE_VERSION;
        cp_status st = root ? build_header(c, root, flags, t, &entries, &from) : CP_EFORMAT;
        json_decref(root);
        if (st == CP_OK) st = load_entries(c, d, open, close, count, from, flags, t);
        if (st == CP_OK) return cpl_table_index(c, t);
        if (!guess) return st;
        cpl_table_clear(t);
    }
}

cp_status cp_table_load(const char *path, unsigned flags, cp_table **out, char *msg, size_t cap) {
    cpl_jctx c = {path ? path : "(null)", msg, cap};
    *out = NULL;
    if (!path) return cpl_jfail(&c, CP_EINVAL, "no table path given");
    char *buf;
    size_t len;
    cp_status st = cpl_read_file(&c, path, CPT_MAX_BYTES, "table", CP_TABLE_FORMAT, &buf, &len);
    if (st != CP_OK) return st;
    st = cp_table_load_buffer(buf, len, path, flags, out, msg, cap);
    free(buf);
    return st;
}

cp_status cp_table_load_buffer(const void *data, size_t len, const char *name, unsigned flags,
                               cp_table **out, char *msg, size_t cap) {
    cpl_jctx c = {name ? name : "(buffer)", msg, cap};
    *out = NULL;
    if (!data || len == 0)
        return cpl_jfail(&c, CP_EFORMAT, "empty file (expected a %s JSON document)",
                         CP_TABLE_FORMAT);
    cp_table *t = calloc(1, sizeof *t);
    if (!t) return cpl_jfail(&c, CP_ENOMEM, "out of memory");
    cp_status st = (flags & CPT_LOAD_WHOLE) ? CP_EFORMAT : load_fast(&c, data, len, flags, t);
    if (st != CP_OK) {
        cpl_table_clear(t);
        st = load_whole(&c, data, len, flags & ~(unsigned)(CPT_LOAD_WHOLE | CPT_LOAD_TREES), t);
    }
    if (st != CP_OK) {
        cp_table_free(t);
        return st;
    }
    *out = t;
    return CP_OK;
}

cp_status cpl_table_from_json(json_t *root, const char *name, unsigned flags, cp_table **out,
                              char *msg, size_t cap) {
    cpl_jctx c = {name ? name : "(document)", msg, cap};
    *out = NULL;
    cp_table *t = calloc(1, sizeof *t);
    if (!t) return cpl_jfail(&c, CP_ENOMEM, "out of memory");
    cp_status st = build(&c, root, flags, t);
    if (st != CP_OK) {
        cp_table_free(t);
        return st;
    }
    *out = t;
    return CP_OK;
}
