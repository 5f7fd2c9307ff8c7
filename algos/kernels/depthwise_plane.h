/* In-place plane kernels of the depthwise convolution (algos/depthwise.c):
 * they read the caller's UNPADDED input plane directly, with no copy into a
 * padded or phase-split buffer.  Out-of-image taps are masked lanes (masked
 * loads return zero there) or, for whole rows above or below the image, a
 * row of zeros the caller provides.  A plan, built once per call from the
 * shape (portable C, depthwise_plane.c), holds everything that does not
 * depend on the channel.
 *
 * Two forms:
 *  - FLAT (stride 1, Q == W, i.e. 'same' width: pad_left + pad_right ==
 *    (S-1) dil_w; P*Q <= CPA_DWP_FLAT_MAX, R*S <= CPA_DWP_FLAT_TAPS): the
 *    output plane is one flat run f = p*Q + q of 16-float vectors.  Tap
 *    (r, c) reads x[f + off[t]] with off[t] = (r dil_h - pt) W + c dil_w - pl
 *    -- one shifted load per tap and vector -- masked by the lanes whose
 *    input row and column lie in the image (mask[t][v], precomputed).
 *  - ROWS (stride_w 1 or 2, any stride_h, padding, dilation; S <=
 *    CPA_DWP_ROWS_S, sw*Q <= 16 CPA_DWP_ROWS_VECS): output row by
 *    output row, 16 "virtual columns" u = sw*q + e per vector; tap (r, c)
 *    reads input row p*sh - pt + r*dil_h (or the zero row), columns
 *    u - pl + c*dil_w, masked only in vectors that touch the left or right
 *    border (masks precomputed per vector and tap column).  Under stride_w
 *    2 the even virtual columns are the outputs (two vectors are combined
 *    into 16 outputs with one permute): the odd ones are computed and
 *    dropped, trading FMAs for the deinterleaving copy -- except for 3x3
 *    stride 2x2 without dilation, which deinterleaves each input row in
 *    registers (two loads, two permutes and a lane shift per 16 outputs).
 *
 * Result: y[p*Q + q] = bias + sum over taps of w[t] * x(in-image input), taps
 * in order t = 0, 1, ..., fused multiply-adds, out-of-image taps adding w*0.
 * Reads: masked lanes may lie outside the plane (never faulting: masked
 * lanes of AVX-512 loads are suppressed); unmasked lanes lie inside it.
 * Writes y[0 .. P*Q - 1] only.  Pure: never allocates, times or prints. */
#ifndef CPA_DEPTHWISE_PLANE_H
#define CPA_DEPTHWISE_PLANE_H

#include <stdint.h>

#include "convpick/algo.h"

enum { CPA_DWP_NONE = 0, CPA_DWP_FLAT = 1, CPA_DWP_ROWS = 2 };
enum { CPA_DWP_FLAT_MAX = 256, CPA_DWP_FLAT_TAPS = 25, CPA_DWP_FLAT_VECS = CPA_DWP_FLAT_MAX / 16 };
/* ROWS: vectors of virtual columns per row (ceil(sw Q / 16)) and kernel
 * columns S at most */
enum { CPA_DWP_ROWS_VECS = 64, CPA_DWP_ROWS_S = 16 };

typedef struct cpa_dw_plan {
    int kind; /* CPA_DWP_* */
    int64_t h, w, p, q, sh, sw, pt, pl, dh, dw, r, s;
    /* FLAT */
    int nv;                                             /* ceil(P*Q / 16) */
    int64_t off[CPA_DWP_FLAT_TAPS];                     /* tap t reads x + f + off[t] */
    uint16_t mask[CPA_DWP_FLAT_TAPS][CPA_DWP_FLAT_VECS]; /* in-image lanes per tap, vector */
    uint16_t smask[CPA_DWP_FLAT_VECS];                  /* output lanes per vector */
    /* ROWS: lanes of the vector of virtual columns 16 i .. 16 i + 15 whose
     * tap column c reads inside the image */
    uint16_t cmask[CPA_DWP_ROWS_VECS][CPA_DWP_ROWS_S];
    /* ROWS under stride_w 2: chunk k of 16 outputs reads input columns
     * b .. b + 32 with b = 32 k - pl, as three loads (16, 16 and 1 floats);
     * dmask[k][j]: their lanes inside the image */
    uint16_t dmask[CPA_DWP_ROWS_VECS][3];
} cpa_dw_plan;

typedef struct cpa_dw_plane {
    const cpa_dw_plan *plan;
    const float *x;    /* input plane, H x W */
    const float *zero; /* W zero floats (ROWS: rows above / below the image) */
    const float *w;    /* R*S weights, row-major (already flipped for CP_CONV) */
    float bias;
    float *y;          /* output plane, P x Q */
} cpa_dw_plane;

typedef void (*cpa_dw_plane_fn)(const cpa_dw_plane *a);

/* The nin = (no - 1) sh + 3 input rows of the block of no output rows from
 * p0 of a 3x3, row-dilation-1 ROWS kernel, each minus pl (tap column c of
 * virtual column u then reads rows[i][u + c dil_w]): input row p0 sh - pt + i,
 * or the zero row when it lies outside the image or no stored output row
 * (p0 + o < P) reads it -- the first that does is o = ceil((i - 2) / sh). */
static inline void cpa_dw_block_rows(const cpa_dw_plane *a, int64_t p0, int sh, int nin,
                                     const float **rows) {
    const cpa_dw_plan *pl = a->plan;
    for (int i = 0; i < nin; i++) {
        const int64_t ih = p0 * sh - pl->pt + i, omin = i <= 2 ? 0 : (i - 2 + sh - 1) / sh;
        rows[i] = (p0 + omin < pl->p && ih >= 0 && ih < pl->h ? a->x + ih * pl->w : a->zero) -
                  pl->pl;
    }
}

/* 1 when the FLAT / ROWS form can run shape s (depthwise: groups == c). */
int cpa_dw_plan_flat_ok(const cp_shape *s);
int cpa_dw_plan_rows_ok(const cp_shape *s);

/* Fills *pl for form kind (CPA_DWP_FLAT or _ROWS; it must be ok for s). */
void cpa_dw_plan_build(const cp_shape *s, int kind, cpa_dw_plan *pl);

/* AVX-512F: both forms (by plan->kind), every shape they are ok for.  Only
 * where the CPU and OS have it. */
void cpa_dw_plane_avx512(const cpa_dw_plane *a);
/* AVX2 + FMA: the ROWS form for 3x3 kernels with row dilation 1 and strides
 * of 1 or 2 only (cpa_dw_plane_avx2_ok says which); only where the CPU has
 * AVX2 and FMA. */
void cpa_dw_plane_avx2(const cpa_dw_plane *a);
int cpa_dw_plane_avx2_ok(const cp_shape *s, int kind);

#endif
