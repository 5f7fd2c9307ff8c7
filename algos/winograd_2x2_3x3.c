/* winograd_2x2_3x3: Winograd minimal filtering F(2x2,3x3) with the element-wise
 * stage as 16 GEMMs (Lavin & Gray, "Fast Algorithms for Convolutional Neural
 * Networks", CVPR 2016, sections 4.1 and 5).  Matrices (from that paper):
 *   B^T = [1 0 -1 0; 0 1 1 0; 0 -1 1 0; 0 1 0 -1]
 *   G   = [1 0 0; 1/2 1/2 1/2; 1/2 -1/2 1/2; 0 0 1]
 *   A^T = [1 1 1 0; 0 1 -1 -1]
 * G appears unrolled in prepare below, B^T and A^T in the transform loops of
 * winograd_kernels_body.h (built portable and AVX2, chosen at run time);
 * tests/support/winograd_tile.c keeps all three as matrices for the tests.
 *
 * Data flow for one block of `tile_block` 2x2 output tiles (4x4 input tiles
 * overlapping by 2):
 *   prepare: U[xi] (K x C) = (G g G^T)[xi] for every (k, c), xi = 4*i + j.
 *   run:     V[xi] (C x T) = (B^T d B)[xi] per tile and channel   (parallel over c)
 *            M[xi] (K x T) = U[xi] * V[xi], 16 cblas_sgemm calls   (shared out over the
 *                                                              workers, gemm_split.h)
 *            y = A^T M A + bias, clipped to P x Q                  (parallel over k)
 * Workspace holds the 16 V and 16 M matrices of one block plus four row buffers
 * per worker, so it grows with the block, never with the layer. */
#include <cblas.h>
#include <string.h>

#include "algos/kernels/blocked_tile.h"
#include "algos/core/cpa.h"
#include "algos/core/gemm_split.h"
#include "algos/kernels/winograd_kernels.h"

enum { WINO_TILE_BLOCK = 0, WINO_KERNELS = 1, WINO_GEMM = 2, WINO_NPARAMS };
enum { MR = CPA_BLOCKED_MR };

/* At most this many tiles in the whole layer and the default GEMM is the
 * packed tile kernel: with so few columns OpenBLAS spends its time re-packing
 * U (K x C per point, all of U every run) for a product only 16..64 columns
 * wide.  Measured on one Zen 3 core of a shared machine (fastest sample of
 * each, tile_block at its default): c=k=512 h=w=7 (16 tiles) 2.13 ms packed
 * vs 2.82 ms OpenBLAS; c=k=256 h=w=14 (49 tiles) 1.59 vs 1.85; at 196 and 784
 * tiles (c=k=128 h=w=28, c=k=64 h=w=56) the two were within 5 %. */
#define WINO_PACKED_MAX_TILES 64

static const cp_param_desc wino_params[] = {
    {"tile_block", "2x2 output tiles per block; default: the block's 16 V and 16 M "
                   "matrices fill L2, at least 64 tiles", 1, 4096},
    {"kernels", "transform loops and packed GEMM tile kernel: 0 = the widest builds the CPU "
                "has (AVX-512, AVX2+FMA, portable); 1 = portable; 2 = AVX2; 3 = AVX-512 (a "
                "level the CPU lacks runs the widest below it); default 0", 0, 3},
    {"gemm", "element-wise stage: 0 = OpenBLAS sgemm on U as 16 K x C matrices; 1 = the "
             "blocked 6x16 tile kernel on U pre-packed in 6-channel panels; default 1 when "
             "the layer has at most 64 tiles, else 0", 0, 1},
};

/* Row stride of the V and M matrices: a multiple of 16 floats (64 bytes), so
 * that the rows different workers write never share a cache line. */
static int64_t wino_ld(int64_t tb) { return (tb + 15) / 16 * 16; }

static int64_t wino_tiles_h(const cp_shape *s) { return (cp_shape_out_h(s) + 1) / 2; }
static int64_t wino_tiles_w(const cp_shape *s) { return (cp_shape_out_w(s) + 1) / 2; }

/* Floats of one worker's four row buffers: a segment spans at most
 * min(tb, tiles_w) tiles, i.e. 2*that + 2 input columns. */
static size_t wino_rowbuf_floats(const cp_shape *s, int64_t tb) {
    int64_t tiles = tb < wino_tiles_w(s) ? tb : wino_tiles_w(s);
    return cpa_align64((size_t)(4 * (2 * tiles + 2)) * sizeof(float)) / sizeof(float);
}

static int wino_supports(const cp_shape *s, cp_flip flip, char *why, size_t cap) {
    (void)flip; /* CP_CONV: the weights are flipped in prepare */
    if (s->r != 3 || s->s != 3)
        return cpa_refuse(why, cap, "F(2x2,3x3) needs a 3x3 kernel (got %lldx%lld)",
                          (long long)s->r, (long long)s->s);
    if (s->stride_h != 1 || s->stride_w != 1)
        return cpa_refuse(why, cap, "F(2x2,3x3) needs stride 1 (got %lldx%lld)",
                          (long long)s->stride_h, (long long)s->stride_w);
    if (s->dil_h != 1 || s->dil_w != 1)
        return cpa_refuse(why, cap, "F(2x2,3x3) needs dilation 1 (got %lldx%lld)",
                          (long long)s->dil_h, (long long)s->dil_w);
    if (s->c > INT32_MAX || s->k > INT32_MAX)
        return cpa_refuse(why, cap, "c=%lld or k=%lld exceeds the BLAS integer range",
                          (long long)s->c, (long long)s->k);
    if (s->groups != 1)
        return cpa_refuse(why, cap, "grouped convolution (groups=%lld) is not implemented; "
                                    "only groups=1", (long long)s->groups);
    return 1;
}

/* Tiles per block so that the block's V (16*C*T) and M (16*K*T) floats take
 * `budget` bytes, rounded down to a multiple of 16 and kept within
 * [lo, 1024], and no more than the layer's tiles need. */
static int64_t wino_block_for(const cp_shape *s, size_t budget, int64_t lo) {
    const int64_t per_tile = 16 * (s->c + s->k) * (int64_t)sizeof(float);
    int64_t tb = (int64_t)budget / per_tile / 16 * 16;
    if (tb < lo) tb = lo;
    if (tb > 1024) tb = 1024;
    const int64_t all = s->n * wino_tiles_h(s) * wino_tiles_w(s);
    const int64_t cap = wino_ld(all);
    return tb < cap ? tb : cap;
}

/* Default: the block fills L2, but never fewer than 64 tiles.  Below 64 the
 * GEMMs' N dimension is too narrow and, once U outgrows the caches, every
 * block streams all of U again: measured with OpenBLAS on one Zen 3 core,
 * c=k=64 h=w=56 ran fastest at 64 tiles (116 GFLOP/s direct-equivalent vs 102
 * at 32 and 84 at 128), c=k=256 h=w=14 at 32..64 (128..130 vs 88 at 16), and
 * c=k=512 h=w=7 n=4 at 64..128 (83..84 vs 59 at 32). */
static void wino_defaults(const cp_shape *s, const cp_cache_sizes *caches, cp_params *out) {
    out->v[WINO_TILE_BLOCK] = wino_block_for(s, caches->l2, 64);
    out->v[WINO_GEMM] = s->n * wino_tiles_h(s) * wino_tiles_w(s) <= WINO_PACKED_MAX_TILES;
}

/* The default first, then narrower and wider blocks around it. */
static int wino_candidates(const cp_shape *s, const cp_cache_sizes *caches, cp_params *out,
                           int max) {
    const int64_t tries[] = {
        wino_block_for(s, caches->l2, 64), wino_block_for(s, caches->l2 / 2, 32),
        wino_block_for(s, caches->l2 * 2, 128), wino_block_for(s, caches->l1d, 16),
        wino_block_for(s, caches->l3 / 8, 256),
    };
    cp_params d;
    memset(&d, 0, sizeof d);
    wino_defaults(s, caches, &d);
    int n = 0;
    if (cpa_isa_resolve(CPA_ISA_BEST) == CPA_ISA_AVX512 && max >= 2) {
        /* the defaults with the AVX2 builds, against the AVX-512 ones */
        out[n++] = d;
        out[n] = d;
        out[n++].v[WINO_KERNELS] = CPA_ISA_AVX2;
    }
    for (int g = 0; g < 2; g++) { /* the default GEMM first, then the other */
        const int64_t gemm = g == 0 ? d.v[WINO_GEMM] : !d.v[WINO_GEMM];
        for (size_t i = 0; i < sizeof tries / sizeof tries[0] && n < max; i++) {
            int dup = 0;
            for (int j = 0; j < n; j++)
                dup |= out[j].v[WINO_TILE_BLOCK] == tries[i] && out[j].v[WINO_GEMM] == gemm &&
                       out[j].v[WINO_KERNELS] == 0;
            if (dup) continue;
            memset(&out[n], 0, sizeof out[n]);
            out[n].v[WINO_TILE_BLOCK] = tries[i];
            out[n++].v[WINO_GEMM] = gemm;
        }
    }
    return n;
}

static size_t wino_workspace_size(const cp_shape *s, cp_flip flip, const cp_params *p,
                                  int nthreads) {
    (void)flip;
    const int64_t tb = p->v[WINO_TILE_BLOCK], ld = wino_ld(tb);
    if (nthreads < 1) nthreads = 1;
    size_t v = cpa_align64((size_t)(16 * s->c * ld) * sizeof(float));
    size_t m = cpa_align64((size_t)(16 * s->k * ld) * sizeof(float));
    size_t rows = wino_rowbuf_floats(s, tb) * sizeof(float) * (size_t)nthreads;
    return v + m + rows;
}

/* 6-channel panels of K (the packed GEMM's U rows, zero padded). */
static int64_t wino_ktiles(const cp_shape *s) { return (s->k + MR - 1) / MR; }

static size_t wino_prepared_size(const cp_shape *s, cp_flip flip, const cp_params *p) {
    (void)flip;
    if (p->v[WINO_GEMM] == 1) return (size_t)(16 * wino_ktiles(s) * MR * s->c) * sizeof(float);
    return (size_t)(16 * s->k * s->c) * sizeof(float);
}

/* U = (G g G^T)[xi] for every (k, c); g is w[k,c] (flipped for CP_CONV).
 * gemm 0: U[xi][k][c], 16 row-major K x C matrices.  gemm 1: U[xi][kt][c][kk]
 * with k = 6 kt + kk, the panel order of the blocked tile kernel
 * (blocked_tile.h), channels past K zero. */
static cp_status wino_prepare(const cp_shape *s, cp_flip flip, const cp_params *p,
                              const float *w, void *out) {
    const int64_t K = s->k, C = s->c, KC = K * C;
    const int packed = p->v[WINO_GEMM] == 1;
    const int64_t ntk = wino_ktiles(s), xstride = packed ? ntk * MR * C : KC;
    float *u = out;
    if (packed) memset(u, 0, wino_prepared_size(s, flip, p));
    for (int64_t kc = 0; kc < KC; kc++) {
        const int64_t ko = kc / C, co = kc % C;
        const int64_t at = packed ? ((ko / MR) * C + co) * MR + ko % MR : kc;
        float g[9];
        const float *src = w + kc * 9;
        for (int i = 0; i < 9; i++) g[i] = flip == CP_CONV ? src[8 - i] : src[i];
        float gg[4][3]; /* G g */
        for (int j = 0; j < 3; j++) {
            const float g0 = g[j], g1 = g[3 + j], g2 = g[6 + j];
            gg[0][j] = g0;
            gg[1][j] = 0.5f * (g0 + g1 + g2);
            gg[2][j] = 0.5f * (g0 - g1 + g2);
            gg[3][j] = g2;
        }
        for (int i = 0; i < 4; i++) { /* (G g) G^T */
            const float a = gg[i][0], b = gg[i][1], c = gg[i][2];
            u[(4 * i + 0) * xstride + at] = a;
            u[(4 * i + 1) * xstride + at] = 0.5f * (a + b + c);
            u[(4 * i + 2) * xstride + at] = 0.5f * (a - b + c);
            u[(4 * i + 3) * xstride + at] = c;
        }
    }
    return CP_OK;
}

/* One block: global tiles [t0, t0 + nt) in (n, tile row, tile column) order. */
typedef struct {
    const cp_run_args *a;
    int64_t t0, nt, ld;
    float *v, *m, *rows;
    size_t rows_per_worker;
    const cpa_wino_kernels *kern;
    cpa_blocked_kernel tile;     /* the packed GEMM's tile kernel */
} wino_block;

/* Runs body for each segment of the block: a run of tiles [tx0, tx1) of tile
 * row ty of image n, whose first tile is column `col` of the block. */
#define WINO_FOR_SEGMENTS(blk, body)                                                    \
    do {                                                                                \
        const int64_t tw_ = wino_tiles_w((blk)->a->shape);                              \
        const int64_t timg_ = wino_tiles_h((blk)->a->shape) * tw_;                      \
        for (int64_t t_ = (blk)->t0; t_ < (blk)->t0 + (blk)->nt;) {                     \
            const int64_t n = t_ / timg_, ty = (t_ % timg_) / tw_, tx0 = t_ % tw_;     \
            const int64_t left_ = (blk)->t0 + (blk)->nt - t_;                           \
            const int64_t tx1 = tx0 + left_ < tw_ ? tx0 + left_ : tw_;                  \
            const int64_t col = t_ - (blk)->t0;                                         \
            body;                                                                       \
            t_ += tx1 - tx0;                                                            \
        }                                                                               \
    } while (0)

/* Fills row buffer r (input columns u = 2*tx0 .. 2*tx1+1 of input row ih,
 * zero outside the image) with branches only at the row's two edges. */
static void wino_load_row(const cp_shape *s, const float *xc, int64_t ih, int64_t tx0,
                          int64_t tx1, float *r) {
    const int64_t ulo = 2 * tx0, len = 2 * (tx1 - tx0) + 2;
    if (ih < 0 || ih >= s->h) {
        memset(r, 0, (size_t)len * sizeof(float));
        return;
    }
    int64_t a = s->pad_left - ulo, b = s->pad_left + s->w - ulo; /* valid [a, b) */
    if (a < 0) a = 0;
    if (b > len) b = len;
    if (b <= a) {
        memset(r, 0, (size_t)len * sizeof(float));
        return;
    }
    memset(r, 0, (size_t)a * sizeof(float));
    memcpy(r + a, xc + ih * s->w + (ulo + a - s->pad_left), (size_t)(b - a) * sizeof(float));
    memset(r + b, 0, (size_t)(len - b) * sizeof(float));
}

/* V = B^T d B for the tiles of one segment of channel c: first B^T on four
 * whole rows (contiguous), then B on each tile's four columns (stride 2). */
static void wino_input_segment(const cp_shape *s, const cpa_wino_kernels *kern,
                               const float *xc, int64_t ty, int64_t tx0, int64_t tx1,
                               float *rows, float *vc, int64_t vstride) {
    const int64_t len = 2 * (tx1 - tx0) + 2, nt = tx1 - tx0;
    for (int i = 0; i < 4; i++)
        wino_load_row(s, xc, 2 * ty - s->pad_top + i, tx0, tx1, rows + i * len);
    kern->in_rows(rows, rows + len, rows + 2 * len, rows + 3 * len, len);
    for (int i = 0; i < 4; i++)
        kern->in_cols(rows + i * len, vc + (4 * i + 0) * vstride, vc + (4 * i + 1) * vstride,
                      vc + (4 * i + 2) * vstride, vc + (4 * i + 3) * vstride, nt);
}

static void wino_input_task(void *arg, int64_t begin, int64_t end, int worker) {
    const wino_block *blk = arg;
    const cp_shape *s = blk->a->shape;
    float *rows = blk->rows + (size_t)worker * blk->rows_per_worker;
    const int64_t vstride = s->c * blk->ld; /* floats between V[xi] and V[xi+1] */
    for (int64_t c = begin; c < end; c++) {
        WINO_FOR_SEGMENTS(blk, {
            const float *xc = blk->a->x + (n * s->c + c) * s->h * s->w;
            wino_input_segment(s, blk->kern, xc, ty, tx0, tx1, rows, blk->v + c * blk->ld + col,
                               vstride);
        });
    }
}

/* y = A^T M A + bias for the tiles of one segment of output channel k.
 * Full tiles through the kernel loops, then the last tile column alone when Q
 * is odd (one output column) -- branches per segment, never per element. */
static void wino_output_segment(const cp_shape *s, const cpa_wino_kernels *kern,
                                const float *mk, int64_t mstride, float bias, float *yk,
                                int64_t ty, int64_t tx0, int64_t tx1) {
    const int64_t P = cp_shape_out_h(s), Q = cp_shape_out_w(s);
    const int64_t full_end = tx1 < Q / 2 ? tx1 : Q / 2;
    const int64_t nfull = full_end > tx0 ? full_end - tx0 : 0;
    const int two_rows = 2 * ty + 1 < P;
    float *o0 = yk + 2 * ty * Q + 2 * tx0;
    if (two_rows)
        kern->out_2rows(mk, mstride, bias, o0, o0 + Q, nfull);
    else
        kern->out_1row(mk, mstride, bias, o0, nfull);
    if (tx0 + nfull < tx1) {
        float m[16], y[4];
        for (int xi = 0; xi < 16; xi++) m[xi] = mk[xi * mstride + nfull];
        kern->out_2rows(m, 1, bias, y, y + 2, 1);
        o0[2 * nfull] = y[0];
        if (two_rows) o0[Q + 2 * nfull] = y[2];
    }
}

static void wino_output_task(void *arg, int64_t begin, int64_t end, int worker) {
    (void)worker;
    const wino_block *blk = arg;
    const cp_shape *s = blk->a->shape;
    const int64_t P = cp_shape_out_h(s), Q = cp_shape_out_w(s);
    const int64_t mstride = s->k * blk->ld;
    for (int64_t k = begin; k < end; k++) {
        const float bias = blk->a->bias ? blk->a->bias[k] : 0.0f;
        WINO_FOR_SEGMENTS(blk, {
            float *yk = blk->a->y + (n * s->k + k) * P * Q;
            wino_output_segment(s, blk->kern, blk->m + k * blk->ld + col, mstride, bias, yk, ty,
                                tx0, tx1);
        });
    }
}

/* The packed GEMM: task (xi, kt) computes rows 6 kt .. 6 kt + 5 of M[xi] =
 * U[xi] V[xi] over the block's columns with the blocked tile kernel (6 x 2x8
 * AVX2, 6 x 4x16 AVX-512: a 1x1 "convolution" of V's C rows, one tap, channel
 * stride ld).  Its U panel (C x 6 floats) stays in L1 across the column
 * groups; V[xi] is shared by the ktiles tasks of the point.  Full nv-float
 * reads stay inside a row: columns start at multiples of nv (8 or 16) and ld
 * is a multiple of 16 >= nt. */
static void wino_packed_task(void *arg, int64_t begin, int64_t end, int worker) {
    (void)worker;
    static const int64_t tap0[1] = {0};
    const wino_block *blk = arg;
    const cp_shape *s = blk->a->shape;
    const int64_t C = s->c, K = s->k, ntk = wino_ktiles(s), ld = blk->ld;
    const cpa_blocked_kernel kn = blk->tile;
    const float *u = blk->a->weights;
    for (int64_t task = begin; task < end; task++) {
        const int64_t xi = task / ntk, kt = task % ntk;
        cpa_blocked_tile t;
        memset(&t, 0, sizeof t);
        t.nc = C;
        t.ntap = 1;
        t.x_cs = ld;
        t.tap_off = tap0;
        t.w = u + (xi * ntk + kt) * C * MR;
        t.w_step = MR;
        t.y_ks = ld;
        t.bias = NULL;
        t.nk = (int)(K - kt * MR < MR ? K - kt * MR : MR);
        t.first = 1;
        const float *vx = blk->v + xi * C * ld;
        float *mx = blk->m + xi * K * ld + kt * MR * ld;
        for (int64_t col = 0; col < blk->nt; col += kn.nseg * kn.nv) {
            for (int v = 0; v < CPA_BLOCKED_SEGS; v++) {
                const int64_t left = blk->nt - col - v * kn.nv;
                const int nl = v >= kn.nseg || left <= 0 ? 0 : left < kn.nv ? (int)left : kn.nv;
                t.keep[v] = (1u << nl) - 1u;
                t.x[v] = nl ? vx + col + v * kn.nv : t.x[0];
                t.y[v] = nl ? mx + col + v * kn.nv : t.y[0];
            }
            kn.fn(&t);
        }
    }
}

static cp_status wino_run(const cp_run_args *a) {
    const cp_shape *s = a->shape;
    const int64_t C = s->c, K = s->k;
    const int64_t tb = a->params->v[WINO_TILE_BLOCK], ld = wino_ld(tb);
    const int64_t all = s->n * wino_tiles_h(s) * wino_tiles_w(s);
    const float *u = a->weights;
    char *ws = a->workspace;
    wino_block blk = {
        .a = a,
        .ld = ld,
        .v = (float *)ws,
        .m = (float *)(ws + cpa_align64((size_t)(16 * C * ld) * sizeof(float))),
        .rows_per_worker = wino_rowbuf_floats(s, tb),
        .kern = cpa_wino_kernels_select(a->params->v[WINO_KERNELS]),
        .tile = cpa_blocked_tile_select(a->params->v[WINO_KERNELS]), /* reads stay inside */
    };
    blk.rows = (float *)(ws + cpa_align64((size_t)(16 * C * ld) * sizeof(float)) +
                         cpa_align64((size_t)(16 * K * ld) * sizeof(float)));
    for (int64_t t0 = 0; t0 < all; t0 += tb) {
        blk.t0 = t0;
        blk.nt = all - t0 < tb ? all - t0 : tb;
        cp_parallel_for(a->exec, C, wino_input_task, &blk);
        if (a->params->v[WINO_GEMM] == 1)
            cp_parallel_for(a->exec, 16 * wino_ktiles(s), wino_packed_task, &blk);
        else
            cpa_sgemm_batch(a->exec, 16, K, blk.nt, C, u, K * C, C, blk.v, C * ld, ld, blk.m,
                            K * ld, ld);
        cp_parallel_for(a->exec, K, wino_output_task, &blk);
    }
    return CP_OK;
}

/* Tolerance.  Measured against the fp64 oracle (cp_oracle_run +
 * cp_error_measure, error relative to sum|x||w| + |b|), default tile_block,
 * OpenBLAS on one core, weights and bias uniform in [-1, 1), both modes, on the
 * ResNet-50 3x3 stride-1 shapes (n=1, pad 1):
 *   c=k=64  h=w=56:  max rel_err 1.03e-7 (inputs in [-1,1)), 8.8e-8 (inputs in [0,1))
 *   c=k=512 h=w=7:   max rel_err 5.7e-8,                     7.1e-8
 *   c=k=256 h=w=14:  max rel_err 9.5e-8,                     1.31e-7
 * so the measured maximum is 1.31e-7 (direct, summing sequentially, measured
 * up to 3.0e-7 on the same shapes).  The tolerance is nevertheless set 5x
 * looser than direct's 1e-5: Winograd adds rounding in the input, filter and
 * output transforms and multiplies the summed errors by the transforms'
 * coefficients, so its error bound is larger than direct's and grows with the
 * tile size and with the size of the matrices' entries (Barabasz, Anderson,
 * Soodhalter & Gregg, "Error Analysis and Improving the Accuracy of Winograd
 * Convolution for Deep Neural Networks", ACM TOMS 2020).  F(2x2,3x3) has the
 * smallest tiles and entries in {0, +-1/2, +-1}, so the extra factor is small
 * here; 5e-5 keeps direct's room for deep reductions with a margin for that
 * factor, and is still tight enough to catch a wrong transform: scaling one
 * row of G by 1.0001 gave rel_err 1.04e-4 on the test grid. */
static const char *wino_isa(const cp_shape *s, const cp_params *p) {
    (void)s;
    static const char *const names[2][4] = {
        {"portable", "portable", "avx2", "avx512"},
        {"portable+blas", "portable+blas", "avx2+blas", "avx512+blas"}};
    return names[p->v[WINO_GEMM] == 0][cpa_isa_resolve(p->v[WINO_KERNELS])];
}

const cp_algo cpa_winograd_2x2_3x3 = {
    .name = "winograd_2x2_3x3",
    .summary = "Winograd F(2x2,3x3), element-wise stage as 16 GEMMs (3x3, stride 1)",
    .tolerance = 5e-5,
    .nparams = WINO_NPARAMS,
    .params = wino_params,
    .supports = wino_supports,
    .defaults = wino_defaults,
    .candidates = wino_candidates,
    .workspace_size = wino_workspace_size,
    .prepared_size = wino_prepared_size,
    .prepare = wino_prepare,
    .run = wino_run,
    .isa = wino_isa,
};
