/* The Winograd driver shared by every F(m x m, 3x3) variant (contract and
 * data flow in wino_driver.h).  Written for F(2x2,3x3) first (Lavin & Gray,
 * "Fast Algorithms for Convolutional Neural Networks", CVPR 2016, sections 4
 * and 5) and generalised over the tile edge m; the measured defaults below
 * were taken with m = 2. */
#include <cblas.h>
#include <string.h>

#include "algos/core/cpa.h"
#include "algos/core/gemm_split.h"
#include "algos/core/wino_driver.h"
#include "algos/kernels/blocked_tile.h"

enum { MR = CPA_BLOCKED_MR, KR = CPA_CV_KR };

/* At most this many tiles in the layer (and K filling 64-channel vectors to
 * 85 %), the packed GEMM runs the channel-vector tile where the kernel set has
 * one (AVX-512): the product is only 16..48 columns wide, which the
 * pixel-vector tile covers with one or two 16-lane segments (6 or 12
 * accumulators: latency-bound), while the channel-vector tile keeps 28
 * accumulators over chunks of up to 7 columns.  Measured on a Xeon (family 6
 * model 207), F(2x2,3x3), one core: see wino_cv_task.  Not at 49 tiles
 * (F(4x4,3x3) at 28x28, F(2x2,3x3) at 14x14): there the pixel-vector tile
 * fills 49 of 64 lanes with all four segments (24 accumulators), while the
 * channel-vector tile reads its 64-channel U panel (C x 64 floats, 32 KiB at
 * C = 128: with V[xi] more than the L1) again for each of the 7 chunks.
 * F(4x4,3x3) c=k=128 h=w=28 took 1.34..1.37 ms with the pixel-vector tile
 * against 1.42..1.46 ms (medians of 11 rounds, two runs, one core of the Xeon
 * reported as family 6 model 167, results/algos/README.md); F(2x2,3x3) c=k=256
 * h=w=14 was within the noise of the two (1.92..2.18 ms either way). */
#define WINO_CV_MAX_TILES 48

/* The default GEMM is the packed tile kernel.  With few tiles OpenBLAS spends
 * its time re-packing U (K x C per point, all of U every run) for a product
 * only 16..64 columns wide: measured with F(2x2,3x3) on one Zen 3 core (fastest
 * sample, tile_block at its default) c=k=512 h=w=7 (16 tiles) 2.13 ms packed vs
 * 2.82 ms OpenBLAS; c=k=256 h=w=14 (49 tiles) 1.59 vs 1.85; at 196 and 784
 * tiles (c=k=128 h=w=28, c=k=64 h=w=56) the two were within 5 %.  On a Xeon
 * (family 6 model 207, AVX-512 tile kernel; OpenBLAS 0.3.21 on its Prescott
 * SSE3 kernels, OPENBLAS_CORETYPE unset) the packed GEMM was 4..8x faster at
 * every tile count of those layers (c=k=64 h=w=56: 1.78 vs 14.6 ms; c=k=128
 * h=w=28: 1.33 vs 8.6 ms, fastest of 15).  So packed at any tile count; the
 * tuner still tries OpenBLAS (candidates below). */

const cp_param_desc cpa_wino_params[CPA_WINO_NPARAMS] = {
    {"tile_block", "output tiles per block; default: the block's V and M matrices fill L2, "
                   "at least 64 tiles", 1, 4096},
    {"kernels", "transform loops and packed GEMM tile kernel: 0 = the widest builds the CPU "
                "has (AVX-512, AVX2+FMA, portable); 1 = portable; 2 = AVX2; 3 = AVX-512 (a "
                "level the CPU lacks runs the widest below it); default 0", 0, 3},
    {"gemm", "element-wise stage: 0 = OpenBLAS sgemm on U as K x C matrices; 1 = the "
             "blocked tile kernel on U pre-packed in 6-channel panels; default 1", 0, 1},
};

/* Row stride of the V and M matrices: a multiple of 16 floats (64 bytes), so
 * that the rows different workers write never share a cache line. */
static int64_t wino_ld(int64_t tb) { return (tb + 15) / 16 * 16; }

/* Floats from V[xi] to V[xi+1] (or M's), matrices of `rows` rows of ld floats:
 * one cache line more than the matrix.  rows * ld floats is a multiple of
 * 4 KiB whenever rows is a multiple of 64 (ld is one of 16), and then the
 * alpha^2 values of one tile -- what a transform writes (V) or reads (M) per
 * tile, alpha^2 places one matrix apart -- would all map to one set of the L1
 * (12-way on the Xeon): 36 lines for F(4x4,3x3), 16 for F(2x2,3x3), evicting
 * each other at every tile.  One line more puts each point in the next set.
 * One core of the Xeon reported as family 6 model 167, default parameters,
 * three alternations with the previous layout (medians of 11 rounds):
 * F(4x4,3x3) c=k=128 h=w=28 faster in all three (1.44 -> 1.27, 1.83 -> 1.28,
 * 1.80 -> 1.64 ms), c=k=64 h=w=56 in two (1.28 -> 1.18, 1.90 -> 1.86; 1.70 ->
 * 1.87 in the third); a modest gain (results/algos/README.md). */
static int64_t wino_pstride(int64_t rows, int64_t ld) { return rows * ld + 16; }

static int64_t wino_tiles_h(const cpa_wino_variant *v, const cp_shape *s) {
    return (cp_shape_out_h(s) + v->m - 1) / v->m;
}
static int64_t wino_tiles_w(const cpa_wino_variant *v, const cp_shape *s) {
    return (cp_shape_out_w(s) + v->m - 1) / v->m;
}
static int64_t wino_points(const cpa_wino_variant *v) { return (int64_t)v->alpha * v->alpha; }

/* Floats of one worker's alpha row buffers: a segment spans at most
 * min(tb, tiles_w) tiles, i.e. m*that + 2 input columns. */
static size_t wino_rowbuf_floats(const cpa_wino_variant *v, const cp_shape *s, int64_t tb) {
    const int64_t tiles = tb < wino_tiles_w(v, s) ? tb : wino_tiles_w(v, s);
    return cpa_align64((size_t)(v->alpha * (v->m * tiles + 2)) * sizeof(float)) / sizeof(float);
}

int cpa_wino_supports(const cpa_wino_variant *v, const cp_shape *s, char *why, size_t cap) {
    if (s->r != 3 || s->s != 3)
        return cpa_refuse(why, cap, "%s needs a 3x3 kernel (got %lldx%lld)", v->name,
                          (long long)s->r, (long long)s->s);
    if (s->stride_h != 1 || s->stride_w != 1)
        return cpa_refuse(why, cap, "%s needs stride 1 (got %lldx%lld)", v->name,
                          (long long)s->stride_h, (long long)s->stride_w);
    if (s->dil_h != 1 || s->dil_w != 1)
        return cpa_refuse(why, cap, "%s needs dilation 1 (got %lldx%lld)", v->name,
                          (long long)s->dil_h, (long long)s->dil_w);
    if (s->c > INT32_MAX || s->k > INT32_MAX)
        return cpa_refuse(why, cap, "c=%lld or k=%lld exceeds the BLAS integer range",
                          (long long)s->c, (long long)s->k);
    if (s->groups != 1)
        return cpa_refuse(why, cap, "grouped convolution (groups=%lld) is not implemented; "
                                    "only groups=1", (long long)s->groups);
    return 1;
}

/* Tiles per block so that the block's V (alpha^2*C*T) and M (alpha^2*K*T)
 * floats take `budget` bytes, rounded down to a multiple of 16 and kept
 * within [lo, 1024], and no more than the layer's tiles need. */
static int64_t wino_block_for(const cpa_wino_variant *v, const cp_shape *s, size_t budget,
                              int64_t lo) {
    const int64_t per_tile = wino_points(v) * (s->c + s->k) * (int64_t)sizeof(float);
    int64_t tb = (int64_t)budget / per_tile / 16 * 16;
    if (tb < lo) tb = lo;
    if (tb > 1024) tb = 1024;
    const int64_t all = s->n * wino_tiles_h(v, s) * wino_tiles_w(v, s);
    const int64_t cap = wino_ld(all);
    return tb < cap ? tb : cap;
}

/* Default: the block fills L2, but never fewer than 64 tiles.  Below 64 the
 * GEMMs' N dimension is too narrow and, once U outgrows the caches, every
 * block streams all of U again: measured for F(2x2,3x3) with OpenBLAS on one
 * Zen 3 core, c=k=64 h=w=56 ran fastest at 64 tiles (116 GFLOP/s
 * direct-equivalent vs 102 at 32 and 84 at 128), c=k=256 h=w=14 at 32..64
 * (128..130 vs 88 at 16), and c=k=512 h=w=7 n=4 at 64..128 (83..84 vs 59 at
 * 32). */
/* With batch 1 the small planes are one block: 16 tiles (F(4x4,3x3) at
 * 14x14) and 4 (at 7x7) are below any block the rule gives, so the block is
 * the layer; splitting it was slower (F(4x4,3x3) c=k=256 h=w=14: tile_block
 * 8 2.68 ms against 2.55 at 16; c=k=512 h=w=7: 2 took 8.6 ms against 5.3 at
 * 16; Xeon family 6 model 167, one core, medians).  What makes F(4x4,3x3)
 * slower than F(2x2,3x3) there is not the block: its U is 36 K x C
 * matrices against 16 (9.4 against 4.2 MB at c=k=256, 37.7 against 16.8 MB
 * at c=k=512), streamed for 16 or 4 columns, and 14 and 7 are not multiples
 * of 4, so it computes 1.31x the outputs it keeps (16x16 for 14x14, 8x8
 * for 7x7). */
void cpa_wino_defaults(const cpa_wino_variant *v, const cp_shape *s, const cp_cache_sizes *c,
                       cp_params *out) {
    out->v[CPA_WINO_TILE_BLOCK] = wino_block_for(v, s, c->l2, 64);
    out->v[CPA_WINO_GEMM] = 1;
}

/* The default first, then narrower and wider blocks around it. */
int cpa_wino_candidates(const cpa_wino_variant *v, const cp_shape *s, const cp_cache_sizes *c,
                        cp_params *out, int max) {
    const int64_t tries[] = {
        wino_block_for(v, s, c->l2, 64), wino_block_for(v, s, c->l2 / 2, 32),
        wino_block_for(v, s, c->l2 * 2, 128), wino_block_for(v, s, c->l1d, 16),
        wino_block_for(v, s, c->l3 / 8, 256),
    };
    cp_params d;
    memset(&d, 0, sizeof d);
    cpa_wino_defaults(v, s, c, &d);
    int n = 0;
    if (cpa_isa_resolve(CPA_ISA_BEST) == CPA_ISA_AVX512 && max >= 2) {
        /* the defaults with the AVX2 builds, against the AVX-512 ones */
        out[n++] = d;
        out[n] = d;
        out[n++].v[CPA_WINO_KERNELS] = CPA_ISA_AVX2;
    }
    for (int g = 0; g < 2; g++) { /* the default GEMM first, then the other */
        const int64_t gemm = g == 0 ? d.v[CPA_WINO_GEMM] : !d.v[CPA_WINO_GEMM];
        for (size_t i = 0; i < sizeof tries / sizeof tries[0] && n < max; i++) {
            int dup = 0;
            for (int j = 0; j < n; j++)
                dup |= out[j].v[CPA_WINO_TILE_BLOCK] == tries[i] &&
                       out[j].v[CPA_WINO_GEMM] == gemm && out[j].v[CPA_WINO_KERNELS] == 0;
            if (dup) continue;
            memset(&out[n], 0, sizeof out[n]);
            out[n].v[CPA_WINO_TILE_BLOCK] = tries[i];
            out[n++].v[CPA_WINO_GEMM] = gemm;
        }
    }
    return n;
}

size_t cpa_wino_workspace_size(const cpa_wino_variant *v, const cp_shape *s, const cp_params *p,
                               int nthreads) {
    const int64_t tb = p->v[CPA_WINO_TILE_BLOCK], ld = wino_ld(tb), np = wino_points(v);
    if (nthreads < 1) nthreads = 1;
    const size_t vb = cpa_align64((size_t)(np * wino_pstride(s->c, ld)) * sizeof(float));
    const size_t mb = cpa_align64((size_t)(np * wino_pstride(s->k, ld)) * sizeof(float));
    return vb + mb + wino_rowbuf_floats(v, s, tb) * sizeof(float) * (size_t)nthreads;
}

/* 6-channel panels of K (the packed GEMM's U rows, zero padded). */
static int64_t wino_ktiles(const cp_shape *s) { return (s->k + MR - 1) / MR; }

/* 1: the packed GEMM uses the channel-vector tile (WINO_CV_MAX_TILES), U in
 * KR-channel panels. */
static int wino_cv(const cpa_wino_variant *v, const cp_shape *s, const cp_params *p) {
    const int64_t nkv = (s->k + KR - 1) / KR;
    return p->v[CPA_WINO_GEMM] == 1 && cpa_blocked_tile_select(p->v[CPA_WINO_KERNELS]).cv &&
           s->n * wino_tiles_h(v, s) * wino_tiles_w(v, s) <= WINO_CV_MAX_TILES &&
           100 * s->k >= 85 * nkv * KR;
}

/* Rows of U's panels: K padded to the panel width (packed GEMM), or K. */
static int64_t wino_urows(const cpa_wino_variant *v, const cp_shape *s, const cp_params *p) {
    if (p->v[CPA_WINO_GEMM] != 1) return s->k;
    const int64_t pw = wino_cv(v, s, p) ? KR : MR;
    return (s->k + pw - 1) / pw * pw;
}

size_t cpa_wino_prepared_size(const cpa_wino_variant *v, const cp_shape *s, const cp_params *p) {
    const int64_t rows = wino_urows(v, s, p);
    return (size_t)(wino_points(v) * rows * s->c) * sizeof(float);
}

/* U = G g G^T for one 3x3 filter g (entry xi at u[xi * xs]), as matrix
 * products in double, each entry rounded to float once: preparation time
 * only, and the most accurate U the float layout can hold. */
static void wino_filter(const cpa_wino_variant *v, const float g[9], float *u, int64_t xs) {
    double gg[8][3]; /* G g; alpha <= 8 */
    const double *G = v->g;
    const int al = v->alpha;
    for (int i = 0; i < al; i++)
        for (int j = 0; j < 3; j++)
            gg[i][j] = G[3 * i] * g[j] + G[3 * i + 1] * g[3 + j] + G[3 * i + 2] * g[6 + j];
    for (int i = 0; i < al; i++) /* (G g) G^T */
        for (int j = 0; j < al; j++)
            u[(al * i + j) * xs] =
                (float)(gg[i][0] * G[3 * j] + gg[i][1] * G[3 * j + 1] + gg[i][2] * G[3 * j + 2]);
}

/* U = (G g G^T)[xi] for every (k, c); g is w[k,c] (flipped for CP_CONV).
 * gemm 0: U[xi][k][c], alpha^2 row-major K x C matrices.  gemm 1:
 * U[xi][kt][c][kk] with k = 6 kt + kk, the panel order of the blocked tile
 * kernel (blocked_tile.h), channels past K zero. */
cp_status cpa_wino_prepare(const cpa_wino_variant *v, const cp_shape *s, cp_flip flip,
                           const cp_params *p, const float *w, void *out) {
    const int64_t K = s->k, C = s->c, KC = K * C;
    const int packed = p->v[CPA_WINO_GEMM] == 1;
    const int64_t pw = wino_cv(v, s, p) ? KR : MR; /* panel width */
    const int64_t xstride = wino_urows(v, s, p) * C;
    float *u = out;
    if (packed) memset(u, 0, cpa_wino_prepared_size(v, s, p));
    for (int64_t kc = 0; kc < KC; kc++) {
        const int64_t ko = kc / C, co = kc % C;
        const int64_t at = packed ? ((ko / pw) * C + co) * pw + ko % pw : kc;
        float g[9];
        const float *src = w + kc * 9;
        for (int i = 0; i < 9; i++) g[i] = flip == CP_CONV ? src[8 - i] : src[i];
        wino_filter(v, g, u + at, xstride);
    }
    return CP_OK;
}

/* One block: global tiles [t0, t0 + nt) in (n, tile row, tile column) order. */
typedef struct {
    const cpa_wino_variant *var;
    const cp_run_args *a;
    int64_t t0, nt, ld;
    float *v, *m, *rows;
    size_t rows_per_worker;
    const void *kern;
    cpa_blocked_kernel tile;     /* the packed GEMM's tile kernel */
} wino_block;

/* Runs body for each segment of the block: a run of tiles [tx0, tx1) of tile
 * row ty of image n, whose first tile is column `col` of the block. */
#define WINO_FOR_SEGMENTS(blk, body)                                                    \
    do {                                                                                \
        const int64_t tw_ = wino_tiles_w((blk)->var, (blk)->a->shape);                  \
        const int64_t timg_ = wino_tiles_h((blk)->var, (blk)->a->shape) * tw_;          \
        for (int64_t t_ = (blk)->t0; t_ < (blk)->t0 + (blk)->nt;) {                     \
            const int64_t n = t_ / timg_, ty = (t_ % timg_) / tw_, tx0 = t_ % tw_;     \
            const int64_t left_ = (blk)->t0 + (blk)->nt - t_;                           \
            const int64_t tx1 = tx0 + left_ < tw_ ? tx0 + left_ : tw_;                  \
            const int64_t col = t_ - (blk)->t0;                                         \
            body;                                                                       \
            t_ += tx1 - tx0;                                                            \
        }                                                                               \
    } while (0)

/* Fills row buffer r (len input columns from padded column ulo of input row
 * ih, zero outside the image) with branches only at the row's two edges. */
static void wino_load_row(const cp_shape *s, const float *xc, int64_t ih, int64_t ulo,
                          int64_t len, float *r) {
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

static void wino_input_task(void *arg, int64_t begin, int64_t end, int worker) {
    const wino_block *blk = arg;
    const cpa_wino_variant *var = blk->var;
    const cp_shape *s = blk->a->shape;
    float *rows = blk->rows + (size_t)worker * blk->rows_per_worker;
    const int64_t vstride = wino_pstride(s->c, blk->ld); /* floats from V[xi] to V[xi+1] */
    for (int64_t c = begin; c < end; c++) {
        WINO_FOR_SEGMENTS(blk, {
            const float *xc = blk->a->x + (n * s->c + c) * s->h * s->w;
            const int64_t len = var->m * (tx1 - tx0) + 2;
            for (int i = 0; i < var->alpha; i++)
                wino_load_row(s, xc, var->m * ty - s->pad_top + i, var->m * tx0, len,
                              rows + i * len);
            var->input(blk->kern, rows, len, tx1 - tx0, blk->v + c * blk->ld + col, vstride);
        });
    }
}

static void wino_output_task(void *arg, int64_t begin, int64_t end, int worker) {
    const wino_block *blk = arg;
    const cpa_wino_variant *var = blk->var;
    const cp_shape *s = blk->a->shape;
    const int64_t P = cp_shape_out_h(s), Q = cp_shape_out_w(s), m = var->m;
    const int64_t mstride = wino_pstride(s->k, blk->ld);
    float *scratch = blk->rows + (size_t)worker * blk->rows_per_worker;
    for (int64_t k = begin; k < end; k++) {
        const float bias = blk->a->bias ? blk->a->bias[k] : 0.0f;
        WINO_FOR_SEGMENTS(blk, {
            float *yk = blk->a->y + (n * s->k + k) * P * Q;
            const int64_t nrows = P - m * ty < m ? P - m * ty : m;
            const int64_t ncols = Q - m * tx0 < m * (tx1 - tx0) ? Q - m * tx0 : m * (tx1 - tx0);
            var->output(blk->kern, blk->m + k * blk->ld + col, mstride, bias,
                        yk + m * ty * Q + m * tx0, Q, nrows, ncols, tx1 - tx0, scratch);
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
        const float *vx = blk->v + xi * wino_pstride(C, ld);
        float *mx = blk->m + xi * wino_pstride(K, ld) + kt * MR * ld;
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

/* The packed GEMM with the channel-vector tile: task (xi, kt) computes rows
 * KR kt .. KR kt + KR-1 of M[xi] over the block's columns in chunks of at
 * most CPA_CV_NP (split evenly: 16 = 6+5+5), reading V[xi] rows as C input
 * channels of one tap.  c=k=512 h=w=7 (16 tiles), whole layer: 1.99..2.10 ms
 * against 2.76 ms with the pixel-vector tile (fastest of 15..30, one core of
 * the Xeon, a shared and noisy machine). */
static void wino_cv_task(void *arg, int64_t begin, int64_t end, int worker) {
    (void)worker;
    static const int64_t tap0[1] = {0};
    const wino_block *blk = arg;
    const cp_shape *s = blk->a->shape;
    const int64_t C = s->c, K = s->k, nkv = (K + KR - 1) / KR, ld = blk->ld;
    const int64_t nch = (blk->nt + CPA_CV_NP - 1) / CPA_CV_NP;
    for (int64_t task = begin; task < end; task++) {
        const int64_t xi = task / nkv, kt = task % nkv;
        cpa_cv_tile t = {C, 1, ld, tap0, NULL,
                         (const float *)blk->a->weights + (xi * nkv + kt) * C * KR, KR, NULL,
                         ld, NULL, 0, (int)(K - kt * KR < KR ? K - kt * KR : KR), 1};
        for (int64_t ch = 0; ch < nch; ch++) {
            const int64_t c0 = ch * blk->nt / nch, c1 = (ch + 1) * blk->nt / nch;
            t.x = blk->v + xi * wino_pstride(C, ld) + c0;
            t.y = blk->m + xi * wino_pstride(K, ld) + kt * KR * ld + c0;
            t.np = (int)(c1 - c0);
            blk->tile.cv(&t);
        }
    }
}

cp_status cpa_wino_run(const cpa_wino_variant *var, const cp_run_args *a) {
    const cp_shape *s = a->shape;
    const int64_t C = s->c, K = s->k, np = wino_points(var);
    const int64_t tb = a->params->v[CPA_WINO_TILE_BLOCK], ld = wino_ld(tb);
    const int64_t all = s->n * wino_tiles_h(var, s) * wino_tiles_w(var, s);
    const size_t vbytes = cpa_align64((size_t)(np * wino_pstride(C, ld)) * sizeof(float));
    const size_t mbytes = cpa_align64((size_t)(np * wino_pstride(K, ld)) * sizeof(float));
    char *ws = a->workspace;
    wino_block blk = {
        .var = var,
        .a = a,
        .ld = ld,
        .v = (float *)ws,
        .m = (float *)(ws + vbytes),
        .rows = (float *)(ws + vbytes + mbytes),
        .rows_per_worker = wino_rowbuf_floats(var, s, tb),
        .kern = var->select(a->params->v[CPA_WINO_KERNELS]),
        .tile = cpa_blocked_tile_select(a->params->v[CPA_WINO_KERNELS]), /* reads stay inside */
    };
    for (int64_t t0 = 0; t0 < all; t0 += tb) {
        blk.t0 = t0;
        blk.nt = all - t0 < tb ? all - t0 : tb;
        cp_parallel_for(a->exec, C, wino_input_task, &blk);
        if (wino_cv(var, s, a->params))
            cp_parallel_for(a->exec, np * ((K + KR - 1) / KR), wino_cv_task, &blk);
        else if (a->params->v[CPA_WINO_GEMM] == 1)
            cp_parallel_for(a->exec, np * wino_ktiles(s), wino_packed_task, &blk);
        else
            cpa_sgemm_batch(a->exec, np, K, blk.nt, C, a->weights, K * C, C, blk.v,
                            wino_pstride(C, ld), ld, blk.m, wino_pstride(K, ld), ld);
        cp_parallel_for(a->exec, K, wino_output_task, &blk);
    }
    return CP_OK;
}

/* Which builds a run uses (bench's isa column). */
const char *cpa_wino_isa(const cp_params *p) {
    static const char *const names[2][4] = {
        {"portable", "portable", "avx2", "avx512"},
        {"portable+blas", "portable+blas", "avx2+blas", "avx512+blas"}};
    return names[p->v[CPA_WINO_GEMM] == 0][cpa_isa_resolve(p->v[CPA_WINO_KERNELS])];
}
