/* The im2col lowering loops (see im2col_lower.h): contiguous copies for unit
 * stride, a strided gather otherwise, padding as zero-filled ends. */
#include "algos/core/im2col_lower.h"

#include <string.h>

/* The outputs o in [0, n) whose input index o*stride + off lies in [0, len):
 * [*lo, *hi), possibly empty (lo == hi). */
static void valid_range(int64_t n, int64_t stride, int64_t off, int64_t len, int64_t *lo,
                        int64_t *hi) {
    int64_t a = off >= 0 ? 0 : (-off + stride - 1) / stride;
    int64_t b = len - 1 - off >= 0 ? (len - 1 - off) / stride + 1 : 0;
    if (a > n) a = n;
    if (b > n) b = n;
    if (b < a) b = a;
    *lo = a;
    *hi = b;
}

static void zero(float *d, int64_t count) {
    if (count > 0) memset(d, 0, (size_t)count * sizeof(float));
}

void cpa_im2col_lower_rows(const cp_shape *s, const float *xg, int64_t p0, int64_t p1,
                           float *col, int64_t ldcol, int64_t row_begin, int64_t row_end) {
    const int64_t H = s->h, W = s->w, R = s->r, S = s->s;
    const int64_t P = cp_shape_out_h(s), Q = cp_shape_out_w(s);
    const int64_t sh = s->stride_h, sw = s->stride_w;
    for (int64_t row = row_begin; row < row_end; row++) {
        const int64_t c = row / (R * S), r = (row / S) % R, t = row % S;
        const float *xc = xg + c * H * W;
        float *dst = col + row * ldcol;
        const int64_t ih0 = r * s->dil_h - s->pad_top;
        const int64_t iw0 = t * s->dil_w - s->pad_left;
        int64_t plo, phi, qlo, qhi;
        valid_range(P, sh, ih0, H, &plo, &phi);
        valid_range(Q, sw, iw0, W, &qlo, &qhi);
        /* Intersect with the block; an empty intersection may lie on either
         * side of it, so clamp both ends into [p0, p1]. */
        plo = plo < p0 ? p0 : (plo > p1 ? p1 : plo);
        phi = phi > p1 ? p1 : (phi < plo ? plo : phi);
        /* Output rows whose input row is padding: all zero. */
        zero(dst, (plo - p0) * Q);
        zero(dst + (phi - p0) * Q, (p1 - phi) * Q);
        const int64_t nq = qhi - qlo;
        for (int64_t p = plo; p < phi; p++) {
            /* Input column q*sw + iw0 is inside the row for q in [qlo, qhi). */
            const float *xr = xc + (p * sh + ih0) * W;
            float *d = dst + (p - p0) * Q;
            zero(d, qlo);
            zero(d + qhi, Q - qhi);
            if (sw == 1) {
                if (nq > 0) memcpy(d + qlo, xr + qlo + iw0, (size_t)nq * sizeof(float));
            } else {
                const float *xs = xr + qlo * sw + iw0;
                float *ds = d + qlo;
                for (int64_t i = 0; i < nq; i++) ds[i] = xs[i * sw];
            }
        }
    }
}
