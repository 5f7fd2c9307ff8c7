/* The tuning-table document the tuner fills (table_write.h): new, opened for
 * --resume, entries found and put.  Existing entries of a resumed table are
 * kept as the JSON they were read as (migrated to the current version), so
 * that nothing a newer writer added is lost. */
#define _POSIX_C_SOURCE 200809L
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "algos/core/cpa.h"
#include "harness/io/codec_encode.h"
#include "harness/io/table_doc_impl.h"
#include "loader/codec.h"
#include "loader/table_impl.h"

#ifndef CP_GIT_REV
#define CP_GIT_REV "unknown"
#endif

cph_file_id cph_file_identify(const char *path) {
    cph_file_id id;
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

cp_status cph_table_read_tree(const char *path, json_t **root, char fp[17], char *msg, size_t cap) {
    *root = NULL;
    cpl_jctx c = {path, msg, cap};
    char *data;
    size_t len;
    cp_status st = cpl_read_file(&c, path, CPT_MAX_BYTES, "table", CP_TABLE_FORMAT, &data, &len);
    if (st != CP_OK) return st;
    json_error_t err;
    json_t *r = json_loadb(data, len, JSON_REJECT_DUPLICATES, &err);
    free(data);
    if (!r) return cpa_fail(CP_EFORMAT, msg, cap, "%s:%d:%d: %s", path, err.line, err.column, err.text);
    cp_table *t;
    if ((st = cpl_table_from_json(r, path, 0, &t, msg, cap)) != CP_OK) {
        json_decref(r);
        return st;
    }
    snprintf(fp, 17, "%s", cp_table_fingerprint(t));
    cp_table_free(t);
    *root = r;
    return CP_OK;
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

/* Sets the parts this run describes: settings and device (the same device:
 * its fingerprint was checked, the description may be newer). */
static cp_status set_header(cph_table_doc *d, json_t *root, const cph_machine *m,
                            const cph_table_settings *s, char *msg, size_t cap) {
    json_t *settings = cph_table_settings_json(s, m), *dev = cph_device_json(m);
    int bad = !settings || !dev;
    if (bad) {
        json_decref(settings);
        json_decref(dev);
    } else {
        bad = json_object_set_new(root, "settings", settings) != 0; /* steals settings */
        bad = json_object_set_new(root, "device", dev) != 0 || bad;  /* steals dev */
    }
    if (bad) {
        json_decref(root);
        return cpa_fail(CP_EINVAL, msg, cap, "table: cannot build the document (a string of the "
                                             "machine description is not valid UTF-8?)");
    }
    d->root = root;
    d->entries = json_object_get(root, "entries");
    return CP_OK;
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
    json_t *root = json_pack("{s:s, s:i, s:s, s:{s:s, s:s}, s:[]}", "format", CP_TABLE_FORMAT,
                             "version", CP_TABLE_VERSION, "created", created, "convpick",
                             "version", CONVPICK_VERSION, "git", CP_GIT_REV, "entries");
    if (root) st = set_header(*out, root, m, s, msg, cap);
    if (!root || st != CP_OK) {
        cph_table_doc_free(*out);
        *out = NULL;
        return root ? st : cpa_fail(CP_ENOMEM, msg, cap, "table: out of memory");
    }
    return CP_OK;
}

cp_status cph_table_doc_open(const char *path, const cph_machine *m, const cph_table_settings *s,
                             cph_table_doc **out, char *msg, size_t cap) {
    *out = NULL;
    const cph_file_id start = cph_file_identify(path); /* before reading: a later write merges */
    json_t *root;
    char fp[17];
    cp_status st = cph_table_read_tree(path, &root, fp, msg, cap);
    if (st != CP_OK) return st;
    if (strcmp(fp, m->fingerprint) != 0) {
        json_decref(root);
        return cpa_fail(CP_EDEVICE, msg, cap,
                        "%s: made on device %s, this machine is %s: cannot resume it here", path,
                        fp, m->fingerprint);
    }
    if ((st = doc_init(out, m, s, msg, cap)) != CP_OK) {
        json_decref(root);
        return st;
    }
    (*out)->start = start;
    if ((st = set_header(*out, root, m, s, msg, cap)) != CP_OK) {
        cph_table_doc_free(*out);
        *out = NULL;
    }
    return st;
}

void cph_table_doc_replaces(cph_table_doc *d, const char *path) {
    d->start = cph_file_identify(path);
}

void cph_table_doc_free(cph_table_doc *d) {
    if (!d) return;
    json_decref(d->mine);
    json_decref(d->root);
    free(d);
}

size_t cph_table_doc_count(const cph_table_doc *d) { return json_array_size(d->entries); }

const char *cph_table_doc_settings_key(const cph_table_doc *d) { return d->key; }

/* Index of the entry of that shape, flip and threads, or -1. */
static long find_index(const cph_table_doc *d, const cp_shape *s, cp_flip flip, int threads) {
    json_t *probe = json_pack("{s:o, s:o, s:i}", "shape", cph_json_shape(s), "flipped",
                              cph_json_flipped(flip), "threads", threads);
    char want[512], k[512];
    const int ok = probe && cph_table_entry_key(probe, want, sizeof want);
    json_decref(probe);
    if (!ok) return -1;
    size_t i;
    json_t *e;
    json_array_foreach(d->entries, i, e) {
        if (cph_table_entry_key(e, k, sizeof k) && strcmp(k, want) == 0) return (long)i;
    }
    return -1;
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
    if (!e->algo)
        return cpa_fail(CP_EINVAL, msg, cap, "table entry '%s': no chosen algorithm", e->name);
    json_t *ej = cph_table_entry_json(e, n, d->key);
    if (!ej)
        return cpa_fail(CP_EINVAL, msg, cap, "table entry '%s': cannot build it (name or note not "
                                             "valid UTF-8?)", e->name);
    char k[512];
    if (!cph_table_entry_key(ej, k, sizeof k) || json_object_set(d->mine, k, ej) != 0) {
        json_decref(ej);
        return cpa_fail(CP_ENOMEM, msg, cap, "table: out of memory");
    }
    long i = find_index(d, &e->shape, e->flip, e->threads);
    int rc = i >= 0 ? json_array_set_new(d->entries, (size_t)i, ej)
                    : json_array_append_new(d->entries, ej);
    return rc == 0 ? CP_OK : cpa_fail(CP_ENOMEM, msg, cap, "table: out of memory");
}
