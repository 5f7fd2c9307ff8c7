/* blocked: cache- and register-blocked direct convolution.
 * blocked_flipidx: the same loops computing true convolution on weights
 * packed unflipped, reading kernel tap (R-1-r, S-1-s) for input tap (r, s):
 * the tile kernel walks each channel's taps backwards (for the cache study).
 *
 * The loops here are portable C and never name a processor; the register
 * tile (6 output channels x 2 segments of 8 pixels with AVX2, x 4 segments of
 * 16 with AVX-512; blocked_tile.h) is called through a function pointer chosen
 * at run time, and the loops take its segment length nv and count from it.
 *
 * Data movement inside run():
 *  - Input: unless padding is 0 and stride_w is 1, each image is copied into
 *    the workspace zero padded, with each row split into stride_w phases
 *    (column col stored at (col % stride_w) * Wph + col / stride_w), so that
 *    the pixels of a segment read consecutive floats at every stride and
 *    dilation.  Otherwise x is read in place.  A strided 1x1 layer without
 *    padding copies only the pixels it reads, as dense P x Q planes, and is
 *    then computed as a stride-1 1x1 layer (a quarter of the copy at stride
 *    2, and whole segments).
 *  - Pixels: a tile takes nseg segments of up to nv consecutive output pixels
 *    of a row block.  "Run" mode: the output plane is read as one run of
 *    virtual pixels v = p * L + q over rows of L = stride_h * wrow (the row
 *    length of the buffer read), of which the q < Q are outputs, so that
 *    segments cross rows and 7x7 or 14x14 planes still fill the vectors; the
 *    L - Q padding lanes of a row are computed and dropped (keep masks,
 *    compressed stores).  Taken when L == Q (1x1 stride-1 unpadded layers: no
 *    lane dropped) or when the kernel takes masks and L is at most the lanes
 *    row segments would use (a 7x7 plane padded to 9: 49 outputs in 64 lanes
 *    instead of 7 of every 16).  Otherwise each row is cut into segments.
 *  - Channel-vector mode (small planes): when the kernel has a channel-vector
 *    tile (AVX-512) and the pixel tiles would keep under 85 % of the lanes
 *    they compute (7x7: 49 of 64; 14x14 3x3 read through 16-float rows: 196
 *    of 256) while K/groups fills 64-channel vectors to 85 %, tiles are
 *    64 output channels along the vectors x up to 7 pixels of a row
 *    (blocked_tile.h), every pixel kept.  Tasks are (group, 64-channel tile,
 *    block of pb rows); kb is unused; cb defaults to a tile's weights in half
 *    of L2.  Strided layers read the same phase-split (or subsampled) buffer.
 *  - Weights (prepare): per group, per tile of 6 (channel-vector mode: 64)
 *    output channels, [c][r][s][6 or 64] with zero channels past K/groups;
 *    flipped for CP_CONV by `blocked`.
 * Loops, outermost first: image n; then in parallel over tasks
 * (group, block of kb channel tiles, block of pb output rows): input-channel
 * blocks of cb, channel tiles, groups of nseg pixel segments, tile kernel.
 * The weights of one tile for cb channels are sized to stay in L1 while the
 * pixels of the row block stream past; the input rows of a block stay in L2
 * while the kb channel tiles reuse them.  Tasks write disjoint (channel tile,
 * row block) regions of y: two workers can meet on an output cache line only
 * where two row blocks of one plane touch, written once by each.  No
 * per-worker scratch is needed (the tile lives in registers), so the
 * workspace is the tap table and one padded image, shared by all workers. */
#include <string.h>

#include "algos/kernels/blocked_tile.h"
#include "algos/core/cpa.h"

enum { P_KB = 0, P_CB, P_PB, P_TILE_ISA, P_ORDER, NPARAMS };
enum { MR = CPA_BLOCKED_MR, KR = CPA_CV_KR, SLACK = CPA_BLOCKED_SEGS * CPA_BLOCKED_NV_MAX };

static const cp_param_desc blocked_params[NPARAMS] = {
    {"kb", "output-channel tiles of 6 per cache block; default: weights of the block "
           "in a quarter of L2, at least 1 (unused by the 64-channel tiles of small planes)",
     1, 1 << 20},
    {"cb", "input channels per cache block; default: one tile's weights in half of L1 and "
           "its input vectors in the other half, split into equal blocks", 1,
     (int64_t)1 << 30},
    {"pb", "output rows per cache block; default: the block's input rows in half of L2, "
           "halved until there are 8 tasks, one more if its segments are not whole tiles", 1, (int64_t)1 << 30},
    {"tile_isa", "tile kernel: 0 = best the CPU supports, 1 = portable C, 2 = AVX2 6x16, "
                 "3 = AVX-512 6x64 (a level the CPU lacks runs the widest below it)", 0, 3},
    {"order", "inside an input-channel block: 0 = channel tiles outer (a tile's weights stay "
              "in L1), 1 = pixel pairs outer (a pair's input vectors stay in L1); default 1 "
              "for 1x1 layers, else 0", 0, 1},
};

/* Sizes derived from the shape that run(), prepare and the sizes agree on. */
typedef struct {
    int64_t P, Q, cg, kg, ntk, ntap;
    int copy;                /* 1: pad/phase-split the input into the workspace */
    int sub;                 /* 1: 1x1, no pad, strided: copy only the pixels read (P x Q) */
    int64_t sh;              /* input rows between output rows in the buffer read */
    int64_t wph, wrow, hrow; /* floats per phase, per row; rows per channel */
    int64_t cs;              /* floats per channel of the input read */
    int nv, nseg;            /* the tile kernel's segment length and count */
    int run;                 /* 1: segments run along virtual rows (top of file) */
    int64_t vl, vtot;        /* virtual row length L; virtual pixels of a plane */
    int cv;                  /* 1: channel-vector tiles (small planes, top of file) */
    int64_t ntkv;            /* KR-channel tiles per group (channel-vector mode) */
} blk_geom;

static blk_geom geom(const cp_shape *s, const cpa_blocked_kernel *kn) {
    blk_geom g;
    g.P = cp_shape_out_h(s);
    g.Q = cp_shape_out_w(s);
    g.cg = s->c / s->groups;
    g.kg = s->k / s->groups;
    g.ntk = (g.kg + MR - 1) / MR;
    g.ntap = s->r * s->s;
    const int nopad =
        s->pad_top == 0 && s->pad_left == 0 && s->pad_bottom == 0 && s->pad_right == 0;
    g.sub = nopad && s->r == 1 && s->s == 1 && (s->stride_h > 1 || s->stride_w > 1);
    g.copy = g.sub || !(nopad && s->stride_w == 1);
    g.sh = g.sub ? 1 : s->stride_h;
    if (g.sub) { /* the strided 1x1 layer becomes a dense one on P x Q planes */
        g.wph = g.wrow = g.Q;
        g.hrow = g.P;
    } else if (g.copy) {
        const int64_t wp = s->w + s->pad_left + s->pad_right;
        g.wph = (wp + s->stride_w - 1) / s->stride_w;
        g.wrow = g.wph * s->stride_w;
        g.hrow = s->h + s->pad_top + s->pad_bottom;
    } else {
        g.wph = g.wrow = s->w;
        g.hrow = s->h;
    }
    g.cs = g.hrow * g.wrow;
    g.nv = kn->nv;
    g.nseg = kn->nseg;
    g.vl = g.sh * g.wrow;
    g.vtot = (g.P - 1) * g.vl + g.Q;
    g.run = g.vl == g.Q || (kn->masks && g.vl <= (g.Q + g.nv - 1) / g.nv * g.nv);
    /* Lanes the pixel-vector tiles compute for a plane (whole tiles), against
     * the P*Q they keep; the channel-vector tile keeps every pixel and loses
     * only the channels of a partial last KR tile. */
    const int64_t tl = (int64_t)g.nv * g.nseg;
    const int64_t lanes = g.run ? (g.vtot + tl - 1) / tl * tl
                                : g.P * (g.Q + g.nv - 1) / g.nv * g.nv;
    g.ntkv = (g.kg + KR - 1) / KR;
    g.cv = kn->cv != NULL && 100 * g.P * g.Q < 85 * lanes && 100 * g.kg >= 85 * g.ntkv * KR &&
           (KR - 1) * g.P * g.Q < INT32_MAX;
    return g;
}

/* The portable kernel's shape: for the sizes that do not depend on the tile. */
static const cpa_blocked_kernel any_kernel = {cpa_blocked_tile_ref_6x16, CPA_BLOCKED_NV, 2,
                                              0, 1, CPA_ISA_PORTABLE, NULL};

/* Segments of nv pixels in a block of pb rows: each row split into
 * ceil(Q/nv); in run mode the plane is one run of virtual pixels cut into
 * blocks of pb rows' worth of segments, rounded up to whole tiles. */
static int64_t block_segments(const blk_geom *g, int64_t pb) {
    if (g->run) {
        const int64_t n = (pb * g->vl + g->nv - 1) / g->nv;
        return (n + g->nseg - 1) / g->nseg * g->nseg;
    }
    return pb * ((g->Q + g->nv - 1) / g->nv);
}

/* Number of pixel blocks of a plane. */
static int64_t pixel_blocks(const blk_geom *g, int64_t pb) {
    if (g->run) {
        const int64_t total = (g->vtot + g->nv - 1) / g->nv;
        const int64_t per = block_segments(g, pb);
        return (total + per - 1) / per;
    }
    return (g->P + pb - 1) / pb;
}

static int64_t clamp64(int64_t v, int64_t lo, int64_t hi) { return v < lo ? lo : v > hi ? hi : v; }

/* --- parameters ------------------------------------------------------------ */

/* The defaults for the tile kernel of level isa (CPA_ISA_*, resolved). */
static void defaults_for(const cp_shape *s, const cp_cache_sizes *caches, int isa,
                         cp_params *out) {
    const cpa_blocked_kernel kn = cpa_blocked_tile_select(isa);
    const blk_geom g = geom(s, &kn);
    const int64_t l1 = (int64_t)caches->l1d, l2 = (int64_t)caches->l2;
    out->v[P_TILE_ISA] = 0;
    out->v[P_ORDER] = s->r == 1 && s->s == 1;
    if (g.cv) { /* channel-vector tiles */
        /* A tile's weights for cb channels (cb * ntap * KR floats) in half of
         * L2: each row chunk of a block reads them all once, and a block
         * boundary costs a gather and a scatter of the tile's outputs. */
        const int64_t cbmax = clamp64((l2 / 2) / (g.ntap * KR * (int64_t)sizeof(float)), 1, g.cg);
        const int64_t ncb = (g.cg + cbmax - 1) / cbmax;
        int64_t pb = g.P;
        while (pb > 1 && s->groups * g.ntkv * ((g.P + pb - 1) / pb) < 8) pb = (pb + 1) / 2;
        out->v[P_KB] = 1; /* unused: a task is one KR-channel tile */
        out->v[P_CB] = (g.cg + ncb - 1) / ncb;
        out->v[P_PB] = pb;
        return;
    }
    const int64_t tile_w_per_c = g.ntap * MR * (int64_t)sizeof(float);
    /* One tile's weights in half of L1, and its input (nseg segments of nv
     * floats per channel, what bounds 1x1 layers) in the other half.  The
     * segments' channel stride is rarely a multiple of a line, so they touch
     * up to 16 floats more a channel: counted as nseg * nv + 16 floats (32
     * floats, four lines, for the AVX2 tile).  Measured on one
     * Zen 3 core (fastest sample): c=1024 k=256 14x14 1.09 ms at cb=128 vs
     * 1.17 ms at cb=256; c=2048 k=512 7x7 1.40 vs 1.57 ms. */
    const int64_t x_per_c = (g.nseg * g.nv + 16) * (int64_t)sizeof(float);
    int64_t cbmax = (l1 / 2) / tile_w_per_c;
    if ((l1 / 2) / x_per_c < cbmax) cbmax = (l1 / 2) / x_per_c;
    cbmax = clamp64(cbmax, 1, g.cg);
    /* A 1x1 layer with up to twice that many channels runs them as one block:
     * one pass over y instead of two read-modify-writes measured faster
     * (c=256 k=64 56x56: 1.24 ms at cb=256 vs 1.39 ms at cb=128, fastest
     * samples on one Zen 3 core). */
    if (g.ntap == 1 && g.cg <= 2 * cbmax) cbmax = g.cg;
    /* Equal blocks (512 channels, at most 72: 8 x 64, not 7 x 72 + 8). */
    const int64_t ncb = (g.cg + cbmax - 1) / cbmax;
    const int64_t cb = (g.cg + ncb - 1) / ncb;
    /* As many output rows as keep the block's input rows (cb channels) in half
     * of L2: every weight tile is then used on many pixels. */
    int64_t pb = 1;
    while (pb < g.P) {
        const int64_t rows = pb * g.sh + (s->r - 1) * s->dil_h + 1; /* for pb+1 */
        if (cb * rows * g.wrow * (int64_t)sizeof(float) > l2 / 2) break;
        pb++;
    }
    /* kb channel tiles: their weights in a quarter of L2, their outputs of a
     * row block in another quarter. */
    int64_t kb = clamp64((l2 / 4) / (cb * tile_w_per_c), 1, g.ntk);
    int64_t ytile = MR * pb * g.Q * (int64_t)sizeof(float);
    kb = clamp64(kb, 1, clamp64((l2 / 4) / ytile, 1, g.ntk));
    /* At least 8 tasks (group x channel block x row block) for the workers
     * to share, by halving the row blocks. */
    while (pb > 1 && s->groups * ((g.ntk + kb - 1) / kb) * pixel_blocks(&g, pb) < 8)
        pb = (pb + 1) / 2;
    /* A block of segments that is not whole tiles leaves part of a tile empty. */
    if (!g.run && block_segments(&g, pb) % g.nseg != 0 && pb < g.P) pb++;
    out->v[P_KB] = kb;
    out->v[P_CB] = cb;
    out->v[P_PB] = pb;
}

static void blocked_defaults(const cp_shape *s, const cp_cache_sizes *caches, cp_params *out) {
    defaults_for(s, caches, cpa_isa_resolve(CPA_ISA_BEST), out);
}

static int same_params(const cp_params *a, const cp_params *b) {
    return memcmp(a->v, b->v, sizeof a->v) == 0;
}

/* Defaults first, then halving/doubling each block size around them. */
static int blocked_candidates(const cp_shape *s, const cp_cache_sizes *caches, cp_params *out,
                              int max) {
    const blk_geom g = geom(s, &any_kernel);
    cp_params d;
    memset(&d, 0, sizeof d);
    blocked_defaults(s, caches, &d);
    const int best = cpa_isa_resolve(CPA_ISA_BEST);
    const int64_t cbs[3] = {d.v[P_CB], clamp64(d.v[P_CB] / 2, 1, g.cg), g.cg};
    const int64_t pbs[2] = {d.v[P_PB], clamp64(d.v[P_PB] * 2, 1, g.P)};
    const int64_t kbs[2] = {d.v[P_KB], clamp64(d.v[P_KB] / 2, 1, g.ntk)};
    int n = 0;
    if (max >= 2) { /* the defaults, then the defaults in the other loop order */
        out[n++] = d;
        out[n] = d;
        out[n++].v[P_ORDER] = !d.v[P_ORDER];
    }
    if (best == CPA_ISA_AVX512 && n < max) { /* the AVX2 tile with its own defaults */
        memset(&out[n], 0, sizeof out[n]);
        defaults_for(s, caches, CPA_ISA_AVX2, &out[n]);
        out[n++].v[P_TILE_ISA] = CPA_ISA_AVX2;
    }
    for (int i = 0; i < 3; i++)
        for (int j = 0; j < 2; j++)
            for (int k = 0; k < 2; k++) {
                if (n >= max) return n;
                cp_params c = d;
                c.v[P_CB] = cbs[i];
                c.v[P_PB] = pbs[j];
                c.v[P_KB] = kbs[k];
                int dup = 0;
                for (int m = 0; m < n; m++) dup |= same_params(&out[m], &c);
                if (!dup) out[n++] = c;
            }
    return n;
}

/* --- support, sizes, packing ----------------------------------------------- */

static int blocked_supports(const cp_shape *s, cp_flip flip, char *why, size_t cap) {
    (void)s; (void)flip; (void)why; (void)cap;
    return 1;
}

static int flipidx_supports(const cp_shape *s, cp_flip flip, char *why, size_t cap) {
    (void)s;
    if (flip != CP_CONV)
        return cpa_refuse(why, cap, "computes true convolution only (flipped indexing); "
                                    "use blocked for cross-correlation");
    return 1;
}

static size_t tap_table_bytes(const blk_geom *g) {
    return cpa_align64((size_t)g->ntap * sizeof(int64_t));
}

static size_t blocked_workspace_size(const cp_shape *s, cp_flip flip, const cp_params *p,
                                     int nthreads) {
    (void)flip; (void)p; (void)nthreads; /* no per-worker scratch: tiles live in registers */
    const blk_geom g = geom(s, &any_kernel);
    size_t bytes = tap_table_bytes(&g);
    if (g.copy) bytes += (size_t)(s->c * g.cs + SLACK) * sizeof(float);
    return bytes;
}

/* The geometry for the tile kernel of parameters p (the weights' layout
 * depends on it: MR- or KR-channel panels). */
static blk_geom geom_for(const cp_shape *s, const cp_params *p) {
    const cpa_blocked_kernel kn = cpa_blocked_tile_select(p->v[P_TILE_ISA]);
    return geom(s, &kn);
}

static size_t blocked_prepared_size(const cp_shape *s, cp_flip flip, const cp_params *p) {
    (void)flip;
    const blk_geom g = geom_for(s, p);
    const int64_t rows = g.cv ? g.ntkv * KR : g.ntk * MR;
    return (size_t)(s->groups * rows * g.cg * g.ntap) * sizeof(float);
}

/* Per group, per panel of pw = MR (or KR) output channels: [c][r][s][pw],
 * zero channels past K/groups. */
static void pack(const cp_shape *s, const cp_params *p, int flip, const float *w, float *out) {
    const blk_geom g = geom_for(s, p);
    const int64_t R = s->r, S = s->s, pw = g.cv ? KR : MR, np = g.cv ? g.ntkv : g.ntk;
    for (int64_t gr = 0; gr < s->groups; gr++)
        for (int64_t kt = 0; kt < np; kt++) {
            float *dst = out + (gr * np + kt) * g.cg * g.ntap * pw;
            for (int64_t c = 0; c < g.cg; c++)
                for (int64_t r = 0; r < R; r++)
                    for (int64_t q = 0; q < S; q++)
                        for (int64_t kk = 0; kk < pw; kk++) {
                            const int64_t k = kt * pw + kk;
                            const int64_t rr = flip ? R - 1 - r : r, qq = flip ? S - 1 - q : q;
                            *dst++ = k < g.kg ? w[(((gr * g.kg + k) * g.cg + c) * R + rr) * S + qq]
                                              : 0.0f;
                        }
        }
}

static cp_status blocked_prepare(const cp_shape *s, cp_flip flip, const cp_params *p,
                                 const float *w, void *out) {
    pack(s, p, flip == CP_CONV, w, out);
    return CP_OK;
}

static cp_status flipidx_prepare(const cp_shape *s, cp_flip flip, const cp_params *p,
                                 const float *w, void *out) {
    (void)flip;
    pack(s, p, 0, w, out);
    return CP_OK;
}

/* --- run -------------------------------------------------------------------- */

typedef struct {
    const cp_run_args *a;
    blk_geom g;
    int64_t kb, cb, pb, nkb, npb;
    int64_t n;            /* current image */
    const float *xsrc;    /* image n, NCHW */
    const float *xb;      /* input the tiles read (padded copy or xsrc) */
    int64_t xb_len;       /* floats readable from xb */
    const int64_t *tap_off;
    int64_t max_off;
    int flipidx;
    int order;            /* P_ORDER */
    cpa_blocked_kernel kern;
} blk_job;

/* Zero-pads and phase-splits channels [b, e) of image n into the workspace. */
static void pad_task(void *arg, int64_t b, int64_t e, int worker) {
    (void)worker;
    const blk_job *j = arg;
    const cp_shape *s = j->a->shape;
    const int64_t sw = s->stride_w;
    float *dst0 = (float *)j->xb;
    for (int64_t c = b; c < e; c++) {
        float *dst = dst0 + c * j->g.cs;
        const float *src = j->xsrc + c * s->h * s->w;
        if (j->g.sub) { /* only the pixels a strided 1x1 kernel reads */
            const int64_t sh = s->stride_h;
            for (int64_t p = 0; p < j->g.P; p++, dst += j->g.Q)
                for (int64_t q = 0; q < j->g.Q; q++) dst[q] = src[p * sh * s->w + q * sw];
            continue;
        }
        memset(dst, 0, (size_t)j->g.cs * sizeof(float));
        for (int64_t ih = 0; ih < s->h; ih++) {
            float *row = dst + (ih + s->pad_top) * j->g.wrow;
            const float *in = src + ih * s->w;
            if (sw == 1) {
                memcpy(row + s->pad_left, in, (size_t)s->w * sizeof(float));
                continue;
            }
            for (int64_t iw = 0; iw < s->w; iw++) {
                const int64_t col = iw + s->pad_left;
                row[(col % sw) * j->g.wph + col / sw] = in[iw];
            }
        }
    }
}

/* Where segment i of pixel block pbi (blocks of pb rows) reads and writes:
 * input offset xo of its lane 0 in a channel of the buffer read, output
 * offset yoff of its first kept lane in a plane, and its keep mask. */
typedef struct {
    int64_t xo, yoff;
    uint32_t keep;
} seg_pos;

/* The block's number of segments. */
static int64_t block_nsegs(const blk_geom *g, int64_t pb, int64_t pbi) {
    if (g->run) {
        const int64_t per = block_segments(g, pb), total = (g->vtot + g->nv - 1) / g->nv;
        return clamp64(total - pbi * per, 0, per);
    }
    const int64_t p0 = pbi * pb;
    return (clamp64(p0 + pb, 0, g->P) - p0) * ((g->Q + g->nv - 1) / g->nv);
}

static seg_pos segment(const blk_geom *g, int64_t pb, int64_t pbi, int64_t i) {
    seg_pos sp = {0, 0, 0};
    if (g->run) {
        const int64_t v0 = (pbi * block_segments(g, pb) + i) * g->nv;
        sp.xo = v0; /* p * L + q: the row stride of the buffer read is L */
        int first = 1;
        for (int jl = 0; jl < g->nv; jl++) {
            const int64_t v = v0 + jl, q = v % g->vl;
            if (v >= g->vtot || q >= g->Q) continue;
            if (first) sp.yoff = v / g->vl * g->Q + q;
            first = 0;
            sp.keep |= 1u << jl;
        }
        return sp;
    }
    const int64_t nseg = (g->Q + g->nv - 1) / g->nv;
    const int64_t p = pbi * pb + i / nseg, q0 = (i % nseg) * g->nv;
    const int64_t left = g->Q - q0;
    sp.xo = p * g->sh * g->wrow + q0;
    sp.yoff = p * g->Q + q0;
    sp.keep = (1u << (left < g->nv ? left : g->nv)) - 1u;
    return sp;
}

/* The segments i .. i + nseg - 1 of a tile (channel xc0 of the input read,
 * output offsets in a plane, keep masks), and whether full-vector reads stay
 * inside the input buffer. */
typedef struct {
    const float *x[CPA_BLOCKED_SEGS];
    int64_t yoff[CPA_BLOCKED_SEGS];
    uint32_t keep[CPA_BLOCKED_SEGS];
    int safe;
} seg_group;

static void group_setup(const blk_job *j, int64_t pbi, int64_t i, int64_t nsegs, int64_t nc,
                        int64_t xc0, seg_group *sg) {
    const blk_geom *g = &j->g;
    sg->safe = 1;
    for (int v = 0; v < CPA_BLOCKED_SEGS; v++) {
        if (v >= g->nseg || i + v >= nsegs) {
            sg->x[v] = sg->x[0];
            sg->yoff[v] = sg->yoff[0];
            sg->keep[v] = 0;
            continue;
        }
        const seg_pos sp = segment(g, j->pb, pbi, i + v);
        const int64_t xo = xc0 * g->cs + sp.xo;
        sg->x[v] = j->xb + xo;
        sg->yoff[v] = sp.yoff;
        sg->keep[v] = sp.keep;
        if (xo + (nc - 1) * g->cs + j->max_off + g->nv > j->xb_len) sg->safe = 0;
    }
}

/* The tile of channel tile kt for the input block starting at c0. */
static void tile_setup(const blk_job *j, int64_t gr, int64_t kt, int64_t c0, int64_t nc,
                       cpa_blocked_tile *t, float **yk) {
    const cp_run_args *a = j->a;
    const cp_shape *s = a->shape;
    const blk_geom *g = &j->g;
    const float *wpk = a->weights;
    const int64_t k0 = gr * g->kg + kt * MR;
    t->nc = nc;
    t->ntap = g->ntap;
    t->x_cs = g->cs;
    t->tap_off = j->tap_off;
    t->w = wpk + ((gr * g->ntk + kt) * g->cg + c0) * g->ntap * MR;
    t->w_step = MR;
    if (j->flipidx) { /* kernel tap (R-1-r, S-1-s) = index ntap-1-t */
        t->w += (g->ntap - 1) * MR;
        t->w_step = -MR;
    }
    t->y_ks = g->P * g->Q;
    t->bias = a->bias ? a->bias + k0 : NULL;
    t->nk = (int)clamp64(g->kg - kt * MR, 1, MR);
    t->first = c0 == 0;
    *yk = a->y + (j->n * s->k + k0) * g->P * g->Q;
}

static void call_tile(const blk_job *j, cpa_blocked_tile *t, float *yk, const seg_group *sg) {
    for (int v = 0; v < CPA_BLOCKED_SEGS; v++) {
        t->x[v] = sg->x[v];
        t->y[v] = yk + sg->yoff[v];
        t->keep[v] = sg->keep[v];
    }
    if (!j->kern.full_reads || sg->safe)
        j->kern.fn(t);
    else
        cpa_blocked_tile_ref_6x16(t);
}

static void compute_task(void *arg, int64_t b, int64_t e, int worker) {
    (void)worker;
    const blk_job *j = arg;
    const blk_geom *g = &j->g;
    for (int64_t task = b; task < e; task++) {
        const int64_t gr = task / (j->nkb * j->npb);
        const int64_t kbi = (task / j->npb) % j->nkb, pbi = task % j->npb;
        const int64_t kt0 = kbi * j->kb, kt1 = clamp64(kt0 + j->kb, 0, g->ntk);
        const int64_t nsegs = block_nsegs(g, j->pb, pbi), ns = g->nseg;
        for (int64_t c0 = 0; c0 < g->cg; c0 += j->cb) {
            const int64_t nc = clamp64(g->cg - c0, 1, j->cb);
            const int64_t xc0 = gr * g->cg + c0; /* first input channel of the block */
            cpa_blocked_tile t;
            float *yk;
            seg_group sg;
            if (j->order == 0) { /* a tile's weights stay in L1 while the pixels pass */
                for (int64_t kt = kt0; kt < kt1; kt++) {
                    tile_setup(j, gr, kt, c0, nc, &t, &yk);
                    for (int64_t i = 0; i < nsegs; i += ns) {
                        group_setup(j, pbi, i, nsegs, nc, xc0, &sg);
                        call_tile(j, &t, yk, &sg);
                    }
                }
            } else { /* a group's input vectors stay in L1 while the tiles pass */
                for (int64_t i = 0; i < nsegs; i += ns) {
                    group_setup(j, pbi, i, nsegs, nc, xc0, &sg);
                    for (int64_t kt = kt0; kt < kt1; kt++) {
                        tile_setup(j, gr, kt, c0, nc, &t, &yk);
                        call_tile(j, &t, yk, &sg);
                    }
                }
            }
        }
    }
}

/* Channel-vector mode: task (group, KR-channel tile, block of pb rows); per
 * input-channel block, every row of the block in chunks of at most CPA_CV_NP
 * pixels (Q split evenly: 7 | 7+7 | 4 x 7 ...). */
static void compute_cv_task(void *arg, int64_t b, int64_t e, int worker) {
    (void)worker;
    const blk_job *j = arg;
    const blk_geom *g = &j->g;
    const cp_run_args *a = j->a;
    const int64_t nch = (g->Q + CPA_CV_NP - 1) / CPA_CV_NP;
    for (int64_t task = b; task < e; task++) {
        const int64_t gr = task / (g->ntkv * j->npb);
        const int64_t kt = (task / j->npb) % g->ntkv, pbi = task % j->npb;
        const int64_t k0 = gr * g->kg + kt * KR;
        const int64_t p0 = pbi * j->pb, p1 = clamp64(p0 + j->pb, 0, g->P);
        float *yk = a->y + (j->n * a->shape->k + k0) * g->P * g->Q;
        for (int64_t c0 = 0; c0 < g->cg; c0 += j->cb) {
            cpa_cv_tile t;
            t.nc = clamp64(g->cg - c0, 1, j->cb);
            t.ntap = g->ntap;
            t.x_cs = g->cs;
            t.tap_off = j->tap_off;
            t.w = (const float *)a->weights + ((gr * g->ntkv + kt) * g->cg + c0) * g->ntap * KR;
            t.w_step = KR;
            if (j->flipidx) {
                t.w += (g->ntap - 1) * KR;
                t.w_step = -KR;
            }
            t.y_ks = g->P * g->Q;
            t.bias = a->bias ? a->bias + k0 : NULL;
            t.nk = (int)clamp64(g->kg - kt * KR, 1, KR);
            t.first = c0 == 0;
            const float *xc = j->xb + (gr * g->cg + c0) * g->cs;
            for (int64_t p = p0; p < p1; p++)
                for (int64_t ch = 0; ch < nch; ch++) {
                    const int64_t q0 = ch * g->Q / nch, q1 = (ch + 1) * g->Q / nch;
                    t.x = xc + p * g->sh * g->wrow + q0;
                    t.y = yk + p * g->Q + q0;
                    t.np = (int)(q1 - q0);
                    j->kern.cv(&t);
                }
        }
    }
}

static cp_status run_common(const cp_run_args *a, int flipidx) {
    const cp_shape *s = a->shape;
    blk_job j;
    memset(&j, 0, sizeof j);
    j.a = a;
    j.kern = cpa_blocked_tile_select(a->params->v[P_TILE_ISA]);
    j.g = geom(s, &j.kern);
    const blk_geom *g = &j.g;
    j.kb = clamp64(a->params->v[P_KB], 1, g->ntk);
    j.cb = clamp64(a->params->v[P_CB], 1, g->cg);
    j.pb = clamp64(a->params->v[P_PB], 1, g->P);
    j.nkb = g->cv ? g->ntkv : (g->ntk + j.kb - 1) / j.kb;
    j.npb = g->cv ? (g->P + j.pb - 1) / j.pb : pixel_blocks(g, j.pb);
    j.order = (int)a->params->v[P_ORDER];

    int64_t *taps = a->workspace;
    j.flipidx = flipidx;
    for (int64_t r = 0; r < s->r; r++)
        for (int64_t q = 0; q < s->s; q++) {
            const int64_t col = q * s->dil_w;
            const int64_t off = r * s->dil_h * g->wrow + (col % s->stride_w) * g->wph +
                                col / s->stride_w;
            taps[r * s->s + q] = off;
            if (off > j.max_off) j.max_off = off;
        }
    j.tap_off = taps;
    float *pad = (float *)((char *)a->workspace + tap_table_bytes(g));
    if (g->copy) memset(pad + s->c * g->cs, 0, SLACK * sizeof(float));

    const int64_t tasks = s->groups * j.nkb * j.npb;
    for (int64_t n = 0; n < s->n; n++) {
        j.n = n;
        j.xsrc = a->x + n * s->c * s->h * s->w;
        if (g->copy) {
            j.xb = pad;
            j.xb_len = s->c * g->cs + SLACK;
            cp_parallel_for(a->exec, s->c, pad_task, &j);
        } else {
            j.xb = j.xsrc;
            j.xb_len = (s->n - n) * s->c * g->cs; /* later images follow in memory */
        }
        cp_parallel_for(a->exec, tasks, g->cv ? compute_cv_task : compute_task, &j);
    }
    return CP_OK;
}

static cp_status blocked_run(const cp_run_args *a) { return run_common(a, 0); }

static const char *blocked_isa(const cp_shape *s, const cp_params *p) {
    (void)s;
    return cpa_isa_name(cpa_isa_resolve(p->v[P_TILE_ISA]));
}
static cp_status flipidx_run(const cp_run_args *a) { return run_common(a, 1); }

/* Tolerance: each output is one float32 sum over C/groups*R*S products, split
 * into cb-channel partial sums kept in y.  Measured with cp_oracle_run /
 * cp_error_measure on the 14 distinct ResNet-50 (He et al. 2016) conv shapes
 * (stem 7x7/2, every 1x1 and 3x3 of the four stages, the 1x1/2 projection),
 * batch 1, inputs and weights uniform in [-1, 1], default parameters, both
 * tile kernels and both modes: max rel_err 3.35e-7.  1e-5 leaves room for
 * deeper reductions (C*R*S up to 2^16 at the n*eps bound). */
const cp_algo cpa_blocked = {
    .name = "blocked",
    .summary = "cache- and register-blocked direct convolution (AVX-512 6x64 or AVX2 6x16 tile, "
               "run-time ISA choice)",
    .tolerance = 1e-5,
    .nparams = NPARAMS,
    .params = blocked_params,
    .supports = blocked_supports,
    .defaults = blocked_defaults,
    .candidates = blocked_candidates,
    .workspace_size = blocked_workspace_size,
    .prepared_size = blocked_prepared_size,
    .prepare = blocked_prepare,
    .run = blocked_run,
    .isa = blocked_isa,
};

const cp_algo cpa_blocked_flipidx = {
    .name = "blocked_flipidx",
    .summary = "blocked direct convolution reading the kernel reversed (true convolution only)",
    .tolerance = 1e-5,
    .nparams = NPARAMS,
    .params = blocked_params,
    .supports = flipidx_supports,
    .defaults = blocked_defaults,
    .candidates = blocked_candidates,
    .workspace_size = blocked_workspace_size,
    .prepared_size = blocked_prepared_size,
    .prepare = flipidx_prepare,
    .run = flipidx_run,
    .isa = blocked_isa,
};
