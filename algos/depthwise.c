/* depthwise: direct convolution for layers where every output channel reads
 * exactly one input channel (groups == C, so C/groups == 1).  That is the
 * depthwise layer of MobileNet-style networks (channel multiplier K/C = 1)
 * and also covers channel multipliers above 1 (K = M*C: output channels
 * g*M .. g*M+M-1 read input channel g) and the single-channel layer C = 1,
 * groups = 1.  Any kernel size up to 16x16 taps, any stride, dilation and
 * padding the shape rules allow, both kernel orientations.
 *
 * Per (image, input channel) -- the unit of parallel work over the pool --
 * the input plane is copied once into the worker's slice of the workspace as
 * stride_h x stride_w "phase planes" (kernels/depthwise_row.h): padded element
 * (u, v) goes to phase plane (u mod sh, v mod sw), row u div sh, column v div
 * sw.  Tap (r, c) of output (p, j) then reads row p + r*dil_h div sh, column
 * j + c*dil_w div sw of one phase plane: one unit-stride stream per tap for
 * any stride and dilation, and consecutive output rows are consecutive rows
 * of that stream, so the row kernel (portable, AVX2 or AVX-512, chosen at run
 * time) runs along the output rows -- across row ends in the AVX-512 kernel --
 * with no branch per element.  For stride 2 the copy is the even/odd
 * deinterleave, done once per plane instead of a gather per tap.  The zero
 * border is written once per worker call and survives every later copy (the
 * fill writes the image's positions only).  A copy stays in L1/L2 (a 114x114
 * padded plane is 51 KiB) and is reused by the K/C output channels of the
 * group and by all R*S taps.
 *
 * With AVX-512 most shapes skip that copy (kernels/depthwise_plane.h, the
 * `path` parameter): small stride-1 'same'-width planes run as one flat
 * vector run with per-tap shifted masked loads from the unpadded input
 * (MobileNet's 7x7 and 14x14 layers), other stride-1 planes and some
 * stride-2 ones row by row straight from the input, border vectors masked,
 * rows outside the image read from a zero row.  At the AVX2 level, 3x3
 * shapes with strides of 1 and 2 read rows in place the same way
 * (kernels/depthwise_plane_avx2.c); other shapes keep the phase planes.
 *
 * Bytes it must move: the input and output once (4 (N C H W + N K P Q)) plus
 * the weights; work: 2 R S FLOPs per output.  At 9 taps that is about 2.25
 * FLOP per byte, so once the tensors leave L2 the layer is bound by memory
 * bandwidth, not by the FMA units. */
#include <string.h>

#include "algos/core/cpa.h"
#include "algos/kernels/blocked_tile.h"
#include "algos/kernels/depthwise_plane.h"
#include "algos/kernels/depthwise_row.h"

enum { DW_KERNELS = 0, DW_PATH, DW_NPARAMS };
enum { DW_PATH_AUTO = 0, DW_PATH_PHASE, DW_PATH_ROWS, DW_PATH_FLAT };
enum { DW_MAX_TAPS = 256, DW_BAND = 16 };

static const cp_param_desc dw_params[DW_NPARAMS] = {
    {"kernels", "row and fill kernels: 0 = the widest the CPU has (AVX-512, AVX2+FMA, "
                "portable); 1 = portable; 2 = AVX2; 3 = AVX-512 (a level the CPU lacks runs "
                "the widest below it); default 0", 0, 3},
    {"path", "how a plane is read: 0 = chosen from the shape (flat for small stride-1 "
             "'same'-width planes, in-place rows for other stride-1 planes, 3x3 stride-2 "
             "planes and stride-2 planes with Q <= 8 or over 32 KiB of input, else phase "
             "planes); 1 = "
             "phase-plane copy; 2 = in-place rows; 3 = flat plane; in-place forms need "
             "AVX-512 (or AVX2 for rows of 3x3 kernels with strides 1 and 2) and the shape "
             "they handle, else phase planes run; default 0", 0, 3},
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
    out->v[DW_PATH] = DW_PATH_AUTO;
}

/* Geometry of the phase planes of one input plane (depthwise_row.h). */
typedef struct {
    int64_t ld;    /* row length of a phase plane: ceil(Wp / stride_w) */
    int64_t plane; /* floats of one phase plane: ceil(Hp / stride_h) rows */
    int64_t total; /* floats of the copy: every phase plane plus the kernels' slack */
} dw_geom;

/* Slack: a tap's source starts at most one phase plane before the end of the
 * planes plus ld (its row and column offsets are below the plane's rows and
 * ld), and the kernels read nrows*ld + CPA_DW_PAD floats from it, nrows*ld
 * + its row offset * ld being at most one plane. */
static dw_geom dw_geometry(const cp_shape *s) {
    dw_geom g;
    const int64_t hp = s->h + s->pad_top + s->pad_bottom, wp = s->w + s->pad_left + s->pad_right;
    g.ld = (wp + s->stride_w - 1) / s->stride_w;
    g.plane = (hp + s->stride_h - 1) / s->stride_h * g.ld;
    g.total = (s->stride_h * s->stride_w * g.plane + g.ld + CPA_DW_PAD + 15) / 16 * 16;
    if (g.total < s->w) g.total = (s->w + 15) / 16 * 16; /* the in-place forms' zero row */
    return g;
}

static size_t dw_workspace_size(const cp_shape *s, cp_flip flip, const cp_params *p,
                                int nthreads) {
    (void)flip; (void)p;
    if (nthreads < 1) nthreads = 1;
    return cpa_align64((size_t)dw_geometry(s).total * sizeof(float)) * (size_t)nthreads;
}

static size_t dw_prepared_size(const cp_shape *s, cp_flip flip, const cp_params *p) {
    (void)p;
    return cpa_preflip_size(s, flip, 1);
}

typedef struct {
    const cp_run_args *a;
    dw_geom g;
    size_t slice; /* floats of one worker's copy */
    cpa_dw_kernels kn;
    const cpa_dw_plan *plan; /* the in-place form, or NULL: phase planes */
} dw_job;

/* In-place forms (depthwise_plane.h): no copy; the worker's slice holds the
 * zero row that stands for input rows outside the image. */
static void dw_task_inplace(const dw_job *j, int64_t begin, int64_t end, int worker) {
    const cp_run_args *a = j->a;
    const cp_shape *s = a->shape;
    const int64_t P = cp_shape_out_h(s), Q = cp_shape_out_w(s), RS = s->r * s->s,
                  mult = s->k / s->groups;
    float *zero = (float *)a->workspace + (size_t)worker * j->slice;
    memset(zero, 0, (size_t)s->w * sizeof(float));
    cpa_dw_plane pa = {.plan = j->plan, .zero = zero};
    for (int64_t ng = begin; ng < end; ng++) { /* (image, input channel) */
        const int64_t n = ng / s->groups, g = ng % s->groups;
        pa.x = a->x + ng * s->h * s->w;
        for (int64_t m = 0; m < mult; m++) {
            const int64_t k = g * mult + m;
            pa.w = (const float *)a->weights + k * RS;
            pa.bias = a->bias ? a->bias[k] : 0.0f;
            pa.y = a->y + (n * s->k + k) * P * Q;
            j->kn.plane(&pa);
        }
    }
}

static void dw_task(void *arg, int64_t begin, int64_t end, int worker) {
    const dw_job *j = arg;
    if (j->plan) {
        dw_task_inplace(j, begin, end, worker);
        return;
    }
    const cp_run_args *a = j->a;
    const cp_shape *s = a->shape;
    const int64_t P = cp_shape_out_h(s), Q = cp_shape_out_w(s);
    const int64_t R = s->r, S = s->s, sh = s->stride_h, sw = s->stride_w, mult = s->k / s->groups;
    float *buf = (float *)a->workspace + (size_t)worker * j->slice;
    const float *w = a->weights;
    /* Tap (r, c) reads phase plane (r*dil_h mod sh, c*dil_w mod sw) from row
     * r*dil_h div sh, column c*dil_w div sw. */
    const float *src[DW_MAX_TAPS];
    for (int64_t r = 0; r < R; r++)
        for (int64_t c = 0; c < S; c++) {
            const int64_t uh = r * s->dil_h, uw = c * s->dil_w;
            src[r * S + c] = buf + ((uh % sh) * sw + uw % sw) * j->g.plane + (uh / sh) * j->g.ld +
                             uw / sw;
        }
    memset(buf, 0, (size_t)j->g.total * sizeof(float)); /* the border, once per call */
    cpa_dw_fill fill = {.h = s->h, .w = s->w, .sh = sh, .sw = sw, .pt = s->pad_top,
                        .pl = s->pad_left, .ld = j->g.ld, .plane = j->g.plane, .buf = buf};
    cpa_dw_row row = {.q = Q, .nrows = P, .src_step = j->g.ld, .ntap = (int)(R * S), .src = src};
    /* Bands of DW_BAND output rows: each band's input rows are copied just
     * before the band is computed, so the row kernel finds them in L1 (a
     * whole 112x112 copy, 51 KiB, would not stay there). */
    const float *src0[DW_MAX_TAPS];
    memcpy(src0, src, (size_t)(R * S) * sizeof *src);
    for (int64_t ng = begin; ng < end; ng++) { /* (image, input channel) */
        const int64_t n = ng / s->groups, g = ng % s->groups;
        const float *xc = a->x + ng * s->h * s->w;
        int64_t filled = 0; /* input rows copied so far */
        for (int64_t p0 = 0; p0 < P; p0 += DW_BAND) {
            const int64_t np = P - p0 < DW_BAND ? P - p0 : DW_BAND;
            /* the band reads padded rows up to (p0 + np - 1) sh + (R - 1) dil_h */
            int64_t need = (p0 + np - 1) * s->stride_h + (R - 1) * s->dil_h + 1 - s->pad_top;
            if (need > s->h || p0 + np == P) need = s->h;
            if (need > filled) {
                fill.x = xc + filled * s->w;
                fill.h = need - filled;
                fill.pt = s->pad_top + filled;
                j->kn.fill(&fill);
                filled = need;
            }
            for (int64_t t = 0; t < R * S; t++) src[t] = src0[t] + p0 * j->g.ld;
            row.nrows = np;
            for (int64_t m = 0; m < mult; m++) {
                const int64_t k = g * mult + m;
                row.w = w + k * R * S;
                row.bias = a->bias ? a->bias[k] : 0.0f;
                row.y = a->y + (n * s->k + k) * P * Q + p0 * Q;
                j->kn.row(&row);
            }
        }
    }
}

/* 1 when the level's plane kernel runs form kind of shape s. */
static int dw_runs(const cp_shape *s, int kind, cpa_dw_kernels kn) {
    if (!kn.plane) return 0;
    const int ok = kind == CPA_DWP_FLAT ? cpa_dw_plan_flat_ok(s) : cpa_dw_plan_rows_ok(s);
    return ok && (!kn.plane_ok || kn.plane_ok(s, kind));
}

/* The form a plane is read in (CPA_DWP_*; NONE: phase planes). */
static int dw_form(const cp_shape *s, int64_t path, cpa_dw_kernels kn) {
    if (path == DW_PATH_PHASE) return CPA_DWP_NONE;
    const int flat = dw_runs(s, CPA_DWP_FLAT, kn), rows = dw_runs(s, CPA_DWP_ROWS, kn);
    if (path == DW_PATH_FLAT) return flat ? CPA_DWP_FLAT : CPA_DWP_NONE;
    if (path == DW_PATH_ROWS) return rows ? CPA_DWP_ROWS : CPA_DWP_NONE;
    if (flat) return CPA_DWP_FLAT;
    /* 3x3 stride 2x2 without dilation deinterleaves in registers (no wasted
     * FMAs, no copy) with AVX-512: 1.5x to 2x the phase planes on every
     * MobileNet v1 stride-2 layer (results/algos/README.md).  Other stride_w
     * 2 shapes compute the odd virtual columns and drop them, twice the FMAs
     * but no deinterleaving copy: that wins when an output row is one vector
     * (Q <= 8) or when the input plane is larger than L1 (the copy is then an
     * extra pass through L2/L3), and loses in between -- except for 3x3 at
     * the AVX2 level, whose rows kernel beat the phase planes 1.6x to 4.2x on
     * every MobileNet v1 layer. */
    const int k33 = s->r == 3 && s->s == 3 && s->dil_h == 1 && s->dil_w == 1;
    const int s2 = k33 && s->stride_h == 2 && s->stride_w == 2;
    if (rows && (s->stride_w == 1 || s2 || (k33 && kn.isa == CPA_ISA_AVX2) ||
                 cp_shape_out_w(s) <= 8 || s->h * s->w * (int64_t)sizeof(float) > 32 * 1024))
        return CPA_DWP_ROWS;
    return CPA_DWP_NONE;
}

/* The tuner's candidates: the shape's choice (path 0) first, then every
 * other form this CPU's widest kernels can run for the shape (phase planes
 * always, in-place rows and flat where they run), so that tune times each
 * form once and the table records which one won on the machine it ran on
 * (path 0's rule was measured on one machine). */
static int dw_candidates(const cp_shape *s, const cp_cache_sizes *caches, cp_params *out,
                         int max) {
    if (max <= 0) return 0;
    cp_params p;
    dw_defaults(s, caches, &p);
    const cpa_dw_kernels kn = cpa_dw_kernels_select(p.v[DW_KERNELS]);
    const int chosen = dw_form(s, DW_PATH_AUTO, kn);
    int n = 0;
    out[n++] = p;
    static const struct { int64_t path; int form; } alt[] = {
        {DW_PATH_PHASE, CPA_DWP_NONE}, {DW_PATH_ROWS, CPA_DWP_ROWS}, {DW_PATH_FLAT, CPA_DWP_FLAT}};
    for (size_t i = 0; i < sizeof alt / sizeof alt[0] && n < max; i++) {
        if (alt[i].form == chosen || dw_form(s, alt[i].path, kn) != alt[i].form) continue;
        out[n] = p;
        out[n++].v[DW_PATH] = alt[i].path;
    }
    return n;
}

static cp_status dw_run(const cp_run_args *a) {
    dw_job j = {.a = a, .g = dw_geometry(a->shape)};
    j.slice = cpa_align64((size_t)j.g.total * sizeof(float)) / sizeof(float);
    j.kn = cpa_dw_kernels_select(a->params ? a->params->v[DW_KERNELS] : 0);
    cpa_dw_plan plan;
    const int kind = dw_form(a->shape, a->params ? a->params->v[DW_PATH] : DW_PATH_AUTO, j.kn);
    if (kind != CPA_DWP_NONE) {
        cpa_dw_plan_build(a->shape, kind, &plan);
        j.plan = &plan;
    }
    cp_parallel_for(a->exec, a->shape->n * a->shape->groups, dw_task, &j);
    return CP_OK;
}

static const char *dw_isa(const cp_shape *s, const cp_params *p) {
    (void)s;
    return cpa_isa_name(cpa_dw_kernels_select(p ? p->v[DW_KERNELS] : 0).isa);
}

/* Tolerance: each output is the bias plus R*S products summed in a fixed
 * order (fused multiply-adds in the AVX2 and AVX-512 kernels), so the error is that of
 * direct's sum over a single channel; the grid and SciPy suites measure at
 * most a few 1e-7 relative to sum |x||w| + |b|.  Direct's 1e-5 is kept, which
 * still catches a wrong tap (an error of order 1). */
const cp_algo cpa_depthwise = {
    .name = "depthwise",
    .summary = "depthwise direct (groups == c, any channel multiplier): read in place "
               "(AVX-512; AVX2 for 3x3 strides 1-2) or from a padded phase-plane copy, "
               "vectorised along the output",
    .tolerance = 1e-5,
    .nparams = DW_NPARAMS,
    .params = dw_params,
    .supports = dw_supports,
    .defaults = dw_defaults,
    .candidates = dw_candidates,
    .workspace_size = dw_workspace_size,
    .prepared_size = dw_prepared_size,
    .prepare = cpa_preflip_prepare,
    .run = dw_run,
    .isa = dw_isa,
};
