/* Portable C row kernel of the depthwise convolution (contract in
 * depthwise_row.h).  Always compiled and tested; the only kernel on CPUs
 * without AVX2. */
#include "algos/kernels/depthwise_row.h"

void cpa_dw_row_ref(const cpa_dw_row *r) {
    for (int64_t i = 0; i < r->nrows; i++)
        for (int64_t j = 0; j < r->q; j++) {
            float acc = r->bias;
            for (int t = 0; t < r->ntap; t++) acc += r->w[t] * r->src[t][i * r->src_step + j];
            r->y[i * r->q + j] = acc;
        }
}
