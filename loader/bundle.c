/* Table bundles (convpick/bundle.h): the directory read (a bundle file:
 * bundle_file.c), each table's device
 * taken from its header alone (the entries are skipped by the scanner of
 * table_scan.c), and this machine described the way tables record it. */
#define _GNU_SOURCE
#include <dirent.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "algos/core/cpa.h"
#include "convpick/bundle.h"
#include "loader/bundle_impl.h"
#include "loader/codec.h"
#include "loader/cpuid.h"
#include "loader/device.h"
#include "loader/table_impl.h"

const char *const cp_isa_names[CP_ISA_COUNT] = {"sse4_2",   "avx",      "avx2",       "fma",
                                                "avx512f",  "avx512bw", "avx512vl",   "avx512dq",
                                                "avx512_vnni", "avx512_bf16"};

void cp_device_describe(cp_device_desc *out) {
    memset(out, 0, sizeof *out);
    cpl_cpu_id id;
    cpl_cpuid_cache caches[16];
    cpl_cpuid_read(&id);
    const int n = cpl_cpuid_caches(caches, 16);
    cp_device_fingerprint(out->fingerprint);
    out->isa = cpl_cpuid_feature_bits(&id);
    for (int i = 0; i < n; i++) {
        const cpl_cpuid_cache *c = &caches[i];
        if (c->level == 1 && c->type == 1) out->l1d = c->size;
        if (c->level == 2 && c->type != 2) out->l2 = c->size;
        if (c->level == 3 && c->type != 2) out->l3 = c->size;
    }
    const long cpus = sysconf(_SC_NPROCESSORS_ONLN);
    out->cpus = cpus > 0 ? (int)cpus : 0;
}

/* The device section of a parsed header -> d. */
static cp_status device_of(const cpl_jctx *c, json_t *root, cp_device_desc *d) {
    cp_cache_sizes unused;
    cp_status st = cpl_decode_device(c, root, d->fingerprint, &unused);
    if (st != CP_OK) return st;
    const json_t *dev = json_object_get(root, "device");
    size_t i;
    json_t *v;
    json_array_foreach(json_object_get(dev, "isa"), i, v) {
        for (unsigned b = 0; b < CP_ISA_COUNT; b++)
            if (json_is_string(v) && strcmp(json_string_value(v), cp_isa_names[b]) == 0)
                d->isa |= 1u << b;
    }
    json_array_foreach(json_object_get(dev, "caches"), i, v) {
        const json_int_t level = json_integer_value(json_object_get(v, "level"));
        const char *kind = json_string_value(json_object_get(v, "kind"));
        const json_int_t size = json_integer_value(json_object_get(v, "size"));
        if (size <= 0 || !kind) continue;
        if (level == 1 && strcmp(kind, "data") == 0) d->l1d = (size_t)size;
        if (level == 2) d->l2 = (size_t)size;
        if (level == 3) d->l3 = (size_t)size;
    }
    const json_int_t pus = json_integer_value(json_object_get(json_object_get(dev, "topology"),
                                                              "pus"));
    d->cpus = pus > 0 && pus < 1 << 24 ? (int)pus : 0;
    return CP_OK;
}

cp_status cpl_bundle_read_device(const char *path, cp_device_desc *d, char *msg, size_t cap) {
    cpl_jctx c = {path, msg, cap};
    char *data;
    size_t len;
    cp_status st = cpl_read_file(&c, path, CPT_MAX_BYTES, "table", CP_TABLE_FORMAT, &data, &len);
    if (st != CP_OK) return st;
    st = cpl_bundle_text_device(&c, data, len, d);
    free(data);
    return st;
}

cp_status cpl_bundle_text_device(const cpl_jctx *cx, const char *data, size_t len,
                                 cp_device_desc *d) {
    const cpl_jctx c = *cx;
    cp_status st;
    memset(d, 0, sizeof *d);
    json_t *root = cpl_parse_header(data, len);
    if (!root) { /* not the expected layout: the whole document, for jansson's message */
        json_error_t err;
        root = json_loadb(data, len, JSON_REJECT_DUPLICATES, &err);
        if (!root) return cpl_jfail(&c, CP_EFORMAT, "%d:%d: %s", err.line, err.column, err.text);
    }
    const char *fmt = json_string_value(json_object_get(root, "format"));
    int from;
    if (!fmt || strcmp(fmt, CP_TABLE_FORMAT) != 0)
        st = cpl_jfail(&c, CP_EFORMAT, "format: not a %s", CP_TABLE_FORMAT);
    else if ((st = cpl_table_migrate(&c, root, &from)) == CP_OK)
        st = device_of(&c, root, d);
    json_decref(root);
    return st;
}

static int is_table_name(const char *name) {
    const size_t n = strlen(name);
    if (name[0] == '.' || n <= 5 || strcmp(name + n - 5, ".json") != 0) return 0;
    return !(n > 14 && strcmp(name + n - 14, ".evidence.json") == 0);
}

static int name_cmp(const void *a, const void *b) {
    return strcmp(*(char *const *)a, *(char *const *)b);
}

int cp_bundle_is(const char *path) {
    struct stat sb;
    if (!path || stat(path, &sb) != 0) return 0;
    if (S_ISDIR(sb.st_mode)) return 1;
    char head[32];
    FILE *f = S_ISREG(sb.st_mode) ? fopen(path, "rb") : NULL;
    const size_t n = f ? fread(head, 1, sizeof head, f) : 0;
    if (f) fclose(f);
    return cpl_bundle_file_magic(head, n);
}

cp_status cp_bundle_open(const char *dir, cp_bundle **out, char *msg, size_t cap) {
    *out = NULL;
    struct stat sb;
    if (dir && stat(dir, &sb) == 0 && !S_ISDIR(sb.st_mode)) { /* a bundle file */
        cp_bundle *b = calloc(1, sizeof *b);
        if (!b) return cpa_fail(CP_ENOMEM, msg, cap, "%s: out of memory", dir);
        const cp_status st = cpl_bundle_read_file(dir, b, msg, cap);
        if (st != CP_OK) {
            cp_bundle_free(b);
            return st;
        }
        *out = b;
        return CP_OK;
    }
    DIR *dp = dir ? opendir(dir) : NULL;
    if (!dp) return cpa_fail(CP_EIO, msg, cap, "%s: cannot open the bundle directory", dir);
    cp_bundle *b = calloc(1, sizeof *b);
    if (!b) {
        closedir(dp);
        return cpa_fail(CP_ENOMEM, msg, cap, "%s: out of memory", dir);
    }
    cp_status st = CP_OK;
    struct dirent *de;
    while (st == CP_OK && (de = readdir(dp)) != NULL) {
        if (!is_table_name(de->d_name)) continue;
        if (b->n == b->cap) {
            const size_t nc = b->cap ? 2 * b->cap : 8;
            char **p = realloc(b->paths, nc * sizeof *p);
            if (!p) {
                st = cpa_fail(CP_ENOMEM, msg, cap, "%s: out of memory", dir);
                break;
            }
            b->paths = p;
            b->cap = nc;
        }
        const size_t len = strlen(dir) + strlen(de->d_name) + 2;
        if (!(b->paths[b->n] = malloc(len))) {
            st = cpa_fail(CP_ENOMEM, msg, cap, "%s: out of memory", dir);
            break;
        }
        snprintf(b->paths[b->n++], len, "%s/%s", dir, de->d_name);
    }
    closedir(dp);
    if (st == CP_OK && b->n == 0)
        st = cpa_fail(CP_ENOTFOUND, msg, cap, "%s: no tables (*.json) in the bundle", dir);
    if (st == CP_OK) {
        qsort(b->paths, b->n, sizeof *b->paths, name_cmp);
        if (!(b->devs = calloc(b->n, sizeof *b->devs)))
            st = cpa_fail(CP_ENOMEM, msg, cap, "%s: out of memory", dir);
    }
    for (size_t i = 0; st == CP_OK && i < b->n; i++)
        st = cpl_bundle_read_device(b->paths[i], &b->devs[i], msg, cap);
    if (st != CP_OK) {
        cp_bundle_free(b);
        return st;
    }
    *out = b;
    return CP_OK;
}

void cp_bundle_free(cp_bundle *b) {
    if (!b) return;
    for (size_t i = 0; i < b->n; i++) free(b->paths[i]);
    free(b->paths);
    free(b->devs);
    free(b->data);
    free(b->off);
    free(b->size);
    free(b);
}

size_t cp_bundle_count(const cp_bundle *b) { return b->n; }
const char *cp_bundle_path(const cp_bundle *b, size_t i) { return i < b->n ? b->paths[i] : ""; }
const cp_device_desc *cp_bundle_device(const cp_bundle *b, size_t i) {
    return i < b->n ? &b->devs[i] : NULL;
}

cp_status cp_bundle_table(const cp_bundle *b, size_t i, unsigned flags, cp_table **out,
                          char *msg, size_t cap) {
    *out = NULL;
    if (i >= b->n) return cpa_fail(CP_EINVAL, msg, cap, "bundle table %zu of %zu", i, b->n);
    if (!b->data) return cp_table_load(b->paths[i], flags, out, msg, cap);
    return cp_table_load_buffer(b->data + b->off[i], b->size[i], b->paths[i], flags, out, msg,
                                cap);
}

cp_status cp_bundle_load(const char *dir, unsigned flags, cp_table **out, cp_bundle_pick *pick,
                         char *msg, size_t cap) {
    *out = NULL;
    cp_bundle_pick local;
    if (!pick) pick = &local;
    cp_bundle *b;
    cp_status st = cp_bundle_open(dir, &b, msg, cap);
    if (st != CP_OK) return st;
    cp_device_desc here;
    cp_device_describe(&here);
    st = cp_bundle_pick_for(b, &here, pick);
    if (st == CP_OK)
        st = cp_bundle_table(b, pick->index, flags, out, msg, cap);
    else if (msg && cap)
        snprintf(msg, cap, "%s", pick->why);
    cp_bundle_free(b);
    return st;
}
