/* The seven nested loops of a direct convolution, as a template.
 *
 * Included by direct.c (and by harness/cache/cache_traced_direct.c, the build traced for
 * the cache study) with:
 *   CPA_DIRECT_FN    name of the function to define
 *   CPA_DIRECT_FLIP  0: read w[k,c,r,s]; 1: read w[k,c,R-1-r,S-1-s] (true
 *                    convolution by flipped indexing inside the loops)
 *   CPA_DIRECT_ORDER loop order, outermost first (default 0):
 *                    0: batch n, output channel k, output row p, output
 *                       column q, input channel c, kernel row r, kernel
 *                       column s; each output is summed in a register and
 *                       stored once.
 *                    1: n, k, c, r, s, p, q; the output plane is set to the
 *                       bias, then every (c, r, s) tap adds one weight times
 *                       a shifted input plane into it (load and store of y
 *                       per product, one weight load per tap).
 *                    Both add the products of an output in the same (c, r, s)
 *                    order onto the bias, so they give bit-identical results
 *                    (no contraction to FMA: the build is ISO C, where GCC
 *                    leaves -ffp-contract off).
 *   CPA_LD(ptr)      how a value is loaded   (default *(ptr))
 *   CPA_ST(ptr, v)   how a value is stored   (default *(ptr) = (v))
 * The function computes output planes [nk_begin, nk_end) of the flattened
 * (n, k) range. */
#include "algos/core/cpa_access.h"
#ifndef CPA_DIRECT_ORDER
#define CPA_DIRECT_ORDER 0
#endif

#if CPA_DIRECT_FLIP
#define CPA_DIRECT_WIDX(c, r, s) (((c) * R + (R - 1 - (r))) * S + (S - 1 - (s)))
#else
#define CPA_DIRECT_WIDX(c, r, s) (((c) * R + (r)) * S + (s))
#endif

static void CPA_DIRECT_FN(const cp_shape *sh, const float *x, const float *w, const float *bias,
                          float *y, int64_t nk_begin, int64_t nk_end) {
    const int64_t C = sh->c, H = sh->h, W = sh->w, K = sh->k, R = sh->r, S = sh->s;
    const int64_t P = cp_shape_out_h(sh), Q = cp_shape_out_w(sh);
    const int64_t cg = C / sh->groups, kg = K / sh->groups;
    for (int64_t nk = nk_begin; nk < nk_end; nk++) {
        const int64_t n = nk / K, k = nk % K, g = k / kg;
        const float *xg = x + (n * C + g * cg) * H * W;
        const float *wk = w + k * cg * R * S;
        float *yk = y + nk * P * Q;
        const float b = bias ? CPA_LD(&bias[k]) : 0.0f;
#if CPA_DIRECT_ORDER == 0
        for (int64_t p = 0; p < P; p++)
            for (int64_t q = 0; q < Q; q++) {
                float acc = b;
                for (int64_t c = 0; c < cg; c++)
                    for (int64_t r = 0; r < R; r++) {
                        const int64_t ih = p * sh->stride_h - sh->pad_top + r * sh->dil_h;
                        if (ih < 0 || ih >= H) continue;
                        for (int64_t s = 0; s < S; s++) {
                            const int64_t iw = q * sh->stride_w - sh->pad_left + s * sh->dil_w;
                            if (iw < 0 || iw >= W) continue;
                            acc += CPA_LD(&xg[(c * H + ih) * W + iw]) *
                                   CPA_LD(&wk[CPA_DIRECT_WIDX(c, r, s)]);
                        }
                    }
                CPA_ST(&yk[p * Q + q], acc);
            }
#else
        for (int64_t i = 0; i < P * Q; i++) CPA_ST(&yk[i], b);
        for (int64_t c = 0; c < cg; c++)
            for (int64_t r = 0; r < R; r++)
                for (int64_t s = 0; s < S; s++) {
                    const float wv = CPA_LD(&wk[CPA_DIRECT_WIDX(c, r, s)]);
                    for (int64_t p = 0; p < P; p++) {
                        const int64_t ih = p * sh->stride_h - sh->pad_top + r * sh->dil_h;
                        if (ih < 0 || ih >= H) continue;
                        const float *xr = xg + (c * H + ih) * W;
                        float *yr = yk + p * Q;
                        for (int64_t q = 0; q < Q; q++) {
                            const int64_t iw = q * sh->stride_w - sh->pad_left + s * sh->dil_w;
                            if (iw < 0 || iw >= W) continue;
                            CPA_ST(&yr[q], CPA_LD(&yr[q]) + CPA_LD(&xr[iw]) * wv);
                        }
                    }
                }
#endif
    }
}

#undef CPA_DIRECT_WIDX
