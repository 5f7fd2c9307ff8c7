/* The cache study behind `convpick cache`: does true convolution cost more in
 * cache behaviour than cross-correlation, and does flipping the weights once
 * up front remove that cost?
 *
 * Variants per layer (each checked against the fp64 oracle before anything
 * is measured):
 *   xcorr    cross-correlation, kernel read forwards
 *   flipidx  true convolution reading the kernel reversed inside the loops
 *            (direct_flipidx / blocked_flipidx)
 *   preflip  true convolution by flipping the weights once in prepare(),
 *            then the cross-correlation loops (direct / blocked in CP_CONV)
 * for direct in loop order 0 (n,k,p,q,c,r,s) and 1 (n,k,c,r,s,p,q), for
 * blocked with its portable tile kernel (tile_isa=1, traced) and with the
 * best kernel of the CPU (tile_isa=0, AVX2 here: timed and counted only).
 *
 * Per variant: time (cph_measure, one thread, warm caches), hardware
 * counters when the machine has them, and the simulated caches fed by the
 * traced build of the same source (cache_traced.h) on the first K' output
 * channels of the layer (K' chosen from an access budget). */
#ifndef CONVPICK_CACHE_STUDY_H
#define CONVPICK_CACHE_STUDY_H

#include <stddef.h>
#include <stdint.h>

#include "harness/cache/cachesim.h"
#include "harness/machine/counters.h"
#include "harness/select/layers.h"
#include "harness/measure/stats.h"

/* How a variant computes: cross-correlation, true convolution by reversed
 * indexing, or true convolution on pre-flipped weights. */
typedef enum cph_flip_kind {
    CPH_FLIP_KIND_XCORR = 0,
    CPH_FLIP_KIND_FLIPIDX,
    CPH_FLIP_KIND_PREFLIP
} cph_flip_kind;

typedef struct cph_variant {
    const char *id;        /* "direct.o0.flipidx" */
    const char *algo;      /* registry name of the plain algorithm */
    const cp_algo *traced; /* its traced copy, or NULL (AVX2 kernel: not traceable) */
    cp_flip flip;
    cph_flip_kind kind;
    const char *family;    /* "direct.o0", "direct.o1", "blocked.ref", "blocked.avx2" */
    const char *param;     /* parameter set to param_value ("order" / "tile_isa") */
    int64_t param_value;
} cph_variant;

/* The fixed list of variants. */
size_t cph_variant_count(void);
const cph_variant *cph_variant_at(size_t i);
const cph_variant *cph_variant_find(const char *id);

typedef struct cph_study_opts {
    cph_cache_geom geom[CPH_SIM_MAX_LEVELS];
    int nlevels;
    uint64_t max_accesses;  /* budget per traced run: picks K' */
    int64_t channels;       /* > 0: K' given explicitly */
    int time;               /* 1: time the variants */
    double time_cap;        /* seconds per variant, all rounds together */
    int rounds;             /* interleaved timing rounds per family (>= 1) */
    cp_cache_sizes caches;  /* for the algorithms' default parameters */
    uint64_t seed;
    int use_counters;       /* 1: counters were opened (see counters) */
    cph_counters *counters;
} cph_study_opts;

typedef struct cph_variant_result {
    const cph_variant *v;
    char params[96];          /* "order=1" / "kb=..,tile_isa=1" */
    int supported;
    double rel_err, tolerance;
    int pass;                 /* oracle check of the full layer */
    double diff_vs_preflip;   /* flipidx only: max |y - y_preflip| / mag, else -1 */
    int timed;
    int rounds;               /* timing rounds pooled into time */
    cph_stats time;       /* over the samples of all rounds */
    int have_counters;
    cph_counter_values ctr;
    int simulated;
    double sim_rel_err;       /* traced copy on K' channels against the oracle */
    uint64_t refs, loads, stores;
    cph_sim_counts lv[CPH_SIM_MAX_LEVELS];
    double seconds_sim;
} cph_variant_result;

typedef struct cph_layer_result {
    const cph_layer *layer;
    int64_t k_sim;            /* K' */
    uint64_t outputs_sim;     /* N * K' * P * Q */
    size_t nres;
    cph_variant_result res[16];
} cph_layer_result;

/* Runs every variant whose family is selected (families NULL = all) on one
 * layer.  Returns CP_OK or CP_ENOMEM / CP_EINVAL with a message. */
cp_status cph_study_layer(const cph_study_opts *o, const cph_layer *L,
                          const char *const *families, size_t nfamilies, cph_layer_result *out,
                          char *msg, size_t cap);

/* K' for a layer: explicit, or the largest multiple of 6 (or K) whose
 * estimated traced accesses stay within the budget, at least 1. */
int64_t cph_study_sample_k(const cph_study_opts *o, const cp_shape *s);

/* The result of a variant of the same family with kind xcorr, or NULL. */
const cph_variant_result *cph_study_baseline(const cph_layer_result *r,
                                             const cph_variant_result *v);

#endif
