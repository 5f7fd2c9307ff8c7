/* The row kernel of the depthwise convolution (algos/depthwise.c): one
 * contract, a portable C version always built, ISA versions chosen at run time
 * (the same pattern as blocked_tile.h).
 *
 * One call computes the nrows output rows of one channel:
 *   y[i*q + j] = bias + sum over t < ntap of w[t] * src[t][i*src_step + j]
 * for i < nrows, j < q (taps added in order t = 0, 1, ...).  The caller has
 * already turned stride, dilation and padding into the ntap source pointers:
 * each points into a zero-padded, stride-phase-split copy of the input plane,
 * so every tap reads consecutive floats and the kernel has no branch per
 * element.
 *
 * Reads: the portable kernel reads exactly the floats above; ISA kernels read
 * whole vectors, src[t][i*src_step + 0 .. round_up(q, 8) - 1], which the
 * caller keeps inside its buffer (CPA_DW_PAD floats of slack per row).
 * Writes y[0 .. nrows*q - 1] only.  Pure: never allocates, times or prints. */
#ifndef CPA_DEPTHWISE_ROW_H
#define CPA_DEPTHWISE_ROW_H

#include <stdint.h>

#define CPA_DW_PAD 16 /* readable floats past q: a multiple of every kernel's vector */

typedef struct cpa_dw_row {
    int64_t q;               /* outputs per row (>= 1) */
    int64_t nrows;           /* output rows (>= 1) */
    int64_t src_step;        /* floats between the sources of consecutive rows */
    int ntap;                /* taps R*S (>= 1) */
    const float *const *src; /* ntap sources of row 0 */
    const float *w;          /* ntap weights, in tap order */
    float bias;
    float *y;                /* row i at y + i*q */
} cpa_dw_row;

typedef void (*cpa_dw_row_fn)(const cpa_dw_row *r);

/* Portable C, exact reads. */
void cpa_dw_row_ref(const cpa_dw_row *r);
/* AVX2 + FMA intrinsics (3x3 taps held in registers); call only where the CPU
 * has both. */
void cpa_dw_row_avx2(const cpa_dw_row *r);

/* kernels 1 forces the portable kernel; 0 picks the best the CPU supports. */
cpa_dw_row_fn cpa_dw_row_select(int64_t kernels);

#endif
