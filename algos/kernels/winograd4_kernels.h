/* The transform loops of winograd_4x4_3x3 (F(4x4,3x3), alpha = 6), compiled
 * from one source (winograd4_kernels_body.h): portable
 * (winograd4_kernels_ref.c), AVX2 + FMA (winograd4_kernels_avx2.c) and, with
 * hand-vectorised column and output transforms, AVX-512
 * (winograd4_kernels_avx512.c); one chosen at run time by
 * cpa_wino4_kernels_select().  Each loop runs over
 * tiles (or input columns) innermost with no branches, which the compiler
 * vectorises.  Matrices: Lavin & Gray 2016, interpolation points 0, 1, -1, 2,
 * -2 and infinity (listed in algos/winograd_4x4_3x3.c). */
#ifndef CPA_WINOGRAD4_KERNELS_H
#define CPA_WINOGRAD4_KERNELS_H

#include <stdint.h>

typedef struct cpa_wino4_kernels {
    /* B^T on six input rows r + i*len (i = 0..5), in place, for len columns. */
    void (*in_rows)(float *restrict r, int64_t len);
    /* B on the columns of nt tiles of one row r (tile t covers r[4t .. 4t+5]):
     * v[j*vs + t] = (B^T row j) . r[4t .. 4t+5] for j = 0..5. */
    void (*in_cols)(const float *restrict r, float *restrict v, int64_t vs, int64_t nt);
    /* Y = A^T M A + bias for nt full tiles: M[xi] of tile t at m[xi*ms + t]
     * (xi = 6i + j); writes o[i*ldo + 4t + c] for i, c < 4. */
    void (*out_tiles)(const float *restrict m, int64_t ms, float bias, float *restrict o,
                      int64_t ldo, int64_t nt);
} cpa_wino4_kernels;

extern const cpa_wino4_kernels cpa_wino4_kernels_ref;
extern const cpa_wino4_kernels cpa_wino4_kernels_avx2;
/* AVX-512F, written with intrinsics: in_rows 16 columns a step, in_cols and
 * out_tiles 16 tiles a step (4-way deinterleave / interleave by permutes),
 * partial blocks masked. */
extern const cpa_wino4_kernels cpa_wino4_kernels_avx512;

/* The set for a CPA_ISA_* request (kernels/blocked_tile.h), resolved by
 * cpa_isa_resolve: a level the CPU lacks runs the widest below it. */
const cpa_wino4_kernels *cpa_wino4_kernels_select(int64_t isa);

#endif
