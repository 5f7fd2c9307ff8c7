/* The inner loops of winograd_2x2_3x3's input and output transforms, kept
 * apart from the blocking and tiling loops so that they can be compiled three
 * times from the same source (winograd_kernels_body.h): portable
 * (winograd_kernels_ref.c), AVX2 + FMA (winograd_kernels_avx2.c, 8 floats a
 * vector) and AVX-512 (winograd_kernels_avx512.c, 16 floats a vector).
 * cpa_wino_kernels_select() picks one from the CPU's features at run time, so
 * a binary built for any x86-64 never executes an instruction its CPU lacks.  Each loop runs over tiles (or input columns) innermost with
 * unit-stride reads or writes and no branches, which the compiler vectorises. */
#ifndef CPA_WINOGRAD_KERNELS_H
#define CPA_WINOGRAD_KERNELS_H

#include <stdint.h>

typedef struct cpa_wino_kernels {
    /* B^T on four input rows, in place, for len columns:
     * (r0, r1, r2, r3) <- (r0 - r2, r1 + r2, r2 - r1, r1 - r3). */
    void (*in_rows)(float *restrict r0, float *restrict r1, float *restrict r2,
                    float *restrict r3, int64_t len);
    /* B on the columns of nt tiles of one row r (tile t covers r[2t .. 2t+3]):
     * v0[t] = r[2t] - r[2t+2], v1[t] = r[2t+1] + r[2t+2],
     * v2[t] = r[2t+2] - r[2t+1], v3[t] = r[2t+1] - r[2t+3]. */
    void (*in_cols)(const float *restrict r, float *restrict v0, float *restrict v1,
                    float *restrict v2, float *restrict v3, int64_t nt);
    /* Y = A^T M A + bias for nt full tiles: M[xi] of tile t at m[xi*mstride + t];
     * writes o0[2t], o0[2t+1] (first output row) and o1[2t], o1[2t+1]. */
    void (*out_2rows)(const float *restrict m, int64_t mstride, float bias, float *restrict o0,
                      float *restrict o1, int64_t nt);
    /* The same, first output row only (the last tile row when P is odd). */
    void (*out_1row)(const float *restrict m, int64_t mstride, float bias, float *restrict o0,
                     int64_t nt);
} cpa_wino_kernels;

extern const cpa_wino_kernels cpa_wino_kernels_ref;
extern const cpa_wino_kernels cpa_wino_kernels_avx2;
extern const cpa_wino_kernels cpa_wino_kernels_avx512;

/* The set for a level request (CPA_ISA_* of blocked_tile.h: 0 the widest the
 * CPU has, 1 portable, 2 AVX2, 3 AVX-512; a level the CPU lacks gives the
 * widest below it). */
const cpa_wino_kernels *cpa_wino_kernels_select(int64_t request);

#endif
