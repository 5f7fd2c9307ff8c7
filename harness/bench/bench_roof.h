/* The roof that bounds a layer (bench's roof line under depthwise rows): the
 * bytes the layer must move at least -- input, output and weights once each,
 * from the shape alone -- against the bandwidth of the level its working set
 * fits in (L2, L3, else memory: the triad roofs of harness/machine), and its
 * direct-equivalent FLOPs against the FMA peak.  The slower of the two is the
 * bounding roof.  Shape arithmetic only: no convolution is computed here. */
#ifndef CPH_BENCH_ROOF_H
#define CPH_BENCH_ROOF_H

#include "convpick/algo.h"
#include "harness/machine/machine.h"

typedef struct cph_layer_roof {
    double bytes;       /* 4 (N C H W + N K P Q + K C/g R S + K) */
    const char *level;  /* where the working set sits: "L2", "L3" or "memory" */
    double gbs;         /* that level's triad bandwidth for the thread count */
    double mem_s;       /* bytes / gbs */
    double peak_gflops; /* the FMA peak for the thread count */
    double fma_s;       /* FLOPs / peak */
    const char *bound;  /* "memory" (the level's bandwidth) or "FMA" */
} cph_layer_roof;

/* The roofs of layer s run on `threads` threads (all-core figures when
 * threads == roofs->cores_used, else one core's times threads; caches from
 * the machine).  Returns 0 when the bandwidth of the level is unknown. */
int cph_layer_roof_of(const cph_roofs *roofs, const cp_cache_sizes *caches, const cp_shape *s,
                      int threads, cph_layer_roof *out);

#endif
