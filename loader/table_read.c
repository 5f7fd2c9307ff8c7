/* The entry reader of the table load: one entry's JSON text -> cp_table_entry
 * without building a jansson tree.
 *
 * Why: a lean table of 100 000 entries took seconds to load, nearly all of it
 * jansson allocating, hashing and freeing one small object per JSON value.
 * This reader tokenizes an entry into a flat array of nodes (one scratch
 * array, reused for every entry: no allocation per value) and takes the
 * fields dispatch needs straight from it.  The evidence of a full table (the
 * "candidates" array) is handed, as its byte span, to the tree decoder
 * (cpl_decode_candidates), its only reader.
 *
 * It accepts a strict subset of what the tree decoder accepts and never words
 * an error: anything it does not take as it is (an escape in a string, a byte
 * outside ASCII, a number it cannot read exactly, a duplicate key, a
 * version-1 spelling, a plugin's algorithm, a missing or mistyped field, any
 * check failing) makes it decline, and the entry goes to cpl_table_add, which
 * reads it or says what is wrong, file and field (docs/bad-input.md).  So a
 * message has one source, and the fields and checks here are the codec's
 * (cpl_shape_keys, cp_shape_validate, cp_params_check, cp_algo_defaults,
 * supports); fuzz_table_load checks that this path and the tree path agree on
 * every input. */
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "convpick/plugin.h"
#include "loader/codec.h"
#include "loader/table_impl.h"

enum { K_NULL, K_FALSE, K_TRUE, K_INT, K_REAL, K_STR, K_ARR, K_OBJ, K_SPAN };
#define MAX_DEPTH 16
#define MAX_KEYS 64

typedef struct node {
    uint8_t kind;
    uint32_t skip;     /* index just past this node's subtree */
    uint32_t n;        /* elements (array) or key/value pairs (object) */
    uint32_t off, len; /* string: its bytes without quotes; K_SPAN: the value's text */
    union {
        int64_t i; /* K_INT */
        double x;  /* K_REAL */
    } v;
} node;

struct cpl_entry_reader {
    node *nodes;
    size_t nn, cap;
    const char *d;
    size_t len, p;
    size_t cand_span; /* node index of the entry's "candidates" span, 0 none */
};

/* Byte classes, one lookup per byte in the two loops that see most bytes:
 * white space between tokens, and string contents (which stop at '"' and at
 * what this reader declines: '\\', control bytes, bytes outside ASCII). */
enum { C_WS = 1, C_STR_STOP = 2 };
static const unsigned char byte_class[256] = {
    [0x00 ... 0x08] = C_STR_STOP, ['\t'] = C_WS | C_STR_STOP, ['\n'] = C_WS | C_STR_STOP,
    [0x0b ... 0x0c] = C_STR_STOP, ['\r'] = C_WS | C_STR_STOP, [0x0e ... 0x1f] = C_STR_STOP,
    [' '] = C_WS, ['"'] = C_STR_STOP, ['\\'] = C_STR_STOP, [0x80 ... 0xff] = C_STR_STOP,
};

static inline void skip_ws(cpl_entry_reader *r) {
    const unsigned char *d = (const unsigned char *)r->d;
    size_t p = r->p;
    const size_t len = r->len;
    while (p < len && (byte_class[d[p]] & C_WS)) p++;
    r->p = p;
}

static inline long new_node(cpl_entry_reader *r, int kind) {
    if (r->nn == r->cap) {
        if (r->len > UINT32_MAX) return -1; /* offsets are 32-bit */
        const size_t nc = r->cap ? 2 * r->cap : 256;
        node *nb = nc < UINT32_MAX ? realloc(r->nodes, nc * sizeof *nb) : NULL;
        if (!nb) return -1;
        r->nodes = nb;
        r->cap = nc;
    }
    node *n = &r->nodes[r->nn];
    n->kind = (uint8_t)kind;
    n->n = 0;
    return (long)r->nn++;
}

/* A string without escapes, control or non-ASCII bytes (the rest declines). */
static inline long read_string(cpl_entry_reader *r) {
    const unsigned char *d = (const unsigned char *)r->d;
    const size_t start = r->p + 1, len = r->len;
    size_t p = start;
    while (p < len && !(byte_class[d[p]] & C_STR_STOP)) p++;
    if (p >= len || d[p] != '"') return -1;
    const long k = new_node(r, K_STR);
    if (k < 0) return -1;
    r->nodes[k].off = (uint32_t)start;
    r->nodes[k].len = (uint32_t)(p - start);
    r->p = p + 1;
    r->nodes[k].skip = (uint32_t)r->nn;
    return k;
}

static int is_digit(char ch) { return ch >= '0' && ch <= '9'; }

/* RFC 8259 numbers; an integer of at most 18 digits (exact in int64), a real
 * strtod reads whole to a finite value.  Others decline. */
static inline long read_number(cpl_entry_reader *r) {
    const char *d = r->d;
    const size_t start = r->p;
    size_t p = r->p;
    if (p < r->len && d[p] == '-') p++;
    const size_t digits = p;
    if (p < r->len && d[p] == '0') {
        p++;
    } else {
        if (p >= r->len || !is_digit(d[p])) return -1;
        while (p < r->len && is_digit(d[p])) p++;
    }
    const size_t ndigits = p - digits;
    int real = 0;
    if (p < r->len && d[p] == '.') {
        real = 1;
        if (++p >= r->len || !is_digit(d[p])) return -1;
        while (p < r->len && is_digit(d[p])) p++;
    }
    if (p < r->len && (d[p] == 'e' || d[p] == 'E')) {
        real = 1;
        p++;
        if (p < r->len && (d[p] == '+' || d[p] == '-')) p++;
        if (p >= r->len || !is_digit(d[p])) return -1;
        while (p < r->len && is_digit(d[p])) p++;
    }
    const long k = new_node(r, real ? K_REAL : K_INT);
    if (k < 0) return -1;
    node *n = &r->nodes[k];
    if (!real) {
        if (ndigits > 18) return -1;
        int64_t v = 0;
        for (size_t q = digits; q < p; q++) v = v * 10 + (d[q] - '0');
        n->v.i = d[start] == '-' ? -v : v;
    } else {
        char buf[64];
        if (p - start >= sizeof buf) return -1;
        memcpy(buf, d + start, p - start);
        buf[p - start] = '\0';
        char *end;
        n->v.x = strtod(buf, &end);
        if (end != buf + (p - start) || !isfinite(n->v.x)) return -1;
    }
    r->p = p;
    n->skip = (uint32_t)r->nn;
    return k;
}

/* The text of a value that starts with '[' up to its matching ']', strings
 * skipped: the caller hands it to jansson, which checks it. */
static long read_span(cpl_entry_reader *r) {
    const size_t start = r->p;
    int depth = 0;
    for (; r->p < r->len; r->p++) {
        const char ch = r->d[r->p];
        if (ch == '"') {
            for (r->p++; r->p < r->len && r->d[r->p] != '"'; r->p++)
                if (r->d[r->p] == '\\') r->p++;
            if (r->p >= r->len) return -1;
        } else if (ch == '[' || ch == '{') {
            depth++;
        } else if (ch == ']' || ch == '}') {
            if (--depth == 0) break;
        }
    }
    if (r->p >= r->len) return -1;
    const long k = new_node(r, K_SPAN);
    if (k < 0) return -1;
    r->nodes[k].off = (uint32_t)start;
    r->nodes[k].len = (uint32_t)(++r->p - start);
    r->nodes[k].skip = (uint32_t)r->nn;
    return k;
}

static int same_key(const cpl_entry_reader *r, const node *a, const node *b) {
    return a->len == b->len && r->d[a->off] == r->d[b->off] &&
           memcmp(r->d + a->off, r->d + b->off, a->len) == 0;
}

static long read_value(cpl_entry_reader *r, int depth);

/* After '{' or '[': 1 when the container closes at once (consumed). */
static int opens_empty(cpl_entry_reader *r, char close) {
    r->p++;
    skip_ws(r);
    if (r->p < r->len && r->d[r->p] == close) {
        r->p++;
        return 1;
    }
    return 0;
}

/* After a member: 1 when the container closes (consumed), 0 after a ','
 * (another member follows), -1 otherwise. */
static int member_end(cpl_entry_reader *r, char close) {
    skip_ws(r);
    if (r->p >= r->len) return -1;
    const char ch = r->d[r->p++];
    return ch == close ? 1 : ch == ',' ? 0 : -1;
}

static long read_object(cpl_entry_reader *r, int depth) {
    const long k = new_node(r, K_OBJ);
    if (k < 0) return -1;
    long keys[MAX_KEYS];
    uint32_t n = 0;
    uint64_t seen = 0;
    if (!opens_empty(r, '}')) {
        for (int end = 0; !end;) {
            skip_ws(r);
            if (r->p >= r->len || r->d[r->p] != '"' || n == MAX_KEYS) return -1;
            const long key = read_string(r);
            if (key < 0) return -1;
            /* jansson: JSON_REJECT_DUPLICATES.  A 64-bit filter of (length, last
             * byte) leaves the pairwise comparison to keys that may collide. */
            const node *kn0 = &r->nodes[key];
            const unsigned char last = (unsigned char)r->d[kn0->off + kn0->len - (kn0->len > 0)];
            const uint64_t bit = 1ull << ((kn0->len * 7u + last) & 63u);
            if (seen & bit)
                for (uint32_t j = 0; j < n; j++)
                    if (same_key(r, &r->nodes[keys[j]], kn0)) return -1;
            seen |= bit;
            keys[n++] = key;
            skip_ws(r);
            if (r->p >= r->len || r->d[r->p] != ':') return -1;
            r->p++;
            skip_ws(r);
            const node *kn = &r->nodes[key];
            const int cands = depth == 0 && kn->len == 10 &&
                              memcmp(r->d + kn->off, "candidates", 10) == 0 && r->p < r->len &&
                              r->d[r->p] == '[';
            const long v = cands ? read_span(r) : read_value(r, depth + 1);
            if (v < 0) return -1;
            if (cands) r->cand_span = (size_t)v;
            if ((end = member_end(r, '}')) < 0) return -1;
        }
    }
    r->nodes[k].n = n;
    r->nodes[k].skip = (uint32_t)r->nn;
    return k;
}

static long read_array(cpl_entry_reader *r, int depth) {
    const long k = new_node(r, K_ARR);
    if (k < 0) return -1;
    uint32_t n = 0;
    if (!opens_empty(r, ']')) {
        for (int end = 0; !end; n++) {
            skip_ws(r);
            if (read_value(r, depth + 1) < 0 || (end = member_end(r, ']')) < 0) return -1;
        }
    }
    r->nodes[k].n = n;
    r->nodes[k].skip = (uint32_t)r->nn;
    return k;
}

static long read_literal(cpl_entry_reader *r, const char *word, int kind) {
    const size_t n = strlen(word);
    if (r->len - r->p < n || memcmp(r->d + r->p, word, n) != 0) return -1;
    r->p += n;
    const long k = new_node(r, kind);
    if (k >= 0) r->nodes[k].skip = (uint32_t)r->nn;
    return k;
}

static long read_value(cpl_entry_reader *r, int depth) {
    if (r->p >= r->len || depth > MAX_DEPTH) return -1;
    switch (r->d[r->p]) {
    case '{': return read_object(r, depth);
    case '[': return read_array(r, depth);
    case '"': return read_string(r);
    case 't': return read_literal(r, "true", K_TRUE);
    case 'f': return read_literal(r, "false", K_FALSE);
    case 'n': return read_literal(r, "null", K_NULL);
    default: return read_number(r);
    }
}

/* ---- the fields (the checks are the codec's; see table_entry.c) ---------- */

/* obj.key (obj an object node), NULL when absent. */
static inline const node *get(const cpl_entry_reader *r, const node *obj, const char *key) {
    const size_t klen = strlen(key); /* inlined: a constant for a literal key */
    size_t i = (size_t)(obj - r->nodes) + 1;
    for (uint32_t j = 0; j < obj->n; j++) {
        const node *kn = &r->nodes[i], *v = &r->nodes[i + 1];
        if (kn->len == klen && r->d[kn->off] == key[0] && memcmp(r->d + kn->off, key, klen) == 0)
            return v;
        i = v->skip;
    }
    return NULL;
}

static const node *get_kind(const cpl_entry_reader *r, const node *obj, const char *key,
                            int kind) {
    const node *v = get(r, obj, key);
    return v && v->kind == kind ? v : NULL;
}

/* A number node's value as a double (json_number_value). */
static double num(const node *v) { return v->kind == K_INT ? (double)v->v.i : v->v.x; }
static int is_num(const node *v) { return v->kind == K_INT || v->kind == K_REAL; }

/* A number (integer or real), finite, >= 0: cpl_jreal. */
static int get_real(const cpl_entry_reader *r, const node *obj, const char *key, double *out) {
    const node *v = get(r, obj, key);
    if (!v || !is_num(v) || !(num(v) >= 0.0)) return 0;
    *out = num(v);
    return 1;
}

static int get_int(const cpl_entry_reader *r, const node *obj, const char *key, int64_t lo,
                   int64_t hi, int64_t *out) {
    const node *v = get_kind(r, obj, key, K_INT);
    if (!v || v->v.i < lo || v->v.i > hi) return 0;
    *out = v->v.i;
    return 1;
}

static int get_bool(const cpl_entry_reader *r, const node *obj, const char *key, int *out) {
    const node *v = get(r, obj, key);
    if (!v || (v->kind != K_TRUE && v->kind != K_FALSE)) return 0;
    *out = v->kind == K_TRUE;
    return 1;
}

/* A string copied NUL-terminated into out[cap]; longer declines. */
static int get_text(const cpl_entry_reader *r, const node *obj, const char *key, char *out,
                    size_t cap) {
    const node *v = get_kind(r, obj, key, K_STR);
    if (!v || v->len >= cap) return 0;
    memcpy(out, r->d + v->off, v->len);
    out[v->len] = '\0';
    return 1;
}

/* The key node kn spells k. */
static int key_is(const cpl_entry_reader *r, const node *kn, const char *k) {
    const char *t = r->d + kn->off;
    for (uint32_t i = 0; i < kn->len; i++)
        if (t[i] != k[i]) return 0; /* also when k ends first */
    return k[kn->len] == '\0';
}

/* Read in the object's own order, each key tried first as the one after the
 * last found (the writer's order): no search per field. */
static int read_shape(const cpl_entry_reader *r, const node *e, cp_shape *out) {
    const node *sh = get_kind(r, e, "shape", K_OBJ);
    if (!sh) return 0;
    *out = cp_shape_init();
    int64_t *dst[CPL_SHAPE_NKEYS];
    cpl_shape_fields(out, dst);
    uint32_t have = 0;
    int layout = 0, next = 0;
    size_t i = (size_t)(sh - r->nodes) + 1;
    for (uint32_t j = 0; j < sh->n; j++) {
        const node *kn = &r->nodes[i], *v = &r->nodes[i + 1];
        int f = -1;
        for (int t = 0; t < CPL_SHAPE_NKEYS && f < 0; t++)
            if (key_is(r, kn, cpl_shape_keys[(next + t) % CPL_SHAPE_NKEYS]))
                f = (next + t) % CPL_SHAPE_NKEYS;
        if (f >= 0) {
            if (v->kind != K_INT) return 0;
            *dst[f] = v->v.i;
            have |= 1u << f;
            next = f + 1;
        } else if (key_is(r, kn, "layout")) {
            if (v->kind != K_STR || !key_is(r, v, CPL_LAYOUT)) return 0;
            layout = 1;
        }
        i = v->skip;
    }
    return have == (1u << CPL_SHAPE_NKEYS) - 1 && layout &&
           cp_shape_validate(out, NULL, 0) == CP_SHAPE_OK;
}

/* obj.algo (a built-in: a plugin's declines, check_plugin words it) and
 * obj.params as cpl_decode_params reads them. */
static int read_algo(const cpl_entry_reader *r, const node *obj, const cp_shape *shape,
                     const cp_cache_sizes *caches, const cp_algo **a, cp_params *p) {
    char name[64];
    if (!get_text(r, obj, "algo", name, sizeof name) || get(r, obj, "plugin")) return 0;
    if (!(*a = cp_algo_find(name)) || cp_algo_plugin(*a)) return 0;
    const node *pj = get_kind(r, obj, "params", K_OBJ);
    if (!pj) return 0;
    size_t i = (size_t)(pj - r->nodes) + 1;
    for (uint32_t j = 0; j < pj->n; j++) {
        const node *kn = &r->nodes[i];
        char key[64];
        if (kn->len >= sizeof key) return 0;
        memcpy(key, r->d + kn->off, kn->len);
        key[kn->len] = '\0';
        if (cp_algo_param_index(*a, key) < 0) return 0;
        i = r->nodes[i + 1].skip;
    }
    memset(p, 0, sizeof *p);
    cp_params defaults;
    cp_algo_defaults(*a, shape, caches, &defaults);
    for (int k = 0; k < (*a)->nparams; k++) {
        const node *v = get(r, pj, (*a)->params[k].name);
        if (!v) {
            p->v[k] = defaults.v[k];
            continue;
        }
        if (v->kind != K_INT) return 0;
        p->v[k] = v->v.i;
    }
    return cp_params_check(*a, p, NULL, 0) == CP_OK;
}

/* obj.timing.stats as cpl_decode_timing reads it (the entry has no samples). */
static int read_timing(const cpl_entry_reader *r, const node *e, cp_timing *out) {
    const node *t = get_kind(r, e, "timing", K_OBJ);
    const node *s = t ? get_kind(r, t, "stats", K_OBJ) : NULL;
    int64_t n;
    if (!s || !get_real(r, s, "median", &out->median) || !get_real(r, s, "ci_lo", &out->ci_lo) ||
        !get_real(r, s, "ci_hi", &out->ci_hi) || !get_int(r, s, "n", 0, UINT32_MAX, &n) ||
        !get_bool(r, s, "noisy", &out->noisy))
        return 0;
    out->samples = (uint32_t)n;
    return out->ci_lo <= out->median && out->median <= out->ci_hi;
}

static int read_runner_up(const cpl_entry_reader *r, const node *e, const cp_cache_sizes *caches,
                          cp_table_entry *out) {
    const node *ru = get(r, e, "runner_up");
    if (!ru) return 0;
    out->runner_up = NULL;
    if (ru->kind == K_NULL) return 1;
    if (ru->kind != K_OBJ ||
        !read_algo(r, ru, &out->shape, caches, &out->runner_up, &out->runner_up_params) ||
        !get_real(r, ru, "margin", &out->margin))
        return 0;
    out->margin_lo = out->margin_hi = NAN;
    const node *mi = get(r, ru, "margin_interval");
    if (mi && mi->kind != K_NULL) {
        const node *lo = mi + 1, *hi = lo + 1;
        if (mi->kind != K_ARR || mi->n != 2 || !is_num(lo) || !is_num(hi) || num(lo) > num(hi))
            return 0;
        out->margin_lo = num(lo);
        out->margin_hi = num(hi);
    }
    return get_bool(r, ru, "in_noise", &out->margin_in_noise);
}

/* The evidence: the "candidates" text through the tree decoder. */
static int read_candidates(const cpl_entry_reader *r, const cpl_jctx *c, size_t idx,
                           const cp_cache_sizes *caches, cp_table_entry *out) {
    if (!r->cand_span) return 1;
    const node *sp = &r->nodes[r->cand_span];
    json_t *cands = json_loadb(r->d + sp->off, sp->len, JSON_REJECT_DUPLICATES, NULL);
    char where[48];
    snprintf(where, sizeof where, "entries[%zu]", idx);
    const int ok = json_is_array(cands) &&
                   cpl_decode_candidates(c, cands, where, caches, out) == CP_OK;
    json_decref(cands);
    return ok;
}

static int read_entry(cpl_entry_reader *r, const cpl_jctx *c, cp_table *t, size_t i) {
    cp_table_entry *out = &t->entries[i];
    const node *e = &r->nodes[0];
    int64_t threads;
    int flipped;
    if (e->kind != K_OBJ || !get_text(r, e, "name", out->name, sizeof out->name) ||
        !read_shape(r, e, &out->shape) || !get_bool(r, e, "flipped", &flipped) ||
        !get_int(r, e, "threads", 1, 65536, &threads))
        return 0;
    out->flip = flipped ? CP_CONV : CP_XCORR;
    out->threads = (int)threads;
    const node *ch = get_kind(r, e, "choice", K_OBJ);
    if (!ch || !read_algo(r, ch, &out->shape, &t->caches, &out->algo, &out->params)) return 0;
    out->rel_err = NAN;
    const node *re = get(r, ch, "rel_err");
    if (re && re->kind != K_NULL && !get_real(r, ch, "rel_err", &out->rel_err)) return 0;
    if (!out->algo->supports(&out->shape, out->flip, NULL, 0) || !read_timing(r, e, &out->timing) ||
        !read_runner_up(r, e, &t->caches, out))
        return 0;
    const node *tried = get(r, e, "tried");
    const node *cands = get(r, e, "candidates");
    if ((tried && tried->kind != K_OBJ) || (cands && cands->kind != K_SPAN)) return 0;
    return get_text(r, e, "settings_key", t->settings_keys[i], CPT_KEY_MAX) &&
           read_candidates(r, c, i, &t->caches, out);
}

int cpl_read_entry(cpl_entry_reader **rdp, const cpl_jctx *c, const char *d, size_t len,
                   cp_table *t, size_t i, size_t *used) {
    cpl_entry_reader *r = *rdp;
    if (!r && !(r = *rdp = calloc(1, sizeof *r))) return 0;
    r->d = d;
    r->len = len;
    r->p = 0;
    r->nn = 0;
    r->cand_span = 0;
    t->n = i + 1; /* as cpl_table_add: cp_table_free releases what was read */
    t->order[i] = i;
    if (len && d[0] == '{' && read_value(r, 0) == 0 && read_entry(r, c, t, i)) {
        *used = r->p;
        return 1;
    }
    cp_table_entry *out = &t->entries[i];
    for (size_t j = 0; j < out->ncandidates; j++) free(out->candidates[j].samples);
    free(out->candidates);
    memset(out, 0, sizeof *out);
    return 0;
}

void cpl_entry_reader_free(cpl_entry_reader *r) {
    if (!r) return;
    free(r->nodes);
    free(r);
}
