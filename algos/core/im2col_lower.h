/* Lowering for im2col_gemm: one group of one image's input turned into the
 * column matrix that a single GEMM multiplies by the weights.
 *
 * The column matrix of group g has cg*R*S rows, one per (c, r, s) in KCRS
 * weight order, and one column per output pixel of the output rows [p0, p1):
 *   col[(c*R + r)*S + s][(p - p0)*Q + q] =
 *     x[c, p*stride_h - pad_top + r*dil_h, q*stride_w - pad_left + s*dil_w]
 * (0 where that position falls in the padding).  Rows are ldcol floats apart
 * so that each starts on its own cache line. */
#ifndef CPA_IM2COL_LOWER_H
#define CPA_IM2COL_LOWER_H

#include <stdint.h>

#include "convpick/shape.h"

/* Writes rows [row_begin, row_end) of the column matrix for output rows
 * [p0, p1).  xg points at the group's first input channel of one image.
 * Every element of columns [0, (p1-p0)*Q) of those rows is written; padding is
 * handled by computing each row's valid output range once and zero-filling
 * the rest, so the copy loops carry no bounds tests. */
void cpa_im2col_lower_rows(const cp_shape *s, const float *xg, int64_t p0, int64_t p1,
                           float *col, int64_t ldcol, int64_t row_begin, int64_t row_end);

#endif
