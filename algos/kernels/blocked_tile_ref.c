/* Portable C tile kernel of the blocked direct convolution (contract in
 * blocked_tile.h).  Always compiled, always tested; also the fallback for tiles
 * whose full-vector reads would leave the input buffer.
 *
 * Every load and store goes through CPA_LD / CPA_ST (plain accesses unless
 * defined before inclusion): harness/cache/cache_traced_blocked.c compiles this file a
 * second time with hooks that feed each access to the cache simulator. */
#include "algos/kernels/blocked_tile.h"

#include "algos/core/cpa_access.h"

void cpa_blocked_tile_ref_6x16(const cpa_blocked_tile *t) {
    enum { MR = CPA_BLOCKED_MR, NV = CPA_BLOCKED_NV };
    for (int v = 0; v < 2; v++) {
        const int nv = t->n[v];
        if (nv <= 0) continue;
        float acc[MR][NV];
        for (int kk = 0; kk < MR; kk++)
            for (int j = 0; j < NV; j++) {
                float a = 0.0f;
                if (kk < t->nk && j < nv)
                    a = t->first ? (t->bias ? CPA_LD(&t->bias[kk]) : 0.0f)
                                 : CPA_LD(&t->y[v][kk * t->y_ks + j]);
                acc[kk][j] = a;
            }
        for (int64_t c = 0; c < t->nc; c++) {
            const float *xc = t->x[v] + c * t->x_cs;
            const float *w = t->w + c * t->ntap * MR;
            for (int64_t i = 0; i < t->ntap; i++, w += t->w_step) {
                const float *xp = xc + CPA_LD(&t->tap_off[i]);
                for (int j = 0; j < nv; j++) {
                    const float xv = CPA_LD(&xp[j]);
                    for (int kk = 0; kk < MR; kk++) acc[kk][j] += xv * CPA_LD(&w[kk]);
                }
            }
        }
        for (int kk = 0; kk < t->nk; kk++)
            for (int j = 0; j < nv; j++) CPA_ST(&t->y[v][kk * t->y_ks + j], acc[kk][j]);
    }
}
