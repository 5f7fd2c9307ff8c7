/* The machine: topology from hwloc, ISA from cpuid, BLAS and build facts, and
 * the roofs measured on the spot.  Everything the tuner knows of the hardware
 * comes from here; the algorithms only ever see the cp_cache_sizes derived
 * from it. */
#ifndef CONVPICK_MACHINE_H
#define CONVPICK_MACHINE_H

#include <stddef.h>
#include <stdint.h>

#include <jansson.h>

#include "convpick/convpick.h"

#define CPH_MAX_CACHES 8

typedef struct cph_cache_level {
    int level;          /* 1, 2, 3 ... */
    char kind[12];      /* "data", "unified" (instruction caches are not listed) */
    size_t size;        /* bytes, per instance */
    size_t line;        /* bytes */
    int assoc;          /* ways; 0 = unknown, -1 = fully associative */
    int instances;      /* how many of this cache the machine has */
    int cores_sharing;  /* physical cores under one instance */
} cph_cache_level;

typedef struct cph_machine {
    char vendor[32];        /* "AuthenticAMD" */
    char model[96];         /* cpuid brand string */
    int family, model_id, stepping;
    int packages, numa_nodes, cores, pus;  /* cores = physical cores */
    size_t memory_bytes;    /* total memory hwloc reports */
    cph_cache_level caches[CPH_MAX_CACHES];
    int ncaches;            /* data/unified levels, L1 first */
    /* ISA features from cpuid (and OS support via xgetbv). */
    int sse42, avx, avx2, fma, avx512f, avx512bw, avx512vl, avx512dq, avx512_vnni, avx512_bf16;
    char blas_version[64];  /* openblas_get_config() */
    char blas_core[32];     /* openblas_get_corename() */
    char compiler[64];      /* of this binary */
    char build_flags[160];
    char fingerprint[17];   /* cp_device_fingerprint(): 16 hex digits */
    int synthetic;          /* 1 when built from a synthetic topology description */
    void *topology;         /* hwloc_topology_t, owned */
} cph_machine;

/* Detects the running machine.  synthetic != NULL builds the topology from an
 * hwloc synthetic description instead (tests: an invented machine), e.g.
 *   "pack:1 [numa(memory=8GiB)] l3:1(size=32MiB) l2:4(size=512KiB) l1d:1(size=32KiB) core:1 pu:2"
 * (hwloc's syntax: sizes need "size=" / "memory=", KiB/MiB/GiB are powers of
 * two, KB/MB/GB powers of ten; line size is 64 and associativity unknown) in
 * which case the ISA fields and the fingerprint still come from cpuid but
 * caches, counts and memory come from the description.  Errors: CP_EINVAL
 * (description rejected by hwloc), CP_ENOMEM. */
cp_status cph_machine_detect(cph_machine *m, const char *synthetic, char *msg, size_t cap);
void cph_machine_free(cph_machine *m);

/* The cache of that level (data or unified), or NULL. */
const cph_cache_level *cph_machine_cache(const cph_machine *m, int level);

/* L1d / L2 / L3 sizes and line size for the algorithms' defaults (the cache
 * sizes of the levels present; missing levels are taken from the fallback). */
cp_cache_sizes cph_machine_caches(const cph_machine *m);
/* Size of the last-level cache (bytes), all instances together. */
size_t cph_machine_llc_total(const cph_machine *m);

/* The FMA peak of one vector width. */
typedef struct cph_roof_width {
    int bits;                    /* 512, 256; 0 = the portable scalar loop */
    const char *isa;             /* "avx512f", "avx2_fma", "portable" */
    double peak_1core_gflops;
    double peak_all_gflops;
} cph_roof_width;

#define CPH_ROOF_MAX_WIDTHS 2

/* Roofs measured on the spot.  The device's roof is the FMA peak of the
 * widest vector the CPU and the OS support (peak_*_gflops below, what every
 * "% of peak" is against); widths[] holds every width measured, widest first. */
typedef struct cph_roofs {
    double peak_1core_gflops;    /* the device roof: FP32 FMA peak of the widest width, one core */
    double peak_all_gflops;      /* the same on all physical cores */
    double bw_1core_gbs;         /* triad-style stream bandwidth, one core, GB/s (1e9) */
    double bw_all_gbs;           /* all physical cores */
    /* The same triad on arrays that stay in each core's L2 (3 arrays of L2/6
     * per core) and in L3 but not L2 (4x L2 per core, at most half of L3);
     * 0 when the level is unknown or L3 is too small to hold such arrays.
     * What bounds a layer whose tensors fit a cache (bench's roof line). */
    double bw_l2_1core_gbs, bw_l2_all_gbs;
    double bw_l3_1core_gbs, bw_l3_all_gbs;
    size_t l2_triad_bytes, l3_triad_bytes; /* bytes of one array, one core */
    double ridge_1core;          /* FLOP/byte: peak / bandwidth */
    double ridge_all;
    int cores_used;
    int portable_peak;           /* 1: no vector FMA loop could run here */
    int roof_bits;               /* width of the device roof: 512, 256 or 0 (portable) */
    int nwidths;
    cph_roof_width widths[CPH_ROOF_MAX_WIDTHS];
    double ratio_512_256;        /* 1-core 512-bit peak / 256-bit peak; 0 unless both ran */
    int pinned;                  /* 1: the all-core workers were pinned */
    size_t triad_bytes;          /* bytes of one triad array */
    double seconds_spent;
} cph_roofs;

/* The device object every format embeds (machine_json.c; spelled as
 * docs/table-format.md, "Shared objects", says); a new reference the caller
 * owns (NULL on failure). */
json_t *cph_device_json(const cph_machine *m);
/* The same plus what probe and the reports add: "algorithm_caches",
 * "llc_total_bytes" and "roofs" (null when not given). */
json_t *cph_machine_to_json(const cph_machine *m, const cph_roofs *roofs);

/* The "roofs" object of probe's JSON and of bench results: the device roof,
 * every width, the 512/256 ratio, bandwidth and ridge (a new reference). */
json_t *cph_roofs_json(const cph_roofs *r);
/* Adds the L2 and L3 bandwidths (null when not measured) to roofs object o. */
void cph_roofs_levels_json(const cph_roofs *r, json_t *o);
/* The "widths" array alone (bench results embed it in their own roofs). */
json_t *cph_roofs_widths_json(const cph_roofs *r);

/* Measures the roofs, about `seconds` in total (at least a few runs of each
 * kernel whatever the budget).  Peak: best of several timed runs of an FP32
 * FMA loop per vector width the CPU and the OS support (cpuid + xgetbv, not
 * the compiler's flags): 16 independent 512-bit chains with AVX-512F, 12
 * 256-bit chains with AVX2 + FMA (FLOPs = 2 per lane per FMA); a portable loop
 * when neither runs (roofs->portable_peak = 1).
 * Bandwidth: best of several passes of the triad a[i] = b[i] + s*c[i] over
 * float arrays of at least 4x the last-level cache each, counted as STREAM
 * counts it: 12 bytes per element (read b, read c, write a), the
 * write-allocate read of a[] not counted (the bus carries about 4/3 of that).
 * The L2 and L3 bandwidths run the same triad on arrays sized for that level.
 * All-core figures run one pinned worker per physical core through the pool.
 * CP_EINVAL for a synthetic machine (there is nothing to measure). */
cp_status cph_roofs_measure(const cph_machine *m, double seconds, cph_roofs *out, char *msg,
                            size_t cap);

#endif
