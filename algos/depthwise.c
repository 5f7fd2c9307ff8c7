/* depthwise: direct convolution for layers where every output channel reads
 * exactly one input channel (groups == C, so C/groups == 1).  That is the
 * depthwise layer of MobileNet-style networks (channel multiplier K/C = 1)
 * and also covers channel multipliers above 1 (K = M*C: output channels
 * g*M .. g*M+M-1 read input channel g) and the single-channel layer C = 1,
 * groups = 1.  Any kernel size up to 16x16 taps, any stride, dilation and
 * padding the shape rules allow, both kernel orientations.
 *
 * Per (image, input channel) -- the unit of parallel work over the pool --
 * the input plane is copied once into the worker's slice of the workspace,
 * zero-padded and split into stride_w phases (phase f of a row holds padded
 * columns f, f + stride_w, f + 2 stride_w, ...).  Tap (r, s) of output row p
 * then reads consecutive floats of padded row p*stride_h + r*dil_h, phase
 * (s*dil_w) mod stride_w, from offset (s*dil_w) div stride_w: one unit-stride
 * stream per tap for any stride and dilation, so the row kernel
 * (kernels/depthwise_row.h; AVX2 or portable, chosen at run time) is
 * vectorised along the output row with no branch per element.  The copy
 * stays in L1/L2 (a 112x112 plane is 51 KiB) and is reused by the K/C output
 * channels of the group and by all R taps of every row.
 *
 * Bytes it must move: the input and output once (4 (N C H W + N K P Q)) plus
 * the weights; work: 2 R S FLOPs per output.  At 9 taps that is about 2.25
 * FLOP per byte, so outside L2 the layer is bound by memory bandwidth, not by
 * the FMA units. */
#include <string.h>

#include "algos/core/cpa.h"
#include "algos/kernels/depthwise_row.h"

enum { DW_KERNELS = 0, DW_NPARAMS };
enum { DW_MAX_TAPS = 256 };

static const cp_param_desc dw_params[DW_NPARAMS] = {
    {"kernels", "row kernel: 0 = AVX2 when the CPU has AVX2+FMA, else portable; "
                "1 = portable; default 0", 0, 1},
};

static int dw_supports(const cp_shape *s, cp_flip flip, char *why, size_t cap) {
    (void)flip; /* CP_CONV: the weights are flipped in prepare */
    if (s->c != s->groups)
        return cpa_refuse(why, cap, "depthwise needs groups == c (one input channel per "
                                    "output; got c=%lld groups=%lld)",
                          (long long)s->c, (long long)s->groups);
    if (s->r * s->s > DW_MAX_TAPS)
        return cpa_refuse(why, cap, "kernel %lldx%lld has more than %d taps", (long long)s->r,
                          (long long)s->s, DW_MAX_TAPS);
    return 1;
}

static void dw_defaults(const cp_shape *s, const cp_cache_sizes *caches, cp_params *out) {
    (void)s; (void)caches;
    out->v[DW_KERNELS] = 0;
}

/* Geometry of the padded, phase-split copy of one input plane. */
typedef struct {
    int64_t rows;  /* H + pad_top + pad_bottom */
    int64_t len;   /* floats of one phase of one row */
    int64_t plane; /* floats of the whole copy, a multiple of 16 */
} dw_geom;

static dw_geom dw_geometry(const cp_shape *s) {
    dw_geom g;
    const int64_t Q = cp_shape_out_w(s);
    const int64_t offmax = (s->s - 1) * s->dil_w / s->stride_w;
    g.rows = s->h + s->pad_top + s->pad_bottom;
    g.len = (Q + offmax + CPA_DW_PAD + 15) / 16 * 16;
    g.plane = g.rows * s->stride_w * g.len;
    return g;
}

static size_t dw_workspace_size(const cp_shape *s, cp_flip flip, const cp_params *p,
                                int nthreads) {
    (void)flip; (void)p;
    if (nthreads < 1) nthreads = 1;
    return cpa_align64((size_t)dw_geometry(s).plane * sizeof(float)) * (size_t)nthreads;
}

static size_t dw_prepared_size(const cp_shape *s, cp_flip flip, const cp_params *p) {
    (void)p;
    return cpa_preflip_size(s, flip, 1);
}

/* Smallest j >= 0 with f + sw*j >= lo (lo may be negative). */
static int64_t dw_first_at_least(int64_t lo, int64_t f, int64_t sw) {
    const int64_t d = lo - f;
    return d <= 0 ? 0 : (d + sw - 1) / sw;
}

/* Copies input plane xc into buf (layout in the file comment). */
static void dw_fill(const cp_shape *s, const dw_geom *g, const float *xc, float *buf) {
    const int64_t sw = s->stride_w, W = s->w;
    for (int64_t i = 0; i < g->rows; i++) {
        const int64_t ih = i - s->pad_top;
        float *row = buf + i * sw * g->len;
        if (ih < 0 || ih >= s->h) {
            memset(row, 0, (size_t)(sw * g->len) * sizeof(float));
            continue;
        }
        const float *xr = xc + ih * W;
        for (int64_t f = 0; f < sw; f++) {
            float *d = row + f * g->len;
            /* padded column u = f + sw*j is input column u - pad_left */
            int64_t lo = dw_first_at_least(s->pad_left, f, sw);
            int64_t hi = dw_first_at_least(s->pad_left + W, f, sw);
            if (lo > g->len) lo = g->len;
            if (hi > g->len) hi = g->len;
            if (hi < lo) hi = lo;
            memset(d, 0, (size_t)lo * sizeof(float));
            if (hi > lo) {
                const float *src = xr + (f + sw * lo - s->pad_left);
                if (sw == 1)
                    memcpy(d + lo, src, (size_t)(hi - lo) * sizeof(float));
                else if (sw == 2) /* the common strided case, a constant stride */
                    for (int64_t j = lo; j < hi; j++) d[j] = src[2 * (j - lo)];
                else
                    for (int64_t j = lo; j < hi; j++) d[j] = src[(j - lo) * sw];
            }
            memset(d + hi, 0, (size_t)(g->len - hi) * sizeof(float));
        }
    }
}

typedef struct {
    const cp_run_args *a;
    dw_geom g;
    size_t slice; /* floats of one worker's copy */
    cpa_dw_row_fn row;
} dw_job;

static void dw_task(void *arg, int64_t begin, int64_t end, int worker) {
    const dw_job *j = arg;
    const cp_run_args *a = j->a;
    const cp_shape *s = a->shape;
    const int64_t P = cp_shape_out_h(s), Q = cp_shape_out_w(s);
    const int64_t R = s->r, S = s->s, sw = s->stride_w, mult = s->k / s->groups;
    float *buf = (float *)a->workspace + (size_t)worker * j->slice;
    const float *w = a->weights;
    /* Tap (r, c) of output row 0 reads padded row r*dil_h, phase u mod sw,
     * from u div sw (u = c*dil_w); row p adds p*stride_h padded rows. */
    const float *src[DW_MAX_TAPS];
    for (int64_t r = 0; r < R; r++)
        for (int64_t c = 0; c < S; c++) {
            const int64_t u = c * s->dil_w;
            src[r * S + c] = buf + (r * s->dil_h * sw + u % sw) * j->g.len + u / sw;
        }
    cpa_dw_row row = {.q = Q, .nrows = P, .src_step = s->stride_h * sw * j->g.len,
                      .ntap = (int)(R * S), .src = src};
    for (int64_t ng = begin; ng < end; ng++) { /* (image, input channel) */
        const int64_t n = ng / s->groups, g = ng % s->groups;
        dw_fill(s, &j->g, a->x + ng * s->h * s->w, buf);
        for (int64_t m = 0; m < mult; m++) {
            const int64_t k = g * mult + m;
            row.w = w + k * R * S;
            row.bias = a->bias ? a->bias[k] : 0.0f;
            row.y = a->y + (n * s->k + k) * P * Q;
            j->row(&row);
        }
    }
}

static cp_status dw_run(const cp_run_args *a) {
    dw_job j = {.a = a, .g = dw_geometry(a->shape)};
    j.slice = cpa_align64((size_t)j.g.plane * sizeof(float)) / sizeof(float);
    j.row = cpa_dw_row_select(a->params ? a->params->v[DW_KERNELS] : 0);
    cp_parallel_for(a->exec, a->shape->n * a->shape->groups, dw_task, &j);
    return CP_OK;
}

/* Tolerance: each output is the bias plus R*S products summed in a fixed
 * order (fused multiply-adds in the AVX2 kernel), so the error is that of
 * direct's sum over a single channel; the grid and SciPy suites measure at
 * most a few 1e-7 relative to sum |x||w| + |b|.  Direct's 1e-5 is kept, which
 * still catches a wrong tap (an error of order 1). */
const cp_algo cpa_depthwise = {
    .name = "depthwise",
    .summary = "depthwise direct (groups == c, any channel multiplier): padded plane per "
               "channel, row kernel vectorised along the output row",
    .tolerance = 1e-5,
    .nparams = DW_NPARAMS,
    .params = dw_params,
    .supports = dw_supports,
    .defaults = dw_defaults,
    .workspace_size = dw_workspace_size,
    .prepared_size = dw_prepared_size,
    .prepare = cpa_preflip_prepare,
    .run = dw_run,
};
