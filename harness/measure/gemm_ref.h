/* Bare SGEMM references for the lowering-based algorithms.
 *
 * A lowering algorithm is only as fast as the matrix products it reduces to,
 * so bench times those products alone, with the same statistics and in the
 * same run, and reports the algorithm's time as a ratio to them:
 *  - im2col: per image and group, Y_g (K/g x P*Q) = W_g (K/g x C/g*R*S) *
 *    X_g (C/g*R*S x P*Q), every matrix dense (leading dimension = columns);
 *  - Winograd F(2x2,3x3): per block of tile_block tiles, 16 products
 *    M (K x T) = U (K x C) * V (C x T) with the row stride the algorithm uses
 *    (T rounded up to 16 floats).
 * The operands are random: a GEMM's time does not depend on the values.  This
 * is a GEMM, not a convolution, so the harness may call cblas_sgemm for it. */
#ifndef CONVPICK_GEMM_REF_H
#define CONVPICK_GEMM_REF_H

#include <stdint.h>

#include "convpick/convpick.h"
#include "harness/measure/placer.h"

typedef struct cph_gemm_ref {
    int64_t m, n, k;      /* one product: (m x k) * (k x n) */
    int64_t ldb;          /* row stride of B and C (>= n) */
    int64_t products;     /* distinct operand sets (groups, or the 16 Winograd points) */
    int64_t repeats;      /* times the set of products is run per call (images, blocks) */
    int64_t last_n;       /* n of the last repeat (a partial Winograd block), else n */
    float *a, *b, *c;     /* products x operands, owned */
    cph_placer *placer;   /* where the operands came from; NULL: the heap */
} cph_gemm_ref;

/* The im2col products of layer s (any shape).  CP_ENOMEM on allocation failure. */
cp_status cph_gemm_ref_im2col(const cp_shape *s, uint64_t seed, cph_gemm_ref *out);
/* The 16 GEMMs of winograd_2x2_3x3 on layer s with tile_block tb (>= 1). */
cp_status cph_gemm_ref_winograd(const cp_shape *s, int64_t tb, uint64_t seed, cph_gemm_ref *out);
/* The same with the operands from placer (NULL: the heap): bench's trials of
 * its SGEMM rows, fresh operands at random offsets each trial. */
cp_status cph_gemm_ref_im2col_placed(const cp_shape *s, uint64_t seed, cph_placer *placer,
                                     cph_gemm_ref *out);
cp_status cph_gemm_ref_winograd_placed(const cp_shape *s, int64_t tb, uint64_t seed,
                                       cph_placer *placer, cph_gemm_ref *out);
/* Runs every product once (a cph_work_fn: arg is a cph_gemm_ref *); returns 0. */
int cph_gemm_ref_run(void *arg);
/* Multiply-add FLOPs of one call (2 m n k per product). */
double cph_gemm_ref_flops(const cph_gemm_ref *g);
void cph_gemm_ref_free(cph_gemm_ref *g);

#endif
