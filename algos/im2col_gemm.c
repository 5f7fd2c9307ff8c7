/* im2col_gemm: lower the input to a column matrix, multiply by the weights
 * with OpenBLAS's sgemm.
 *
 * Per image n and group g the layer is one matrix product
 *   Y_g (K/g x P*Q) = W_g (K/g x C/g*R*S) * X_g (C/g*R*S x P*Q)
 * where W_g is the group's KCRS weights read as a row-major matrix and X_g the
 * column matrix (im2col_lower.h).  To keep the workspace bounded, X_g is built
 * for `row_block` output rows at a time; the product of a block of output rows
 * lands directly in y (a K/g x rows*Q sub-matrix with leading dimension P*Q).
 *
 * 1x1 kernels at stride 1 (no padding; dilation is moot) skip the lowering: the
 * input planes of a group already are X_g (C/g x H*W), so the GEMM reads x
 * directly and no workspace is needed.
 *
 * Weights.  Cross-correlation uses the raw KCRS weights (prepared_size 0).
 * True convolution flips them once in prepare() (cp_weights_flip), except for
 * 1x1 kernels where the flip is the identity and the raw weights are used.
 *
 * Threads.  With at least two blocks (image x group x row block) per worker,
 * or a whole number of blocks per worker, the blocks are shared out: each worker lowers its blocks into its own
 * column buffer and multiplies them itself (OpenBLAS on one thread, as the
 * pool sets it), so no worker waits for another and a buffer never leaves
 * its worker's L2.  With fewer blocks, each block's lowering is split over
 * rows of X_g (when large enough to pay for it; every row starts on its own
 * cache line, so workers never share one) and its GEMM over the same workers
 * by columns (gemm_split.h).  With a one-worker executor the GEMM is one call
 * and OpenBLAS threads as the caller set it.
 * Images are not batched into one GEMM: with NCHW output the columns of two
 * images do not form one matrix in y, and batching would need a copy. */
#include <cblas.h>
#include <limits.h>
#include <string.h>

#include "algos/core/cpa.h"
#include "algos/core/gemm_split.h"
#include "algos/core/im2col_lower.h"

enum { PARAM_ROW_BLOCK = 0 };

/* Below this many column-matrix elements a block is lowered on the calling
 * thread: handing it to workers costs more than copying it (common practice,
 * no source; 64 Ki floats = 256 KiB, about half an L2 here). */
#define LOWER_PARALLEL_MIN ((int64_t)1 << 16)

static const cp_param_desc im2col_params[] = {
    {"row_block",
     "output rows lowered per GEMM (values above P mean P); default: the most rows whose "
     "column block fits in half of L2 but at least 512 columns, split into equal blocks",
     1, 1 << 24},
};

/* Dilation does not matter for a 1x1 kernel; the validator already refuses
 * padding on one (it would give outputs that see only padding). */
static int is_pointwise(const cp_shape *s) {
    return s->r == 1 && s->s == 1 && s->stride_h == 1 && s->stride_w == 1 && s->pad_top == 0 &&
           s->pad_left == 0 && s->pad_bottom == 0 && s->pad_right == 0;
}

static int64_t col_rows(const cp_shape *s) { return (s->c / s->groups) * s->r * s->s; }

/* Leading dimension of a column block of `pixels` columns: a whole number of
 * 64-byte lines, so that rows never share a line. */
static int64_t col_ld(int64_t pixels) { return (pixels + 15) & ~(int64_t)15; }

/* Bytes of one column buffer (a whole number of lines: rows never share one). */
static size_t col_bytes(const cp_shape *s, int64_t rb) {
    return (size_t)(col_rows(s) * col_ld(rb * cp_shape_out_w(s))) * sizeof(float);
}

static int64_t clamp_rows(const cp_shape *s, int64_t rb) {
    const int64_t P = cp_shape_out_h(s);
    return rb < 1 ? 1 : (rb > P ? P : rb);
}

/* The most output rows whose column block fits in `budget` bytes (at least 1),
 * evened out so that the blocks of an image have (nearly) equal size. */
static int64_t rows_for_budget(const cp_shape *s, size_t budget) {
    const int64_t P = cp_shape_out_h(s), Q = cp_shape_out_w(s), rows = col_rows(s);
    int64_t rb = P;
    while (rb > 1 && (size_t)(rows * col_ld(rb * Q)) * sizeof(float) > budget) rb--;
    const int64_t nblocks = (P + rb - 1) / rb;
    return (P + nblocks - 1) / nblocks;
}

static int im2col_supports(const cp_shape *s, cp_flip flip, char *why, size_t cap) {
    (void)flip;
    /* OpenBLAS here takes 32-bit int dimensions (blasint). */
    const int64_t lim = sizeof(blasint) >= 8 ? INT64_MAX : INT_MAX;
    const int64_t P = cp_shape_out_h(s), Q = cp_shape_out_w(s);
    const int64_t dims[] = {s->k / s->groups, col_rows(s), col_ld(P * Q), s->h * s->w};
    for (size_t i = 0; i < sizeof dims / sizeof dims[0]; i++)
        if (dims[i] > lim)
            return cpa_refuse(why, cap, "a GEMM dimension (%lld) exceeds OpenBLAS's int range",
                              (long long)dims[i]);
    return 1;
}

/* The GEMM of a block should be at least this many columns wide: narrower
 * products leave OpenBLAS's packed panels mostly empty (measured below). */
#define MIN_GEMM_COLS 512

/* Default: the column block in half of L2, so that the GEMM reads it from L2
 * right after the lowering wrote it, but at least MIN_GEMM_COLS columns.
 * Measured on one Zen 3 core (fastest sample of each, shared machine): the
 * ResNet-50 stem (7x7/2, 112x112 out) 3.86 ms at 7 rows vs 5.61 ms for the
 * whole image (7.4 MB column matrix, from L3); c=k=64 3x3 56x56 2.62 vs 3.03
 * ms; c=k=512 3x3 7x7 is best whole (3.52 ms) and 2.5x slower at 2 rows
 * (14 columns). */
static int64_t default_rows(const cp_shape *s, const cp_cache_sizes *caches) {
    const int64_t P = cp_shape_out_h(s), Q = cp_shape_out_w(s);
    int64_t rb = rows_for_budget(s, caches->l2 / 2);
    const int64_t min_rows = (MIN_GEMM_COLS + Q - 1) / Q;
    if (rb < min_rows) {
        rb = min_rows < P ? min_rows : P;
        const int64_t nblocks = (P + rb - 1) / rb;
        rb = (P + nblocks - 1) / nblocks;
    }
    return rb;
}

static void im2col_defaults(const cp_shape *s, const cp_cache_sizes *caches, cp_params *out) {
    out->v[PARAM_ROW_BLOCK] = default_rows(s, caches);
}

static int push_unique(cp_params *out, int n, int max, int64_t rb) {
    for (int i = 0; i < n; i++)
        if (out[i].v[PARAM_ROW_BLOCK] == rb) return n;
    if (n >= max) return n;
    memset(&out[n], 0, sizeof out[n]);
    out[n].v[PARAM_ROW_BLOCK] = rb;
    return n + 1;
}

/* The default first, then blocks for half of L3 and the whole image, then
 * blocks sized for L2 and for a quarter of L3, then halves of the image. */
static int im2col_candidates(const cp_shape *s, const cp_cache_sizes *caches, cp_params *out,
                             int max) {
    if (max <= 0) return 0;
    const int64_t P = cp_shape_out_h(s);
    int n = 0;
    n = push_unique(out, n, max, default_rows(s, caches));
    if (is_pointwise(s)) return n; /* row_block is not used */
    n = push_unique(out, n, max, rows_for_budget(s, caches->l3 / 2));
    n = push_unique(out, n, max, P);
    n = push_unique(out, n, max, rows_for_budget(s, caches->l2 / 2));
    n = push_unique(out, n, max, rows_for_budget(s, caches->l3 / 4));
    n = push_unique(out, n, max, (P + 1) / 2);
    n = push_unique(out, n, max, (P + 3) / 4);
    return n;
}

/* One column buffer per worker (see "Threads" above); a single worker's is
 * also the shared buffer when the blocks are too few to go round. */
static size_t im2col_workspace_size(const cp_shape *s, cp_flip flip, const cp_params *p,
                                    int nthreads) {
    (void)flip;
    if (is_pointwise(s)) return 0;
    if (nthreads < 1) nthreads = 1;
    const int64_t rb = clamp_rows(s, p->v[PARAM_ROW_BLOCK]);
    return (size_t)nthreads * col_bytes(s, rb);
}

static size_t im2col_prepared_size(const cp_shape *s, cp_flip flip, const cp_params *p) {
    (void)p;
    return cpa_preflip_size(s, flip, 1);
}

/* Adds bias[k] to the first `cols` entries of each of nk rows ld apart. */
static void add_bias_rows(float *y, int64_t ld, const float *bias, int64_t nk, int64_t cols) {
    for (int64_t k = 0; k < nk; k++) {
        const float b = bias[k];
        float *row = y + k * ld;
        for (int64_t i = 0; i < cols; i++) row[i] += b;
    }
}

typedef struct {
    const cp_shape *s;
    const float *xg;
    int64_t p0, p1, ldcol;
    float *col;
} lower_job;

static void lower_task(void *arg, int64_t begin, int64_t end, int worker) {
    (void)worker;
    const lower_job *j = arg;
    cpa_im2col_lower_rows(j->s, j->xg, j->p0, j->p1, j->col, j->ldcol, begin, end);
}

static void run_pointwise(const cp_run_args *a, const float *w) {
    const cp_shape *s = a->shape;
    const int64_t G = s->groups, cg = s->c / G, kg = s->k / G, HW = s->h * s->w;
    for (int64_t n = 0; n < s->n; n++)
        for (int64_t g = 0; g < G; g++) {
            float *yg = a->y + (n * s->k + g * kg) * HW;
            cpa_sgemm_cols(a->exec, kg, HW, cg, w + g * kg * cg, cg, a->x + (n * s->c + g * cg) * HW,
                           HW, yg, HW);
            if (a->bias) add_bias_rows(yg, HW, a->bias + g * kg, kg, HW);
        }
}

/* Per-worker blocks: block b = (image, group, row block) flattened; each
 * worker lowers its blocks into its own column buffer and multiplies them on
 * its own, single-threaded OpenBLAS call, so the buffer stays in its L2. */
typedef struct {
    const cp_run_args *a;
    int64_t rb, nrb, ldcol;
    size_t col_floats; /* floats per worker buffer */
} block_job;

static void block_task(void *arg, int64_t begin, int64_t end, int worker) {
    const block_job *j = arg;
    const cp_run_args *a = j->a;
    const cp_shape *s = a->shape;
    const int64_t G = s->groups, cg = s->c / G, kg = s->k / G;
    const int64_t P = cp_shape_out_h(s), Q = cp_shape_out_w(s), PQ = P * Q, rows = col_rows(s);
    const float *w = a->weights;
    float *col = (float *)a->workspace + (size_t)worker * j->col_floats;
    for (int64_t b = begin; b < end; b++) {
        const int64_t n = b / (G * j->nrb), g = (b / j->nrb) % G, p0 = (b % j->nrb) * j->rb;
        const int64_t p1 = p0 + j->rb < P ? p0 + j->rb : P, cols = (p1 - p0) * Q;
        const float *xg = a->x + (n * s->c + g * cg) * s->h * s->w;
        float *yg = a->y + (n * s->k + g * kg) * PQ;
        cpa_im2col_lower_rows(s, xg, p0, p1, col, j->ldcol, 0, rows);
        cpa_sgemm_cols(NULL, kg, cols, rows, w + g * kg * rows, rows, col, j->ldcol, yg + p0 * Q,
                       PQ);
        if (a->bias) add_bias_rows(yg + p0 * Q, PQ, a->bias + g * kg, kg, cols);
    }
}

static cp_status im2col_run(const cp_run_args *a) {
    const cp_shape *s = a->shape;
    const float *w = a->weights;
    if (is_pointwise(s)) {
        run_pointwise(a, w);
        return CP_OK;
    }
    const int64_t G = s->groups, cg = s->c / G, kg = s->k / G;
    const int64_t P = cp_shape_out_h(s), Q = cp_shape_out_w(s), PQ = P * Q;
    const int64_t rows = col_rows(s), rb = clamp_rows(s, a->params->v[PARAM_ROW_BLOCK]);
    const int64_t ldcol = col_ld(rb * Q);
    const int nt = cp_exec_threads(a->exec), parallel = nt > 1;
    const int64_t nrb = (P + rb - 1) / rb;
    const int64_t nblk = s->n * G * nrb;
    if (parallel && (nblk >= 2 * (int64_t)nt || nblk % nt == 0)) {
        block_job bj = {a, rb, nrb, ldcol, col_bytes(s, rb) / sizeof(float)};
        cp_parallel_for(a->exec, s->n * G * nrb, block_task, &bj);
        return CP_OK;
    }
    float *col = a->workspace;
    for (int64_t n = 0; n < s->n; n++)
        for (int64_t g = 0; g < G; g++) {
            const float *xg = a->x + (n * s->c + g * cg) * s->h * s->w;
            const float *wg = w + g * kg * rows;
            float *yg = a->y + (n * s->k + g * kg) * PQ;
            for (int64_t p0 = 0; p0 < P; p0 += rb) {
                const int64_t p1 = p0 + rb < P ? p0 + rb : P, cols = (p1 - p0) * Q;
                lower_job j = {s, xg, p0, p1, ldcol, col};
                if (parallel && rows * cols >= LOWER_PARALLEL_MIN)
                    cp_parallel_for(a->exec, rows, lower_task, &j);
                else
                    lower_task(&j, 0, rows, 0);
                cpa_sgemm_cols(a->exec, kg, cols, rows, wg, rows, col, ldcol, yg + p0 * Q, PQ);
                if (a->bias) add_bias_rows(yg + p0 * Q, PQ, a->bias + g * kg, kg, cols);
            }
        }
    return CP_OK;
}

/* Tolerance: float sums of C/g*R*S products in OpenBLAS's blocked order.
 * Measured against cp_oracle_run + cp_error_measure (uniform [-1, 1) data,
 * bias on, both modes, OpenBLAS 0.3.21 with 1 and with 2 threads, same
 * results) on ResNet-50-like layers: c=512,k=512 3x3 7x7: 3.3e-8;
 * c=64,k=64 3x3 56x56: 1.4e-7; 1x1 c=1024,k=256 14x14: 7.6e-8; 7x7/2 stem
 * c=3,k=64 224x224: 2.7e-7; 1x1 c=256,k=64 56x56 batch 2: 3.3e-7 (the
 * maximum seen); depthwise 3x3 c=64 56x56: 1.9e-7; 3x3/2 groups 32 c=512
 * 14x14: 2.7e-7.  5e-6 is 15 times the largest measured error. */
const cp_algo cpa_im2col_gemm = {
    .name = "im2col_gemm",
    .summary = "im2col lowering + OpenBLAS sgemm per image and group; 1x1 GEMM on the input",
    .tolerance = 5e-6,
    .nparams = 1,
    .params = im2col_params,
    .supports = im2col_supports,
    .defaults = im2col_defaults,
    .candidates = im2col_candidates,
    .workspace_size = im2col_workspace_size,
    .prepared_size = im2col_prepared_size,
    .prepare = cpa_preflip_prepare,
    .run = im2col_run,
};
