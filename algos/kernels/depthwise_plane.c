/* Plans of the in-place depthwise plane kernels (contract in
 * depthwise_plane.h): which form a shape can take, and the per-shape
 * offsets and lane masks, computed once per call in portable C. */
#include <string.h>

#include "algos/kernels/depthwise_plane.h"
#include "convpick/shape.h"

int cpa_dw_plan_flat_ok(const cp_shape *s) {
    const int64_t P = cp_shape_out_h(s), Q = cp_shape_out_w(s);
    return s->stride_h == 1 && s->stride_w == 1 && Q == s->w && P * Q <= CPA_DWP_FLAT_MAX &&
           s->r * s->s <= CPA_DWP_FLAT_TAPS;
}

int cpa_dw_plan_rows_ok(const cp_shape *s) {
    return (s->stride_w == 1 || s->stride_w == 2) && s->s <= CPA_DWP_ROWS_S &&
           s->stride_w * cp_shape_out_w(s) <= 16 * CPA_DWP_ROWS_VECS;
}

/* Lanes l < 16 with lo <= l < hi. */
static uint16_t lanes(int64_t lo, int64_t hi) {
    unsigned m = 0;
    for (int64_t l = 0; l < 16; l++)
        if (l >= lo && l < hi) m |= 1u << l;
    return (uint16_t)m;
}

void cpa_dw_plan_build(const cp_shape *s, int kind, cpa_dw_plan *pl) {
    memset(pl, 0, sizeof *pl);
    pl->kind = kind;
    pl->h = s->h; pl->w = s->w;
    pl->p = cp_shape_out_h(s); pl->q = cp_shape_out_w(s);
    pl->sh = s->stride_h; pl->sw = s->stride_w;
    pl->pt = s->pad_top; pl->pl = s->pad_left;
    pl->dh = s->dil_h; pl->dw = s->dil_w;
    pl->r = s->r; pl->s = s->s;
    if (kind == CPA_DWP_ROWS) {
        /* virtual column u = 16 i + l, tap column c: input column u - pl + c dil_w */
        const int64_t nvec = (pl->sw * pl->q + 15) / 16;
        for (int64_t i = 0; i < nvec; i++)
            for (int64_t c = 0; c < pl->s; c++) {
                const int64_t lo = pl->pl - c * pl->dw - 16 * i;
                pl->cmask[i][c] = lanes(lo, lo + pl->w);
            }
        if (pl->sw == 2)
            for (int64_t k = 0; k < (pl->q + 15) / 16; k++) {
                const int64_t b = 32 * k - pl->pl;
                pl->dmask[k][0] = lanes(-b, pl->w - b);
                pl->dmask[k][1] = lanes(-b - 16, pl->w - b - 16);
                pl->dmask[k][2] = lanes(-b - 32, pl->w - b - 32) & 1u;
            }
        return;
    }
    const int64_t n = pl->p * pl->q;
    pl->nv = (int)((n + 15) / 16);
    /* output row and column of every lane (past the plane: a row no tap
     * reaches), stepped once; the masks are then branch-free compares --
     * the plan is built on every call, and a branch per lane and tap cost
     * about 5 us on a 14x14 plane */
    int32_t orow[CPA_DWP_FLAT_MAX], ocol[CPA_DWP_FLAT_MAX];
    const int nl = pl->nv * 16;
    for (int f = 0, op = 0, oq = 0; f < nl; f++) {
        orow[f] = f < n ? op : (int32_t)(1 << 30);
        ocol[f] = oq;
        if (++oq == pl->q) {
            oq = 0;
            op++;
        }
    }
    for (int64_t r = 0; r < pl->r; r++)
        for (int64_t c = 0; c < pl->s; c++) {
            const int64_t t = r * pl->s + c, dr = r * pl->dh - pl->pt, dc = c * pl->dw - pl->pl;
            pl->off[t] = dr * pl->w + dc;
            for (int v = 0; v < pl->nv; v++) {
                unsigned m = 0;
                for (int l = 0; l < 16; l++) {
                    const int f = 16 * v + l;
                    /* 0 <= ih < h and 0 <= iw < w as unsigned compares */
                    const unsigned in = ((uint64_t)(orow[f] + dr) < (uint64_t)pl->h) &
                                        ((uint64_t)(ocol[f] + dc) < (uint64_t)pl->w);
                    m |= in << l;
                }
                pl->mask[t][v] = (uint16_t)m;
            }
        }
    for (int v = 0; v < pl->nv; v++) {
        const int64_t left = n - 16 * (int64_t)v;
        pl->smask[v] = (uint16_t)(left >= 16 ? 0xffffu : (1u << left) - 1u);
    }
}
