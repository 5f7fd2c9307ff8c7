/* Portable C tile kernel of the blocked direct convolution (contract in
 * blocked_tile.h).  Always compiled, always tested; also the fallback for tiles
 * whose full-vector reads would leave the input buffer.  Takes any segment
 * count up to CPA_BLOCKED_SEGS and any keep mask of up to 16 lanes, so it can
 * stand in for every ISA kernel.
 *
 * Every load and store goes through CPA_LD / CPA_ST (plain accesses unless
 * defined before inclusion): harness/cache/cache_traced_blocked.c compiles this file a
 * second time with hooks that feed each access to the cache simulator. */
#include "algos/kernels/blocked_tile.h"

#include "algos/core/cpa_access.h"

void cpa_blocked_tile_ref_6x16(const cpa_blocked_tile *t) {
    enum { MR = CPA_BLOCKED_MR, NVM = CPA_BLOCKED_NV_MAX };
    for (int v = 0; v < CPA_BLOCKED_SEGS; v++) {
        const uint32_t keep = t->keep[v];
        if (keep == 0) continue;
        int lane[NVM], nl = 0; /* the kept lanes, in order */
        for (int j = 0; j < NVM; j++)
            if (keep >> j & 1u) lane[nl++] = j;
        float acc[MR][NVM];
        for (int kk = 0; kk < MR; kk++)
            for (int i = 0; i < NVM; i++) {
                float a = 0.0f;
                if (kk < t->nk && i < nl)
                    a = t->first ? (t->bias ? CPA_LD(&t->bias[kk]) : 0.0f)
                                 : CPA_LD(&t->y[v][kk * t->y_ks + i]);
                acc[kk][i] = a;
            }
        for (int64_t c = 0; c < t->nc; c++) {
            const float *xc = t->x[v] + c * t->x_cs;
            const float *w = t->w + c * t->ntap * MR;
            for (int64_t tp = 0; tp < t->ntap; tp++, w += t->w_step) {
                const float *xp = xc + CPA_LD(&t->tap_off[tp]);
                for (int i = 0; i < nl; i++) {
                    const float xv = CPA_LD(&xp[lane[i]]);
                    for (int kk = 0; kk < MR; kk++) acc[kk][i] += xv * CPA_LD(&w[kk]);
                }
            }
        }
        for (int kk = 0; kk < t->nk; kk++)
            for (int i = 0; i < nl; i++) CPA_ST(&t->y[v][kk * t->y_ks + i], acc[kk][i]);
    }
}

void cpa_cv_tile_ref_64x7(const cpa_cv_tile *t) {
    enum { KR = CPA_CV_KR, NP = CPA_CV_NP };
    float acc[KR][NP];
    for (int kk = 0; kk < t->nk; kk++)
        for (int j = 0; j < t->np; j++)
            acc[kk][j] = t->first ? (t->bias ? CPA_LD(&t->bias[kk]) : 0.0f)
                                  : CPA_LD(&t->y[kk * t->y_ks + j]);
    for (int64_t c = 0; c < t->nc; c++) {
        const float *w = t->w + c * t->ntap * KR;
        for (int64_t tp = 0; tp < t->ntap; tp++, w += t->w_step) {
            const float *xp = t->x + c * t->x_cs + CPA_LD(&t->tap_off[tp]);
            for (int j = 0; j < t->np; j++) {
                const float xv = CPA_LD(&xp[j]);
                for (int kk = 0; kk < t->nk; kk++) acc[kk][j] += xv * CPA_LD(&w[kk]);
            }
        }
    }
    for (int kk = 0; kk < t->nk; kk++)
        for (int j = 0; j < t->np; j++) CPA_ST(&t->y[kk * t->y_ks + j], acc[kk][j]);
}
