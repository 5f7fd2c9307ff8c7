/* Set-associative LRU cache levels fed one access at a time (model in
 * cachesim.h).  Each set keeps its tags in recency order, most recent first,
 * so a hit moves one tag to the front and a miss drops the last one. */
#include "harness/cache/cachesim.h"

#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static int is_pow2(uint64_t v) { return v != 0 && (v & (v - 1)) == 0; }

static uint64_t log2u(uint64_t v) {
    uint64_t r = 0;
    while (v > 1) {
        v >>= 1;
        r++;
    }
    return r;
}

cp_status cph_geom_check(const cph_cache_geom *g, char *msg, size_t cap) {
    if (g->line == 0 || !is_pow2(g->line)) {
        snprintf(msg, cap, "%s: line size %zu is not a power of two", g->name, g->line);
        return CP_EINVAL;
    }
    if (g->ways < 1) {
        snprintf(msg, cap, "%s: ways %lld must be at least 1", g->name, (long long)g->ways);
        return CP_EINVAL;
    }
    if (g->size == 0 || g->size % (g->line * (size_t)g->ways) != 0) {
        snprintf(msg, cap, "%s: size %zu is not a positive multiple of ways x line = %zu",
                 g->name, g->size, g->line * (size_t)g->ways);
        return CP_EINVAL;
    }
    return CP_OK;
}

/* A size with an optional K/M/G suffix (powers of two). */
static int parse_size(const char *t, size_t len, size_t *out) {
    char buf[32];
    if (len == 0 || len >= sizeof buf) return 0;
    memcpy(buf, t, len);
    buf[len] = '\0';
    char *end = NULL;
    errno = 0;
    unsigned long long v = strtoull(buf, &end, 10);
    if (errno || end == buf || buf[0] == '-') return 0;
    unsigned shift = 0;
    if (*end == 'K' || *end == 'k') shift = 10, end++;
    else if (*end == 'M' || *end == 'm') shift = 20, end++;
    else if (*end == 'G' || *end == 'g') shift = 30, end++;
    if (*end != '\0' || v > (~0ull >> shift)) return 0;
    *out = (size_t)(v << shift);
    return 1;
}

cp_status cph_geom_parse(const char *spec, const char *ctx, cph_cache_geom *g, int *n,
                         char *msg, size_t cap) {
    *n = 0;
    const char *p = spec;
    int item = 0;
    while (*p) {
        item++;
        const char *end = strchr(p, ',');
        if (!end) end = p + strlen(p);
        if (*n == CPH_SIM_MAX_LEVELS) {
            snprintf(msg, cap, "%s: more than %d levels", ctx, CPH_SIM_MAX_LEVELS);
            return CP_EINVAL;
        }
        cph_cache_geom *l = &g[*n];
        memset(l, 0, sizeof *l);
        const char *eq = memchr(p, '=', (size_t)(end - p));
        if (!eq || eq == p || eq - p >= (ptrdiff_t)sizeof l->name) {
            snprintf(msg, cap, "%s: item %d '%.*s': expected NAME=SIZE:WAYS:LINE (name of 1-7 "
                     "characters)", ctx, item, (int)(end - p), p);
            return CP_EINVAL;
        }
        memcpy(l->name, p, (size_t)(eq - p));
        const char *f = eq + 1;
        const char *c1 = memchr(f, ':', (size_t)(end - f));
        const char *c2 = c1 ? memchr(c1 + 1, ':', (size_t)(end - c1 - 1)) : NULL;
        if (!c1 || !c2) {
            snprintf(msg, cap, "%s: %s: expected SIZE:WAYS:LINE after '='", ctx, l->name);
            return CP_EINVAL;
        }
        size_t ways = 0, line = 0;
        int full = (size_t)(c2 - c1 - 1) == 4 && strncmp(c1 + 1, "full", 4) == 0;
        if (!parse_size(f, (size_t)(c1 - f), &l->size)) {
            snprintf(msg, cap, "%s: %s: size '%.*s' is not a number with optional K/M/G", ctx,
                     l->name, (int)(c1 - f), f);
            return CP_EINVAL;
        }
        if (!full && (!parse_size(c1 + 1, (size_t)(c2 - c1 - 1), &ways) || ways > (1u << 30))) {
            snprintf(msg, cap, "%s: %s: ways '%.*s' is not an integer or 'full'", ctx, l->name,
                     (int)(c2 - c1 - 1), c1 + 1);
            return CP_EINVAL;
        }
        if (!parse_size(c2 + 1, (size_t)(end - c2 - 1), &line)) {
            snprintf(msg, cap, "%s: %s: line '%.*s' is not a number", ctx, l->name,
                     (int)(end - c2 - 1), c2 + 1);
            return CP_EINVAL;
        }
        l->line = line;
        l->ways = full ? (line ? (int64_t)(l->size / line) : 0) : (int64_t)ways;
        char why[200];
        if (cph_geom_check(l, why, sizeof why) != CP_OK) {
            snprintf(msg, cap, "%s: %s", ctx, why);
            return CP_EINVAL;
        }
        (*n)++;
        p = *end ? end + 1 : end;
    }
    if (*n == 0) {
        snprintf(msg, cap, "%s: no cache level given", ctx);
        return CP_EINVAL;
    }
    return CP_OK;
}

static int fmt_size(size_t v, char *buf, size_t cap) {
    if (v >= (1u << 30) && v % (1u << 30) == 0) return snprintf(buf, cap, "%zuG", v >> 30);
    if (v >= (1u << 20) && v % (1u << 20) == 0) return snprintf(buf, cap, "%zuM", v >> 20);
    if (v >= (1u << 10) && v % (1u << 10) == 0) return snprintf(buf, cap, "%zuK", v >> 10);
    return snprintf(buf, cap, "%zu", v);
}

int cph_geom_format(const cph_cache_geom *g, int n, char *buf, size_t cap) {
    size_t used = 0;
    int total = 0;
    for (int i = 0; i < n; i++) {
        char sz[32];
        fmt_size(g[i].size, sz, sizeof sz);
        int k = snprintf(buf + (used < cap ? used : cap), used < cap ? cap - used : 0,
                         "%s%s=%s:%lld:%zu", i ? "," : "", g[i].name, sz,
                         (long long)g[i].ways, g[i].line);
        if (k < 0) return k;
        total += k;
        used += (size_t)k;
    }
    return total;
}

cp_status cph_sim_init(cph_cachesim *s, const cph_cache_geom *g, int n, char *msg, size_t cap) {
    memset(s, 0, sizeof *s);
    if (n < 1 || n > CPH_SIM_MAX_LEVELS) {
        snprintf(msg, cap, "cache simulator: %d levels (1..%d allowed)", n, CPH_SIM_MAX_LEVELS);
        return CP_EINVAL;
    }
    for (int i = 0; i < n; i++) {
        if (cph_geom_check(&g[i], msg, cap) != CP_OK) {
            cph_sim_free(s);
            return CP_EINVAL;
        }
        cph_sim_level *l = &s->lv[i];
        l->g = g[i];
        l->sets = g[i].size / (g[i].line * (size_t)g[i].ways);
        l->line_shift = log2u(g[i].line);
        l->set_mask = is_pow2(l->sets) ? l->sets - 1 : 0;
        l->tags = calloc(l->sets * (uint64_t)g[i].ways, sizeof *l->tags);
        if (!l->tags) {
            snprintf(msg, cap, "cache simulator: out of memory for %s", g[i].name);
            cph_sim_free(s);
            return CP_ENOMEM;
        }
        s->nlevels = i + 1;
    }
    return CP_OK;
}

void cph_sim_reset(cph_cachesim *s) {
    for (int i = 0; i < s->nlevels; i++) {
        cph_sim_level *l = &s->lv[i];
        memset(l->tags, 0, l->sets * (uint64_t)l->g.ways * sizeof *l->tags);
        memset(&l->c, 0, sizeof l->c);
    }
    s->refs = s->loads = s->stores = 0;
}

void cph_sim_free(cph_cachesim *s) {
    for (int i = 0; i < CPH_SIM_MAX_LEVELS; i++) free(s->lv[i].tags);
    memset(s, 0, sizeof *s);
}

/* Looks up line number ln (address >> line_shift of this level); returns 1 on
 * a hit.  Either way the line ends most recently used. */
static int level_touch(cph_sim_level *l, uint64_t ln) {
    const uint64_t set = l->set_mask ? (ln & l->set_mask) : ln % l->sets;
    const int64_t ways = l->g.ways;
    uint64_t *t = l->tags + set * (uint64_t)ways;
    const uint64_t key = ln + 1;
    if (t[0] == key) return 1;
    int64_t i = 1;
    while (i < ways && t[i] != key) i++;
    const int hit = i < ways;
    if (!hit) i = ways - 1; /* the least recently used is dropped */
    memmove(t + 1, t, (size_t)i * sizeof *t);
    t[0] = key;
    return hit;
}

void cph_sim_access(cph_cachesim *s, uintptr_t addr, size_t bytes, int is_store) {
    s->refs++;
    if (is_store) s->stores++;
    else s->loads++;
    if (bytes == 0) bytes = 1;
    /* Line numbers are taken at L1's line size; outer levels with another
     * line size see the same byte address. */
    const uint64_t first = (uint64_t)addr, last = (uint64_t)addr + bytes - 1;
    const uint64_t l1s = s->lv[0].line_shift;
    for (uint64_t ln = first >> l1s; ln <= last >> l1s; ln++) {
        const uint64_t a = ln << l1s;
        for (int i = 0; i < s->nlevels; i++) {
            cph_sim_level *l = &s->lv[i];
            l->c.accesses++;
            if (!is_store) l->c.read_accesses++;
            if (level_touch(l, a >> l->line_shift)) break;
            l->c.misses++;
            if (!is_store) l->c.read_misses++;
        }
    }
}
