/* A trace-driven data-cache simulator for the cache study (convpick cache).
 *
 * Model: up to CPH_SIM_MAX_LEVELS levels, each set-associative with true LRU
 * replacement.  An access touches every line of [addr, addr+bytes); for each
 * line the levels are looked up from L1 outwards until one hits; the line is
 * then filled into every level that missed (write-allocate: a store misses and
 * fills exactly like a load).  Evictions are silent: no write-back traffic,
 * no back-invalidation of inner levels, so the levels are neither inclusive
 * nor exclusive (the model cachegrind uses for its two levels).  No
 * prefetching, no TLB, one core.
 *
 * Set of a line: (addr / line) mod sets, sets = size / (line * ways).
 *
 * Geometry syntax (ours), one level per comma-separated item, L1 first:
 *   NAME=SIZE:WAYS:LINE
 * NAME is any label of up to 7 characters (L1, L2, LLC...); SIZE is bytes
 * with an optional K, M or G suffix (powers of two: 32K = 32768); WAYS is an
 * integer >= 1 or "full" (one set); LINE is a power of two in bytes.  SIZE
 * must be a multiple of WAYS * LINE.  Example:
 *   L1=32K:8:64,L2=512K:8:64,L3=32M:16:64 */
#ifndef CONVPICK_CACHESIM_H
#define CONVPICK_CACHESIM_H

#include <stddef.h>
#include <stdint.h>

#include "convpick/status.h"

#define CPH_SIM_MAX_LEVELS 4

typedef struct cph_cache_geom {
    char name[8];
    size_t size, line;
    int64_t ways;  /* ways per set (size / line for "full") */
} cph_cache_geom;

typedef struct cph_sim_counts {
    uint64_t accesses, misses;           /* lines looked up at this level / not found */
    uint64_t read_accesses, read_misses; /* the loads among them */
} cph_sim_counts;

typedef struct cph_sim_level {
    cph_cache_geom g;
    uint64_t sets, line_shift, set_mask; /* set_mask != 0: sets is a power of two */
    uint64_t *tags;   /* sets * ways line numbers + 1 (0 = empty), MRU first */
    cph_sim_counts c;
} cph_sim_level;

typedef struct cph_cachesim {
    int nlevels;
    cph_sim_level lv[CPH_SIM_MAX_LEVELS];
    uint64_t refs;    /* accesses given to cph_sim_access (loads + stores) */
    uint64_t loads, stores;
} cph_cachesim;

/* Parses a geometry (syntax above) into g[0..*n).  Errors name the item and
 * the field at fault, prefixed by ctx (e.g. "--cache-geometry"). */
cp_status cph_geom_parse(const char *spec, const char *ctx, cph_cache_geom *g, int *n,
                         char *msg, size_t cap);
/* Checks one level (sizes, powers of two, divisibility). */
cp_status cph_geom_check(const cph_cache_geom *g, char *msg, size_t cap);
/* "L1=32K:8:64,L2=..." (like snprintf). */
int cph_geom_format(const cph_cache_geom *g, int n, char *buf, size_t cap);

/* Allocates an empty (cold) simulator.  CP_EINVAL for a bad geometry,
 * CP_ENOMEM. */
cp_status cph_sim_init(cph_cachesim *s, const cph_cache_geom *g, int n, char *msg, size_t cap);
/* Empties every level and zeroes the counts. */
void cph_sim_reset(cph_cachesim *s);
void cph_sim_free(cph_cachesim *s);

/* One load (is_store 0) or store of `bytes` bytes at addr. */
void cph_sim_access(cph_cachesim *s, uintptr_t addr, size_t bytes, int is_store);

#endif
