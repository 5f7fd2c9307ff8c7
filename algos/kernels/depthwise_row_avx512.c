/* AVX-512F kernels of the depthwise convolution (contract in depthwise_row.h).
 *
 * Row kernel, rows narrower than DW_WIDE outputs (7x7 and 14x14 layers with
 * stride 2): the nrows output rows are computed along the flattened source
 * index f = i*src_step + j in 16-float vectors that run across row ends, so a
 * 7-wide layer (src_step 9) fills 63 of every 64 lanes instead of 7 of 16.
 * The lanes whose column j = f mod src_step is >= q are dropped by a
 * compressed store (vcompressps into a register, then one masked store of
 * popcount lanes): no branch per element and no per-row remainder.  Eight
 * vectors (128 outputs) are in flight per step, so that nine dependent FMAs per
 * accumulator still keep both FMA ports busy (latency 4 x 2 ports); the last
 * partial block runs four at a time.  For 3x3 kernels the nine taps sit in
 * registers; other sizes broadcast each tap from L1 (an embedded broadcast).
 * The lane masks come from vector arithmetic on the column (floor((c + 1/2) /
 * ld), exact for columns below 2^21), never from a division per vector.
 *
 * Fill: stride-1 rows are copied with masked loads and stores; stride-2 rows
 * are deinterleaved into their even and odd phase planes with two permutes per
 * 32 input floats.  Other strides use the portable fill. */
#include <immintrin.h>

#include "algos/kernels/depthwise_row.h"

/* Lanes [0, n), n clamped to [0, 16]; branch free (clamps become cmov): the
 * kept-lane count of a vector changes with its place in the rows, and a
 * branch on it was mispredicted often enough to triple the kernel's time. */
static inline __mmask16 dw_first(int64_t n) {
    const int64_t lo = n < 0 ? 0 : n;
    const unsigned k = (unsigned)(lo > 16 ? 16 : lo);
    return (__mmask16)((1u << k) - 1u);
}

typedef struct {
    __m512 iota, half, ldf, inv, qf;
    int64_t ld, step16; /* step16 = 16 mod ld */
} dw_cols;

/* Output lanes of the vector whose lane 0 sits at column col0 (< ld). */
static inline __mmask16 dw_keep(const dw_cols *c, int64_t col0) {
    const __m512 col = _mm512_add_ps(_mm512_set1_ps((float)col0), c->iota);
    const __m512 k = _mm512_roundscale_ps(_mm512_mul_ps(_mm512_add_ps(col, c->half), c->inv),
                                          _MM_FROUND_TO_NEG_INF | _MM_FROUND_NO_EXC);
    return _mm512_cmp_ps_mask(_mm512_fnmadd_ps(k, c->ldf, col), c->qf, _CMP_LT_OQ);
}

static inline int64_t dw_advance(const dw_cols *c, int64_t col0) {
    col0 += c->step16;
    return col0 >= c->ld ? col0 - c->ld : col0;
}

/* NV vectors from flat index f0; out is the output index of the first kept
 * lane.  W9 != 0: the nine weights are in wr[]. */
static inline __attribute__((always_inline)) void
dw_block(const cpa_dw_row *r, const dw_cols *c, const __m512 *wr, int w9, int nv, int64_t f0,
         int64_t total, int64_t *col0, int64_t *out) {
    __m512 acc[8];
    const __m512 b = _mm512_set1_ps(r->bias);
    for (int v = 0; v < nv; v++) acc[v] = b;
    if (w9) {
        for (int t = 0; t < 9; t++) {
            const float *s = r->src[t] + f0;
            for (int v = 0; v < nv; v++)
                acc[v] = _mm512_fmadd_ps(wr[t], _mm512_loadu_ps(s + 16 * v), acc[v]);
        }
    } else {
        for (int t = 0; t < r->ntap; t++) {
            const float *s = r->src[t] + f0;
            const __m512 wt = _mm512_set1_ps(r->w[t]);
            for (int v = 0; v < nv; v++)
                acc[v] = _mm512_fmadd_ps(wt, _mm512_loadu_ps(s + 16 * v), acc[v]);
        }
    }
    for (int v = 0; v < nv; v++) {
        const __mmask16 m = dw_keep(c, *col0) & dw_first(total - f0 - 16 * v);
        const int n = __builtin_popcount((unsigned)m);
        _mm512_mask_storeu_ps(r->y + *out, dw_first(n), _mm512_maskz_compress_ps(m, acc[v]));
        *out += n;
        *col0 = dw_advance(c, *col0);
    }
}

static inline __attribute__((always_inline)) void dw_rows(const cpa_dw_row *r, int w9) {
    const int64_t ld = r->src_step, total = r->nrows * ld;
    const dw_cols c = {
        .iota = _mm512_setr_ps(0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13, 14, 15),
        .half = _mm512_set1_ps(0.5f),
        .ldf = _mm512_set1_ps((float)ld),
        .inv = _mm512_set1_ps(1.0f / (float)ld),
        .qf = _mm512_set1_ps((float)r->q),
        .ld = ld,
        .step16 = 16 % ld,
    };
    __m512 wr[9];
    if (w9)
        for (int t = 0; t < 9; t++) wr[t] = _mm512_set1_ps(r->w[t]);
    int64_t f0 = 0, col0 = 0, out = 0;
    for (; f0 + 128 <= total; f0 += 128) dw_block(r, &c, wr, w9, 8, f0, total, &col0, &out);
    for (; f0 < total; f0 += 64) dw_block(r, &c, wr, w9, 4, f0, total, &col0, &out);
}

/* Wide rows (q >= DW_WIDE): row by row in 16-float vectors, the last of a row
 * a masked store, no compress -- the mask and compress of the flattened walk
 * cost about 60 % more per vector than they save once a row fills most of
 * its vectors.  One vector per step: the out-of-order window overlaps the
 * nine-FMA chains of consecutive vectors. */
enum { DW_WIDE = 12 };

static inline __attribute__((always_inline)) void dw_wide(const cpa_dw_row *r, int w9) {
    __m512 wr[9];
    if (w9)
        for (int t = 0; t < 9; t++) wr[t] = _mm512_set1_ps(r->w[t]);
    const __m512 b = _mm512_set1_ps(r->bias);
    for (int64_t i = 0; i < r->nrows; i++) {
        const int64_t base = i * r->src_step;
        float *y = r->y + i * r->q;
        for (int64_t j = 0; j < r->q; j += 16) {
            __m512 acc = b;
            if (w9) {
                for (int t = 0; t < 9; t++)
                    acc = _mm512_fmadd_ps(wr[t], _mm512_loadu_ps(r->src[t] + base + j), acc);
            } else {
                for (int t = 0; t < r->ntap; t++)
                    acc = _mm512_fmadd_ps(_mm512_set1_ps(r->w[t]),
                                          _mm512_loadu_ps(r->src[t] + base + j), acc);
            }
            _mm512_mask_storeu_ps(y + j, dw_first(r->q - j), acc);
        }
    }
}

void cpa_dw_row_avx512(const cpa_dw_row *r) {
    if (r->q >= DW_WIDE) {
        if (r->ntap == 9)
            dw_wide(r, 1);
        else
            dw_wide(r, 0);
    } else if (r->ntap == 9) {
        dw_rows(r, 1);
    } else {
        dw_rows(r, 0);
    }
}

/* Input row xr (w floats) deinterleaved: even columns to e, odd ones to o. */
static void dw_split2(const float *xr, int64_t w, float *e, float *o) {
    const __m512i ie = _mm512_setr_epi32(0, 2, 4, 6, 8, 10, 12, 14, 16, 18, 20, 22, 24, 26, 28, 30);
    const __m512i io = _mm512_setr_epi32(1, 3, 5, 7, 9, 11, 13, 15, 17, 19, 21, 23, 25, 27, 29, 31);
    const int64_t ne = (w + 1) / 2, no = w / 2;
    int64_t k = 0;
    for (; 2 * k + 32 <= w; k += 16) { /* whole vectors: plain loads and stores */
        const __m512 a = _mm512_loadu_ps(xr + 2 * k), b = _mm512_loadu_ps(xr + 2 * k + 16);
        _mm512_storeu_ps(e + k, _mm512_permutex2var_ps(a, ie, b));
        _mm512_storeu_ps(o + k, _mm512_permutex2var_ps(a, io, b));
    }
    for (; k < ne; k += 16) {
        const __m512 a = _mm512_maskz_loadu_ps(dw_first(w - 2 * k), xr + 2 * k);
        const __m512 b = _mm512_maskz_loadu_ps(dw_first(w - 2 * k - 16), xr + 2 * k + 16);
        _mm512_mask_storeu_ps(e + k, dw_first(ne - k), _mm512_permutex2var_ps(a, ie, b));
        _mm512_mask_storeu_ps(o + k, dw_first(no - k), _mm512_permutex2var_ps(a, io, b));
    }
}

void cpa_dw_fill_avx512(const cpa_dw_fill *f) {
    if (f->sw > 2) {
        cpa_dw_fill_ref(f);
        return;
    }
    /* padded row u = ih + pt: phase u mod sh, row u div sh, stepped without
     * a division per row (one costs as much as copying a short row) */
    int64_t ph = f->pt % f->sh, pr = f->pt / f->sh;
    /* input column 2k + e is padded column 2k + e + pl: phase (e + pl) mod 2,
     * column k + (e + pl) div 2 */
    const int64_t pe = f->pl % 2, po = (f->pl + 1) % 2;
    const int64_t ce = pe * f->plane + f->pl / 2, co = po * f->plane + (f->pl + 1) / 2;
    for (int64_t ih = 0; ih < f->h; ih++) {
        float *row = f->buf + ph * f->sw * f->plane + pr * f->ld;
        const float *xr = f->x + ih * f->w;
        if (f->sw == 1) {
            float *d = row + f->pl;
            int64_t k = 0;
            for (; k + 16 <= f->w; k += 16) _mm512_storeu_ps(d + k, _mm512_loadu_ps(xr + k));
            for (; k < f->w; k += 16) {
                const __mmask16 m = dw_first(f->w - k);
                _mm512_mask_storeu_ps(d + k, m, _mm512_maskz_loadu_ps(m, xr + k));
            }
        } else {
            dw_split2(xr, f->w, row + ce, row + co);
        }
        if (++ph == f->sh) {
            ph = 0;
            pr++;
        }
    }
}
