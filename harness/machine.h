/* The machine: topology from hwloc, ISA from cpuid, BLAS and build facts, and
 * the roofs measured on the spot.  Everything the tuner knows of the hardware
 * comes from here; the algorithms only ever see the cp_cache_sizes derived
 * from it. */
#ifndef CONVPICK_MACHINE_H
#define CONVPICK_MACHINE_H

#include <stddef.h>
#include <stdint.h>

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
 *   "pack:1 [numa(8GB)] l3:1(32MB) l2:4(512KB) l1d:1(32KB) core:1 pu:2"
 * in which case the ISA fields still come from cpuid but caches, counts and
 * memory come from the description. */
cp_status cph_machine_detect(cph_machine *m, const char *synthetic, char *msg, size_t cap);
void cph_machine_free(cph_machine *m);

/* L1d / L2 / L3 sizes and line size for the algorithms' defaults (the cache
 * sizes of the levels present; missing levels are taken from the fallback). */
cp_cache_sizes cph_machine_caches(const cph_machine *m);
/* Size of the last-level cache (bytes), all instances together. */
size_t cph_machine_llc_total(const cph_machine *m);

/* Roofs measured on the spot. */
typedef struct cph_roofs {
    double peak_1core_gflops;    /* FP32 FMA peak, one core */
    double peak_all_gflops;      /* all physical cores */
    double bw_1core_gbs;         /* triad-style stream bandwidth, one core, GB/s (1e9) */
    double bw_all_gbs;           /* all physical cores */
    double ridge_1core;          /* FLOP/byte: peak / bandwidth */
    double ridge_all;
    int cores_used;
} cph_roofs;

/* Measures the roofs, about `seconds` in total. */
cp_status cph_roofs_measure(const cph_machine *m, double seconds, cph_roofs *out, char *msg,
                            size_t cap);

#endif
