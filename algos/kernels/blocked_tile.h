/* The register-tile kernel of the blocked direct convolution: one contract,
 * one portable C version always built, ISA versions chosen at run time.
 *
 * A tile is MR = 6 output channels x up to CPA_BLOCKED_SEGS segments of up to
 * nv output pixels each.  The kernel chosen fixes nv and the segments per
 * tile (cpa_blocked_kernel below):
 *   AVX2     6 x (2 x 8):  12 YMM accumulators of 16 registers, leaving two
 *            for input vectors and one for a broadcast weight;
 *   AVX-512  6 x (4 x 16): 24 ZMM accumulators of 32, four input vectors and
 *            the weights as embedded broadcasts.  Per channel and tap: 4 vector
 *            loads + 6 broadcasts for 24 FMAs (a 14x32 tile needs 2 + 14 for 28),
 *            and the weight packing stays the 6-channel panels of the AVX2 tile.
 * A segment is a run of lanes of one "virtual row": lane j of segment v reads
 * input x[v][c*x_cs + tap_off[t] + j]; only the lanes whose bit is set in
 * keep[v] are outputs, written compressed: the i-th kept lane goes to
 * y[v][kk*y_ks + i].  So a run over rows of a padded plane (row length wrow,
 * Q valid outputs each) skips the wrow - Q padding lanes of each row and the
 * outputs land densely in the P x Q plane; a plain segment is keep = 2^n - 1.
 *
 * For kept lane j (rank i) of segment v and channel kk < nk the kernel sets
 *   acc = (first ? (bias ? bias[kk] : 0) : y[v][kk*y_ks + i])
 *         + sum over c < nc, t < ntap of
 *             x[v][c*x_cs + tap_off[t] + j] * w[c*ntap*MR + t*w_step + kk]
 *   y[v][kk*y_ks + i] = acc
 * and writes nothing else.  w holds MR channels interleaved (channels >= nk
 * are zero padding), the order the packing in blocked.c produces; w_step = MR
 * walks a channel's taps forward, w_step = -MR (with w at the last tap of
 * channel 0) walks them in reverse: true convolution by flipped indexing.
 *
 * Reads: the portable and AVX-512 kernels read x only for kept lanes (masked
 * loads); the AVX2 kernel reads all 8 floats of segments 0 and 1 (keep == 0
 * included), so the caller gives x[v] = x[0] for an empty segment and calls the
 * portable kernel when those full reads would leave the input buffer
 * (`full_reads` below).  The AVX2 kernel takes keep = 2^n - 1 only (it has no
 * compress); `masks` says which kernels take any mask.
 * Kernels never allocate, time or print; they are pure functions of *t. */
#ifndef CPA_BLOCKED_UKR_H
#define CPA_BLOCKED_UKR_H

#include <stdint.h>

#define CPA_BLOCKED_MR 6    /* output channels per tile */
#define CPA_BLOCKED_NV 8    /* pixels per segment of the AVX2 and portable tiles */
#define CPA_BLOCKED_SEGS 4  /* most segments per tile (AVX-512: 4 x 16) */
#define CPA_BLOCKED_NV_MAX 16

typedef struct cpa_blocked_tile {
    int64_t nc;             /* input channels to reduce over (>= 1) */
    int64_t ntap;           /* kernel taps R*S (>= 1) */
    int64_t x_cs;           /* floats between consecutive input channels */
    const int64_t *tap_off; /* ntap offsets (floats) of each tap from a pixel's base */
    const float *x[CPA_BLOCKED_SEGS]; /* base of lane 0 of each segment, channel 0 */
    const float *w;         /* packed weights of channel 0, tap 0 (see w_step) */
    int64_t w_step;         /* floats between the weights of taps t and t+1: MR or -MR */
    float *y[CPA_BLOCKED_SEGS]; /* output of the first kept lane of each segment */
    int64_t y_ks;           /* floats between consecutive output channels */
    const float *bias;      /* nk values or NULL; read only when first */
    uint32_t keep[CPA_BLOCKED_SEGS]; /* kept lanes of each segment (bit j: lane j) */
    int nk;                 /* valid output channels, 1..MR */
    int first;              /* 1: start from bias (or 0); 0: add onto y */
} cpa_blocked_tile;

typedef void (*cpa_blocked_tile_fn)(const cpa_blocked_tile *t);

/* The tile kernels.  ref: portable C, exact reads, any nv <= 16, any keep,
 * always available.  avx2: AVX2 + FMA, nv 8, 2 segments.  avx512: AVX-512F,
 * nv 16, 4 segments; each only where the CPU (and OS) has the ISA. */
void cpa_blocked_tile_ref_6x16(const cpa_blocked_tile *t);
void cpa_blocked_tile_avx2_6x16(const cpa_blocked_tile *t);
void cpa_blocked_tile_avx512_6x64(const cpa_blocked_tile *t);

/* The channel-vector tile, for small planes (7x7, or 14x14 read through
 * 16-float padded rows), where the pixel-vector tile above would compute many
 * lanes only to drop them (49 outputs in 64 lanes): CPA_CV_KR = 64 output
 * channels along the vectors (4 ZMM) x np <= CPA_CV_NP = 7 output pixels of
 * one row, broadcast; 28 accumulators.  For pixel j < np and channel kk < nk:
 *   acc = (first ? (bias ? bias[kk] : 0) : y[kk*y_ks + j])
 *         + sum over c < nc, t < ntap of
 *             x[c*x_cs + tap_off[t] + j] * w[c*ntap*KR + t*w_step + kk]
 *   y[kk*y_ks + j] = acc
 * w holds KR channels interleaved, [c][tap][KR] (channels >= nk zero); w_step
 * = KR, or -KR from the last tap for flipped indexing (as above).  Reads x for
 * pixels j < np only, writes y for (kk < nk, j < np) only; (KR-1) * y_ks must
 * fit in an int32 (the stores are scatters with 32-bit indices). */
#define CPA_CV_KR 64
#define CPA_CV_NP 7

typedef struct cpa_cv_tile {
    int64_t nc, ntap, x_cs;
    const int64_t *tap_off;
    const float *x;   /* pixel 0, channel 0 */
    const float *w;   /* packed weights of channel 0, tap 0 (see w_step) */
    int64_t w_step;   /* KR or -KR */
    float *y;         /* channel 0, pixel 0 */
    int64_t y_ks;     /* floats between consecutive output channels */
    const float *bias; /* nk values or NULL; read only when first */
    int np;           /* pixels, 1..CPA_CV_NP */
    int nk;           /* valid output channels, 1..CPA_CV_KR */
    int first;
} cpa_cv_tile;

typedef void (*cpa_cv_tile_fn)(const cpa_cv_tile *t);

/* ref: portable C, always built (the contract's executable statement, and
 * what tests hold the AVX-512 one against); avx512: AVX-512F. */
void cpa_cv_tile_ref_64x7(const cpa_cv_tile *t);
void cpa_cv_tile_avx512_64x7(const cpa_cv_tile *t);

/* Instruction-set levels, the values of the tile_isa / kernels parameters. */
enum { CPA_ISA_BEST = 0, CPA_ISA_PORTABLE = 1, CPA_ISA_AVX2 = 2, CPA_ISA_AVX512 = 3 };

/* The widest level the running CPU and OS support (cpuid + xgetbv). */
int cpa_isa_best(void);
/* The level a request runs at: CPA_ISA_BEST -> cpa_isa_best(); a forced
 * level the CPU lacks falls to the widest below it that it has. */
int cpa_isa_resolve(int64_t request);
/* "portable", "avx2" or "avx512". */
const char *cpa_isa_name(int level);

/* A tile kernel and its shape. */
typedef struct cpa_blocked_kernel {
    cpa_blocked_tile_fn fn;
    int nv;         /* lanes per segment */
    int nseg;       /* segments per tile */
    int full_reads; /* 1: reads all nv floats of segments 0..nseg-1 */
    int masks;      /* 1: takes any keep mask (compressed outputs) */
    int isa;        /* CPA_ISA_* it runs at */
    cpa_cv_tile_fn cv; /* channel-vector tile for small planes, or NULL (only
                          16-lane vectors lose enough lanes there to need it) */
} cpa_blocked_kernel;

/* The kernel for a tile_isa request (CPA_ISA_*), resolved as above. */
cpa_blocked_kernel cpa_blocked_tile_select(int64_t tile_isa);

#endif
