/* AVX-512F tile kernel of the blocked direct convolution: 6 output channels x
 * 4 segments of 16 lanes = 24 ZMM accumulators of the 32 (contract and the
 * choice of tile in blocked_tile.h).  Per input channel and tap: four
 * unaligned 16-float input loads, masked by keep (so the kernel reads exactly
 * the lanes it keeps, like the portable one, and never needs the portable
 * fallback at the end of a buffer: masked-off lanes do not fault), six weight
 * broadcasts, 24 FMAs.  Tiles with fewer non-empty segments run a
 * 6 x 16 or 6 x 32 body.  Kept lanes are compressed before they meet y (the
 * register form plus a masked contiguous access: the memory forms of compress
 * are slow on some cores).  Also the channel-vector tile of small planes
 * (64 channels x up to 7 pixels, below).  Built with -mavx512f; only called
 * after cpa_blocked_tile_select() saw AVX-512F and the OS's ZMM state. */
#include "algos/kernels/blocked_tile.h"

#if defined(__AVX512F__)
#include <immintrin.h>

enum { MR = CPA_BLOCKED_MR };

static inline __mmask16 low_mask(uint32_t keep) {
    return (__mmask16)((1u << __builtin_popcount(keep)) - 1u);
}

/* The accumulators start from the bias (first block) or from zero; a later
 * block's partial sums in y are added at the end, not loaded at the start, and
 * the y lines are only prefetched here: their latency (the tile's 24 output
 * rows are 24 lines of 24 planes, often out of L1) then overlaps the channel
 * loop instead of stalling its first FMAs, and the first block's stores find
 * their lines present.  Common practice, no source.  (The sum is the same,
 * y + (this block's products) instead of ((y + p1) + p2) ...: rounding only.) */
static inline __m512 load_start(const cpa_blocked_tile *t, int v, int kk) {
    const uint32_t keep = t->keep[v];
    if (kk >= t->nk || keep == 0) return _mm512_setzero_ps();
    const float *p = t->y[v] + kk * t->y_ks;
    __builtin_prefetch(p, 1, 3);
    __builtin_prefetch(p + __builtin_popcount(keep) - 1, 1, 3);
    if (t->first) return t->bias ? _mm512_set1_ps(t->bias[kk]) : _mm512_setzero_ps();
    return _mm512_setzero_ps();
}

static inline void store_acc(const cpa_blocked_tile *t, int v, int kk, __m512 a) {
    const uint32_t keep = t->keep[v];
    if (kk >= t->nk || keep == 0) return;
    float *p = t->y[v] + kk * t->y_ks;
    if (keep == 0xffffu) {
        if (!t->first) a = _mm512_add_ps(a, _mm512_loadu_ps(p));
        _mm512_storeu_ps(p, a);
        return;
    }
    const __mmask16 lm = low_mask(keep);
    a = _mm512_maskz_compress_ps((__mmask16)keep, a);
    if (!t->first) a = _mm512_add_ps(a, _mm512_maskz_loadu_ps(lm, p));
    _mm512_mask_storeu_ps(p, lm, a);
}

/* The tile body for NS segments (1, 2 or 4) and taps (ONE: a 1x1 layer or the
 * Winograd GEMM, one tap at offset tap_off[0]); both are constants after
 * inlining, so the tests on them fold away.  Named accumulators rather than an
 * array: GCC 12 kept an array of them mirrored on the stack inside the loop.
 * The one-tap body has no tap loop and takes two channels per trip: the tap
 * loop's own overhead (a trip count of 1, the offset load, the pointer
 * arithmetic): a 6 x 64 tile over 64 channels in L1 ran 14..19 % faster
 * without it (61 -> 69 % and 53 -> 64 % of the 512-bit roof, two noisy runs on
 * one core of a Xeon, family 6 model 207). */
#define CPA_Z4(m) m(0) m(1) m(2) m(3) m(4) m(5)
static inline __attribute__((always_inline)) void tile_ns(const cpa_blocked_tile *t, const int NS,
                                                          const int ONE) {
#define CPA_INIT(kk)                                                   \
    __m512 a0##kk = load_start(t, 0, kk);                              \
    __m512 a1##kk = NS > 1 ? load_start(t, 1, kk) : _mm512_setzero_ps(); \
    __m512 a2##kk = NS > 2 ? load_start(t, 2, kk) : _mm512_setzero_ps(); \
    __m512 a3##kk = NS > 2 ? load_start(t, 3, kk) : _mm512_setzero_ps();
    CPA_Z4(CPA_INIT)
#undef CPA_INIT
    const __mmask16 k0 = (__mmask16)t->keep[0], k1 = (__mmask16)t->keep[1];
    const __mmask16 k2 = (__mmask16)t->keep[2], k3 = (__mmask16)t->keep[3];
    const int64_t ntap = t->ntap, cs = t->x_cs, step = t->w_step;
    const int64_t *off = t->tap_off;
    const int64_t o0 = off[0];
    const float *x0 = t->x[0] + (ONE ? o0 : 0), *x1 = t->x[1] + (ONE ? o0 : 0);
    const float *x2 = t->x[2] + (ONE ? o0 : 0), *x3 = t->x[3] + (ONE ? o0 : 0);
    /* One channel and tap: input vectors at p0..p3, weights at w. */
#define CPA_STEP(p0, p1, p2, p3, w)                                               \
    {                                                                             \
        const float *wq = (w);                                                    \
        const __m512 v0 = _mm512_maskz_loadu_ps(k0, p0);                          \
        const __m512 v1 = NS > 1 ? _mm512_maskz_loadu_ps(k1, p1) : _mm512_setzero_ps(); \
        const __m512 v2 = NS > 2 ? _mm512_maskz_loadu_ps(k2, p2) : _mm512_setzero_ps(); \
        const __m512 v3 = NS > 2 ? _mm512_maskz_loadu_ps(k3, p3) : _mm512_setzero_ps(); \
        CPA_Z4(CPA_FMA)                                                           \
    }
#define CPA_FMA(kk)                                                \
    {                                                              \
        const __m512 b = _mm512_set1_ps(wq[kk]);                  \
        a0##kk = _mm512_fmadd_ps(v0, b, a0##kk);                   \
        if (NS > 1) a1##kk = _mm512_fmadd_ps(v1, b, a1##kk);       \
        if (NS > 2) a2##kk = _mm512_fmadd_ps(v2, b, a2##kk);       \
        if (NS > 2) a3##kk = _mm512_fmadd_ps(v3, b, a3##kk);       \
    }
    if (ONE) {
        const float *w = t->w;
        int64_t c = 0;
        for (; c + 2 <= t->nc; c += 2, w += 2 * MR) {
            CPA_STEP(x0, x1, x2, x3, w)
            CPA_STEP(x0 + cs, x1 + cs, x2 + cs, x3 + cs, w + MR)
            x0 += 2 * cs, x1 += 2 * cs, x2 += 2 * cs, x3 += 2 * cs;
        }
        if (c < t->nc) CPA_STEP(x0, x1, x2, x3, w)
    } else {
        for (int64_t c = 0; c < t->nc; c++, x0 += cs, x1 += cs, x2 += cs, x3 += cs) {
            const float *w = t->w + c * ntap * MR;
            for (int64_t i = 0; i < ntap; i++, w += step) {
                const int64_t o = off[i];
                CPA_STEP(x0 + o, x1 + o, x2 + o, x3 + o, w)
            }
        }
    }
#undef CPA_FMA
#undef CPA_STEP
#define CPA_STORE(kk)                                 \
    store_acc(t, 0, kk, a0##kk);                      \
    if (NS > 1) store_acc(t, 1, kk, a1##kk);          \
    if (NS > 2) store_acc(t, 2, kk, a2##kk);          \
    if (NS > 2) store_acc(t, 3, kk, a3##kk);
    CPA_Z4(CPA_STORE)
#undef CPA_STORE
}
#undef CPA_Z4

static void tile_1(const cpa_blocked_tile *t) { tile_ns(t, 1, 0); }
static void tile_2(const cpa_blocked_tile *t) { tile_ns(t, 2, 0); }
static void tile_4(const cpa_blocked_tile *t) { tile_ns(t, 4, 0); }
static void tile_1_one(const cpa_blocked_tile *t) { tile_ns(t, 1, 1); }
static void tile_2_one(const cpa_blocked_tile *t) { tile_ns(t, 2, 1); }
static void tile_4_one(const cpa_blocked_tile *t) { tile_ns(t, 4, 1); }

void cpa_blocked_tile_avx512_6x64(const cpa_blocked_tile *t) {
    const int ns = t->keep[2] || t->keep[3] ? 4 : t->keep[1] ? 2 : 1;
    if (t->ntap == 1)
        ns == 4 ? tile_4_one(t) : ns == 2 ? tile_2_one(t) : tile_1_one(t);
    else
        ns == 4 ? tile_4(t) : ns == 2 ? tile_2(t) : tile_1(t);
}

/* The channel-vector tile (contract in blocked_tile.h): 4 ZMM of 16 output
 * channels x NP pixels (1..7, a constant after inlining), 28 accumulators at
 * NP = 7.  Per input channel and tap: four weight vector loads, NP input
 * broadcasts, 4 NP FMAs.  Outputs leave by scatter (a pixel's 16 channels are
 * y_ks apart), once per tile: amortised over nc * ntap * NP * 4 FMAs. */
static inline __mmask16 cv_mask(int nk, int j) {
    const int n = nk - 16 * j;
    const uint32_t bits = n >= 16 ? 0xffffu : n <= 0 ? 0u : (1u << n) - 1u;
    return (__mmask16)bits;
}

/* Pixel-major order: one broadcast live at a time (28 accumulators, 4 weight
 * vectors and 1 broadcast are 33 of 32 registers at NP = 7: one weight vector
 * is reloaded, no accumulator leaves its register).  The scatter indices are
 * made after the loop so that they do not hold a register through it. */
#define CPA_CV_ALLJ(m, p) m(0, p) m(1, p) m(2, p) m(3, p)
#define CPA_CV_ALL(m)                                                                  \
    CPA_CV_ALLJ(m, 0) CPA_CV_ALLJ(m, 1) CPA_CV_ALLJ(m, 2) CPA_CV_ALLJ(m, 3) CPA_CV_ALLJ(m, 4) \
    CPA_CV_ALLJ(m, 5) CPA_CV_ALLJ(m, 6)
static inline __attribute__((always_inline)) void cv_np(const cpa_cv_tile *t, const int NP,
                                                        const int ONE) {
    const __mmask16 m0 = cv_mask(t->nk, 0), m1 = cv_mask(t->nk, 1);
    const __mmask16 m2 = cv_mask(t->nk, 2), m3 = cv_mask(t->nk, 3);
#define CPA_CV_IDX                                                                  \
    _mm512_mullo_epi32(_mm512_setr_epi32(0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13, 14, 15), \
                       _mm512_set1_epi32((int)t->y_ks))
    const int64_t ys16 = 16 * t->y_ks;
    __m512 b0 = _mm512_setzero_ps(), b1 = b0, b2 = b0, b3 = b0;
    if (t->first && t->bias) {
        b0 = _mm512_maskz_loadu_ps(m0, t->bias);
        b1 = _mm512_maskz_loadu_ps(m1, t->bias + 16);
        b2 = _mm512_maskz_loadu_ps(m2, t->bias + 32);
        b3 = _mm512_maskz_loadu_ps(m3, t->bias + 48);
    }
#define CPA_CV_INIT(j, p) __m512 a##j##p = b##j;
    CPA_CV_ALL(CPA_CV_INIT)
#undef CPA_CV_INIT
#define CPA_CV_GATHER(j, p)                                                             \
    if ((p) < NP)                                                                       \
        a##j##p = _mm512_mask_i32gather_ps(_mm512_setzero_ps(), m##j, idx,              \
                                           t->y + (j) * ys16 + (p), 4);
    if (!t->first) {
        const __m512i idx = CPA_CV_IDX;
        CPA_CV_ALL(CPA_CV_GATHER)
    }
#undef CPA_CV_GATHER
    const int64_t ntap = t->ntap, cs = t->x_cs, step = t->w_step;
    const int64_t *off = t->tap_off;
    const float *x = t->x;
    /* One channel and tap: pixels at xq, weights at wq. */
#define CPA_CV_STEP(xq, wq)                                                                   \
    {                                                                                         \
        const float *xp = (xq), *wp = (wq);                                                   \
        const __m512 w0 = _mm512_loadu_ps(wp), w1 = _mm512_loadu_ps(wp + 16);                 \
        const __m512 w2 = _mm512_loadu_ps(wp + 32), w3 = _mm512_loadu_ps(wp + 48);            \
        CPA_CV_ALL(CPA_CV_FMA)                                                                \
    }
#define CPA_CV_FMA(j, p)                                                                      \
    if ((p) < NP) a##j##p = _mm512_fmadd_ps(w##j, _mm512_set1_ps(xp[p]), a##j##p);
    if (ONE) { /* no tap loop (1x1 layers, Winograd's GEMM): as tile_ns */
        const float *w = t->w;
        x += off[0];
        int64_t c = 0;
        for (; c + 2 <= t->nc; c += 2, x += 2 * cs, w += 2 * CPA_CV_KR) {
            CPA_CV_STEP(x, w)
            CPA_CV_STEP(x + cs, w + CPA_CV_KR)
        }
        if (c < t->nc) CPA_CV_STEP(x, w)
    } else {
        for (int64_t c = 0; c < t->nc; c++, x += cs) {
            const float *w = t->w + c * ntap * CPA_CV_KR;
            for (int64_t i = 0; i < ntap; i++, w += step) CPA_CV_STEP(x + off[i], w)
        }
    }
#undef CPA_CV_FMA
#undef CPA_CV_STEP
    const __m512i idx = CPA_CV_IDX;
#undef CPA_CV_IDX
#define CPA_CV_STORE(j, p) \
    if ((p) < NP) _mm512_mask_i32scatter_ps(t->y + (j) * ys16 + (p), m##j, idx, a##j##p, 4);
    CPA_CV_ALL(CPA_CV_STORE)
#undef CPA_CV_STORE
}
#undef CPA_CV_ALL
#undef CPA_CV_ALLJ

#define CPA_CV_FN(n)                                                   \
    static void cv_##n(const cpa_cv_tile *t) { cv_np(t, n, 0); }       \
    static void cv_##n##_one(const cpa_cv_tile *t) { cv_np(t, n, 1); }
CPA_CV_FN(1) CPA_CV_FN(2) CPA_CV_FN(3) CPA_CV_FN(4) CPA_CV_FN(5) CPA_CV_FN(6) CPA_CV_FN(7)
#undef CPA_CV_FN

void cpa_cv_tile_avx512_64x7(const cpa_cv_tile *t) {
    static void (*const by_np[2][CPA_CV_NP])(const cpa_cv_tile *) = {
        {cv_1, cv_2, cv_3, cv_4, cv_5, cv_6, cv_7},
        {cv_1_one, cv_2_one, cv_3_one, cv_4_one, cv_5_one, cv_6_one, cv_7_one}};
    by_np[t->ntap == 1][t->np - 1](t);
}

#else
/* Not an x86 build with AVX-512: keep the symbol so the selector links; it is
 * never chosen there. */
void cpa_blocked_tile_avx512_6x64(const cpa_blocked_tile *t) { cpa_blocked_tile_ref_6x16(t); }
void cpa_cv_tile_avx512_64x7(const cpa_cv_tile *t) { cpa_cv_tile_ref_64x7(t); }
#endif
