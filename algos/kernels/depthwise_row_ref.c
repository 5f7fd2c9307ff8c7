/* Portable C kernels of the depthwise convolution (contract in
 * depthwise_row.h).  Always compiled and tested; the only kernels on CPUs
 * without AVX2, and the fill of the AVX2 level. */
#include "algos/kernels/depthwise_row.h"

void cpa_dw_row_ref(const cpa_dw_row *r) {
    for (int64_t i = 0; i < r->nrows; i++)
        for (int64_t j = 0; j < r->q; j++) {
            float acc = r->bias;
            for (int t = 0; t < r->ntap; t++) acc += r->w[t] * r->src[t][i * r->src_step + j];
            r->y[i * r->q + j] = acc;
        }
}

void cpa_dw_fill_ref(const cpa_dw_fill *f) {
    int64_t ph = f->pt % f->sh, pr = f->pt / f->sh; /* of padded row ih + pt, stepped */
    for (int64_t ih = 0; ih < f->h; ih++) {
        float *row = f->buf + ph * f->sw * f->plane + pr * f->ld;
        const float *xr = f->x + ih * f->w;
        if (++ph == f->sh) {
            ph = 0;
            pr++;
        }
        if (f->sw == 1) { /* a plain copy the compiler vectorises */
            float *d = row + f->pl;
            for (int64_t iw = 0; iw < f->w; iw++) d[iw] = xr[iw];
            continue;
        }
        int64_t pc = f->pl % f->sw, col = f->pl / f->sw; /* of padded column iw + pl */
        for (int64_t iw = 0; iw < f->w; iw++) {
            row[pc * f->plane + col] = xr[iw];
            if (++pc == f->sw) {
                pc = 0;
                col++;
            }
        }
    }
}
