/* Bundle files: several tuning tables in one file, the single-file form of a
 * bundle (convpick/bundle.h).  Line-framed, so that a table's bytes are found
 * without parsing the tables around it and the one picked is loaded from
 * them as from its own file (docs/table-format.md, "Bundle files"):
 *
 *   convpick-table-bundle 1
 *   table NAME BYTES
 *   <BYTES bytes: a tuning table, full or lean>
 *   table NAME BYTES
 *   <...>
 *   end
 *
 * NAME: a plain file name ending in .json, names in strictly ascending byte
 * order; each table's bytes are followed by a newline; nothing after "end".
 * The one writer is harness/io/bundle_pack.c (convpick pack). */
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "algos/core/cpa.h"
#include "loader/bundle_impl.h"
#include "loader/codec.h"
#include "loader/table_impl.h"

#define MAGIC "convpick-table-bundle"
#define BUNDLE_VERSION "1"
#define NAME_MAX_LEN 63

int cpl_bundle_file_magic(const char *d, size_t len) {
    const size_t m = sizeof MAGIC - 1;
    return len > m && memcmp(d, MAGIC, m) == 0 && d[m] == ' ';
}

/* "FILE:LINE: ..." into msg; returns st. */
static cp_status at_line(cp_status st, const char *path, size_t line, char *msg, size_t cap,
                         const char *fmt, ...) __attribute__((format(printf, 6, 7)));
static cp_status at_line(cp_status st, const char *path, size_t line, char *msg, size_t cap,
                         const char *fmt, ...) {
    if (msg && cap) {
        const int n = snprintf(msg, cap, "%s:%zu: ", path, line);
        if (n >= 0 && (size_t)n < cap) {
            va_list ap;
            va_start(ap, fmt);
            vsnprintf(msg + n, cap - (size_t)n, fmt, ap);
            va_end(ap);
        }
    }
    return st;
}

static int name_ok(const char *s, size_t n) {
    if (n < 6 || n > NAME_MAX_LEN || s[0] == '.' || memcmp(s + n - 5, ".json", 5) != 0) return 0;
    for (size_t i = 0; i < n; i++) {
        const char ch = s[i];
        if (!((ch >= 'a' && ch <= 'z') || (ch >= 'A' && ch <= 'Z') || (ch >= '0' && ch <= '9') ||
              ch == '.' || ch == '_' || ch == '-'))
            return 0;
    }
    return 1;
}

static size_t count_lines(const char *d, size_t n) {
    size_t k = 0;
    for (const char *p = d, *end = d + n; (p = memchr(p, '\n', (size_t)(end - p))) != NULL; p++)
        k++;
    return k;
}

/* Room for one more table in b. */
static int grow(cp_bundle *b) {
    if (b->n < b->cap) return 1;
    const size_t nc = b->cap ? 2 * b->cap : 8;
    char **p = realloc(b->paths, nc * sizeof *p);
    if (p) b->paths = p;
    size_t *o = p ? realloc(b->off, nc * sizeof *o) : NULL;
    if (o) b->off = o;
    size_t *s = o ? realloc(b->size, nc * sizeof *s) : NULL;
    if (!s) return 0;
    b->size = s;
    b->cap = nc;
    return 1;
}

cp_status cpl_bundle_read_file(const char *path, cp_bundle *b, char *msg, size_t cap) {
    cpl_jctx c = {path, msg, cap};
    size_t len;
    cp_status st = cpl_read_file(&c, path, CPT_MAX_BYTES, "bundle", MAGIC, &b->data, &len);
    if (st != CP_OK) return st;
    const char *d = b->data;
    const char *eol = len ? memchr(d, '\n', len) : NULL;
    if (!cpl_bundle_file_magic(d, len) || !eol)
        return at_line(CP_EFORMAT, path, 1, msg, cap,
                       "not a convpick table bundle (the first line must be '%s %s')", MAGIC,
                       BUNDLE_VERSION);
    const char *ver = d + sizeof MAGIC;
    const size_t vlen = (size_t)(eol - ver);
    if (vlen != strlen(BUNDLE_VERSION) || memcmp(ver, BUNDLE_VERSION, vlen) != 0)
        return at_line(CP_EVERSION, path, 1, msg, cap,
                       "bundle version '%.*s' is not supported (this build reads %s)",
                       (int)(vlen > 20 ? 20 : vlen), ver, BUNDLE_VERSION);
    size_t p = (size_t)(eol - d) + 1, line = 2;
    for (;;) {
        eol = p < len ? memchr(d + p, '\n', len - p) : NULL;
        if (!eol)
            return at_line(CP_EFORMAT, path, line, msg, cap,
                           "no 'end' line: the bundle is truncated");
        const char *l = d + p;
        const size_t ll = (size_t)(eol - l);
        if (ll == 3 && memcmp(l, "end", 3) == 0) {
            if (p + 4 != len)
                return at_line(CP_EFORMAT, path, line + 1, msg, cap,
                               "%zu bytes after the 'end' line", len - p - 4);
            break;
        }
        const char *name = l + 6;
        const char *sp = ll > 6 && memcmp(l, "table ", 6) == 0
                             ? memchr(name, ' ', (size_t)(eol - name))
                             : NULL;
        if (!sp)
            return at_line(CP_EFORMAT, path, line, msg, cap,
                           "expected 'table NAME BYTES' or 'end', found '%.*s'",
                           (int)(ll > 40 ? 40 : ll), l);
        const size_t nlen = (size_t)(sp - name);
        if (!name_ok(name, nlen))
            return at_line(CP_EFORMAT, path, line, msg, cap,
                           "table name '%.*s': expected a plain file name ending in .json "
                           "(letters, digits, '.', '_', '-'; at most %d bytes)",
                           (int)(nlen > 80 ? 80 : nlen), name, NAME_MAX_LEN);
        const char *num = sp + 1;
        const size_t numlen = (size_t)(eol - num);
        size_t size = 0;
        int num_ok = numlen >= 1 && numlen <= 10;
        for (size_t i = 0; num_ok && i < numlen; i++) {
            num_ok = num[i] >= '0' && num[i] <= '9';
            size = size * 10 + (size_t)(num[i] - '0');
        }
        if (!num_ok || size > CPT_MAX_BYTES)
            return at_line(CP_EFORMAT, path, line, msg, cap,
                           "table '%.*s': size '%.*s' is not a byte count (at most %llu)",
                           (int)nlen, name, (int)(numlen > 20 ? 20 : numlen), num,
                           (unsigned long long)CPT_MAX_BYTES);
        if (b->n) {
            const char *prev = strrchr(b->paths[b->n - 1], ':') + 1;
            const size_t plen = strlen(prev);
            const int cmp = memcmp(prev, name, plen < nlen ? plen : nlen);
            if (cmp > 0 || (cmp == 0 && plen >= nlen))
                return at_line(CP_EFORMAT, path, line, msg, cap,
                               "table '%.*s' after '%s': names must be unique and in ascending "
                               "order",
                               (int)nlen, name, prev);
        }
        const size_t start = p + ll + 1;
        if (size > len - start)
            return at_line(CP_EFORMAT, path, line, msg, cap,
                           "table '%.*s': %zu bytes declared, only %zu left in the bundle "
                           "(truncated?)",
                           (int)nlen, name, size, len - start);
        if (start + size >= len || d[start + size] != '\n')
            return at_line(CP_EFORMAT, path, line, msg, cap,
                           "table '%.*s': its %zu bytes are not followed by a newline (is the "
                           "size right?)",
                           (int)nlen, name, size);
        if (!grow(b)) return cpa_fail(CP_ENOMEM, msg, cap, "%s: out of memory", path);
        const size_t plen = strlen(path) + 1 + nlen + 1;
        if (!(b->paths[b->n] = malloc(plen)))
            return cpa_fail(CP_ENOMEM, msg, cap, "%s: out of memory", path);
        snprintf(b->paths[b->n], plen, "%s:%.*s", path, (int)nlen, name);
        b->off[b->n] = start;
        b->size[b->n] = size;
        b->n++;
        line += 1 + count_lines(d + start, size) + 1;
        p = start + size + 1;
    }
    if (b->n == 0) return cpa_fail(CP_ENOTFOUND, msg, cap, "%s: no tables in the bundle", path);
    if (!(b->devs = calloc(b->n, sizeof *b->devs)))
        return cpa_fail(CP_ENOMEM, msg, cap, "%s: out of memory", path);
    for (size_t i = 0; i < b->n; i++) {
        const cpl_jctx mc = {b->paths[i], msg, cap};
        if ((st = cpl_bundle_text_device(&mc, d + b->off[i], b->size[i], &b->devs[i])) != CP_OK)
            return st;
    }
    return CP_OK;
}
