/* The register-tile kernel of the blocked direct convolution: one contract,
 * one portable C version always built, ISA versions chosen at run time.
 *
 * A tile is MR = 6 output channels x 2 segments of up to NV = 8 output pixels
 * each (12 accumulators of 8 floats: sized for 16 vector registers, leaving
 * two for input vectors and one for a broadcast weight).  A segment is a run
 * of consecutive output pixels of one output row; the two segments of a tile
 * may lie in different rows, so that short rows (Q = 7, 14, 28) still fill the
 * tile.
 *
 * For segment v in {0, 1}, pixel j < n[v] and channel kk < nk the kernel sets
 *   acc = (first ? (bias ? bias[kk] : 0) : y[v][kk*y_ks + j])
 *         + sum over c < nc, t < ntap of
 *             x[v][c*x_cs + tap_off[t] + j] * w[c*ntap*MR + t*w_step + kk]
 *   y[v][kk*y_ks + j] = acc
 * and writes nothing else.  w holds MR channels interleaved (channels >= nk
 * are zero padding), which is the order the packing in blocked.c produces;
 * w_step = MR walks a channel's taps forward, w_step = -MR (with w at the
 * last tap of channel 0) walks them in reverse: true convolution by flipped
 * indexing on unflipped weights.
 *
 * Reads: the portable kernel reads x only for j < n[v]; ISA kernels read all
 * NV floats x[v][c*x_cs + tap_off[t] + 0..NV-1] for every segment (n[v] == 0
 * included), so the caller gives x[1] = x[0] for an empty segment and calls
 * the portable kernel when those full reads would leave the input buffer.
 * Kernels never allocate, time or print; they are pure functions of *t. */
#ifndef CPA_BLOCKED_UKR_H
#define CPA_BLOCKED_UKR_H

#include <stdint.h>

#define CPA_BLOCKED_MR 6 /* output channels per tile */
#define CPA_BLOCKED_NV 8 /* output pixels per segment (one 8-float vector) */

typedef struct cpa_blocked_tile {
    int64_t nc;             /* input channels to reduce over (>= 1) */
    int64_t ntap;           /* kernel taps R*S (>= 1) */
    int64_t x_cs;           /* floats between consecutive input channels */
    const int64_t *tap_off; /* ntap offsets (floats) of each tap from a pixel's base */
    const float *x[2];      /* base of pixel 0 of each segment, channel 0 */
    const float *w;         /* packed weights of channel 0, tap 0 (see w_step) */
    int64_t w_step;         /* floats between the weights of taps t and t+1: MR or -MR */
    float *y[2];            /* output of pixel 0 of each segment, channel 0 */
    int64_t y_ks;           /* floats between consecutive output channels */
    const float *bias;      /* nk values or NULL; read only when first */
    int n[2];               /* valid pixels of each segment, 0..NV (n[0] >= 1) */
    int nk;                 /* valid output channels, 1..MR */
    int first;              /* 1: start from bias (or 0); 0: add onto y */
} cpa_blocked_tile;

typedef void (*cpa_blocked_tile_fn)(const cpa_blocked_tile *t);

/* Portable C, exact reads (always available). */
void cpa_blocked_tile_ref_6x16(const cpa_blocked_tile *t);
/* AVX2 + FMA intrinsics; call only where the CPU has both. */
void cpa_blocked_tile_avx2_6x16(const cpa_blocked_tile *t);

/* The kernel to use: tile_isa 1 forces the portable one; 0 picks the best the
 * running CPU supports.  *full_reads is set to 1 when the chosen kernel reads
 * full NV-float vectors (see above). */
cpa_blocked_tile_fn cpa_blocked_tile_select(int64_t tile_isa, int *full_reads);

#endif
