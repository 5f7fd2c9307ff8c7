/* The kernels of the depthwise convolution (algos/depthwise.c): one contract,
 * a portable C version always built, ISA versions chosen at run time (the
 * same pattern and CPA_ISA_* levels as blocked_tile.h).
 *
 * Layout the caller builds per input plane ("phase planes"): the plane, zero
 * padded to Hp x Wp, is split by stride into sh*sw phase planes; padded
 * element (u, v) lives in phase plane (u mod sh)*sw + (v mod sw), at row
 * u div sh and column v div sw of a row-major grid with row length ld =
 * ceil(Wp / sw), `plane` floats apart.  Tap (r, s) of output (p, j) then reads
 * row p + (r*dh div sh), column j + (s*dw div sw) of one phase plane: every
 * tap is one unit-stride stream, for any stride and dilation.
 *
 * Fill (cpa_dw_fill): writes each input element x[ih*w + iw] to its place in
 * the phase planes (u = ih + pt, v = iw + pl) and nothing else, so the zero
 * border a caller wrote once survives every later fill of the same geometry.
 *
 * Row (cpa_dw_row), the nrows output rows of one channel:
 *   y[i*q + j] = bias + sum over t < ntap of w[t] * src[t][i*src_step + j]
 * for i < nrows, j < q (taps added in order t = 0, 1, ...; fused or not).
 * Because consecutive rows follow each other in the phase plane, a kernel may
 * run along the flattened index i*src_step + j across row ends and drop the
 * src_step - q lanes of each row that are not outputs.
 *
 * Reads: the portable kernels read exactly the floats above; ISA kernels read
 * whole vectors, src[t][0 .. nrows*src_step + CPA_DW_PAD - 1], which the
 * caller keeps inside its buffer.  Writes y[0 .. nrows*q - 1] only.  Pure:
 * never allocates, times or prints. */
#ifndef CPA_DEPTHWISE_ROW_H
#define CPA_DEPTHWISE_ROW_H

#include <stdint.h>

#define CPA_DW_PAD 64 /* readable floats past nrows*src_step: four 16-float vectors */

typedef struct cpa_dw_row {
    int64_t q;               /* outputs per row (>= 1), q <= src_step */
    int64_t nrows;           /* output rows (>= 1) */
    int64_t src_step;        /* floats between the sources of consecutive rows */
    int ntap;                /* taps R*S (>= 1) */
    const float *const *src; /* ntap sources of row 0 */
    const float *w;          /* ntap weights, in tap order */
    float bias;
    float *y;                /* row i at y + i*q */
} cpa_dw_row;

struct cpa_dw_plane;
struct cp_shape;

typedef struct cpa_dw_fill {
    const float *x;    /* the input plane, h x w, row-major */
    int64_t h, w;
    int64_t sh, sw;    /* strides (>= 1) */
    int64_t pt, pl;    /* top and left padding */
    int64_t ld, plane; /* phase-plane row length and floats between phase planes */
    float *buf;        /* phase plane 0 */
} cpa_dw_fill;

typedef void (*cpa_dw_row_fn)(const cpa_dw_row *r);
typedef void (*cpa_dw_fill_fn)(const cpa_dw_fill *f);

/* Portable C, exact reads; the fill handles any stride. */
void cpa_dw_row_ref(const cpa_dw_row *r);
void cpa_dw_fill_ref(const cpa_dw_fill *f);
/* AVX2 + FMA: rows cut into 8-float vectors, 3x3 taps in registers; only
 * where the CPU has both.  The portable fill serves this level. */
void cpa_dw_row_avx2(const cpa_dw_row *r);
/* AVX-512F: 16-float vectors along the flattened rows, compressed stores;
 * the fill copies stride-1 rows and deinterleaves stride-2 rows with
 * permutes (other strides: the portable fill).  Only where the CPU and OS
 * have AVX-512. */
void cpa_dw_row_avx512(const cpa_dw_row *r);
void cpa_dw_fill_avx512(const cpa_dw_fill *f);

/* The kernels of one level. */
typedef struct cpa_dw_kernels {
    cpa_dw_row_fn row;
    cpa_dw_fill_fn fill;
    /* the in-place plane kernels (depthwise_plane.h), NULL where the level has none */
    void (*plane)(const struct cpa_dw_plane *a);
    /* 1 when plane runs form kind (CPA_DWP_*) of shape s, which must be ok
     * for the form (depthwise_plane.h); NULL: every such shape */
    int (*plane_ok)(const struct cp_shape *s, int kind);
    int isa; /* CPA_ISA_* it runs at */
} cpa_dw_kernels;

/* The kernels for a request (CPA_ISA_BEST, _PORTABLE, _AVX2, _AVX512), resolved
 * by cpa_isa_resolve: a level the CPU lacks runs the widest below it. */
cpa_dw_kernels cpa_dw_kernels_select(int64_t isa);

#endif
