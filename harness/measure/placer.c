/* Random placement on reused huge-page regions (contract in placer.h). */
#define _GNU_SOURCE
#include "harness/measure/placer.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/mman.h>

#include "harness/measure/data.h"

#define HUGE_PAGE ((size_t)2 << 20)

typedef struct region {
    void *map;      /* what mmap returned */
    size_t maplen;
    char *base;     /* 2 MiB aligned start inside map */
    size_t len;     /* usable bytes from base */
    void *user;     /* the block handed out, or NULL when free */
} region;

struct cph_placer {
    region *r;
    size_t n, cap;
    size_t span;
    uint64_t rng;
};

cph_placer *cph_placer_create(size_t span, uint64_t seed) {
    cph_placer *pl = calloc(1, sizeof *pl);
    if (!pl) return NULL;
    pl->span = span / 64 * 64;
    pl->rng = seed ? seed : 0x9e3779b97f4a7c15ULL;
    return pl;
}

void cph_placer_destroy(cph_placer *pl) {
    if (!pl) return;
    for (size_t i = 0; i < pl->n; i++) munmap(pl->r[i].map, pl->r[i].maplen);
    free(pl->r);
    free(pl);
}

/* The smallest free region that holds need bytes, or a new one. */
static region *region_for(cph_placer *pl, size_t need) {
    region *best = NULL;
    for (size_t i = 0; i < pl->n; i++)
        if (!pl->r[i].user && pl->r[i].len >= need && (!best || pl->r[i].len < best->len))
            best = &pl->r[i];
    if (best) return best;
    if (pl->n == pl->cap) {
        const size_t cap = pl->cap ? 2 * pl->cap : 16;
        region *r = realloc(pl->r, cap * sizeof *r);
        if (!r) return NULL;
        pl->r = r;
        pl->cap = cap;
    }
    const size_t len = (need + HUGE_PAGE - 1) / HUGE_PAGE * HUGE_PAGE;
    if (len < need) return NULL;
    const size_t maplen = len + HUGE_PAGE; /* room to align the start */
    void *map = mmap(NULL, maplen, PROT_READ | PROT_WRITE, MAP_PRIVATE | MAP_ANONYMOUS, -1, 0);
    if (map == MAP_FAILED) return NULL;
    char *base = (char *)(((uintptr_t)map + HUGE_PAGE - 1) & ~(uintptr_t)(HUGE_PAGE - 1));
    /* Advice only: where THP is off or madvise-less the region stays on
     * small pages and the offsets still vary. */
    (void)madvise(base, len, MADV_HUGEPAGE);
    region *r = &pl->r[pl->n++];
    *r = (region){map, maplen, base, len, NULL};
    return r;
}

void *cph_placer_alloc(cph_placer *pl, size_t bytes) {
    const size_t off = pl->span ? (size_t)(cph_rng_next(&pl->rng) % (pl->span / 64)) * 64 : 0;
    const size_t need = bytes + off;
    if (need < bytes) return NULL;
    region *r = region_for(pl, need ? need : 64);
    if (!r) return NULL;
    r->user = r->base + off;
    return r->user;
}

void cph_placer_release(cph_placer *pl, void *ptr) {
    if (!pl || !ptr) return;
    for (size_t i = 0; i < pl->n; i++)
        if (pl->r[i].user == ptr) {
            pl->r[i].user = NULL;
            return;
        }
}

static void *as_alloc(void *ctx, size_t bytes) { return cph_placer_alloc(ctx, bytes); }
static void as_release(void *ctx, void *ptr, size_t bytes) {
    (void)bytes;
    cph_placer_release(ctx, ptr);
}

cp_allocator cph_placer_allocator(cph_placer *pl) {
    return (cp_allocator){as_alloc, as_release, pl};
}

/* Sums AnonHugePages over the smaps entries that start inside a region. */
void cph_placer_stats_get(const cph_placer *pl, cph_placer_stats *st) {
    memset(st, 0, sizeof *st);
    st->regions = pl->n;
    for (size_t i = 0; i < pl->n; i++) st->mapped_bytes += pl->r[i].len;
    FILE *f = fopen("/proc/self/smaps", "r");
    if (!f) return;
    char line[256];
    int inside = 0;
    while (fgets(line, sizeof line, f)) {
        unsigned long lo, hi;
        if (sscanf(line, "%lx-%lx ", &lo, &hi) == 2 && strchr(line, '-') < strchr(line, ' ')) {
            inside = 0;
            for (size_t i = 0; i < pl->n; i++) {
                const uintptr_t b = (uintptr_t)pl->r[i].map, e = b + pl->r[i].maplen;
                if ((uintptr_t)lo < e && (uintptr_t)hi > b) inside = 1;
            }
            continue;
        }
        unsigned long kb;
        if (inside && sscanf(line, "AnonHugePages: %lu kB", &kb) == 1) st->huge_bytes += kb * 1024;
    }
    fclose(f);
}
