/* Bare SGEMM references (see gemm_ref.h). */
#include "harness/measure/gemm_ref.h"

#include <cblas.h>
#include <stdlib.h>
#include <string.h>

#include "harness/measure/data.h"

static float *operand(const cph_gemm_ref *g, size_t n) {
    return g->placer ? cph_placer_alloc(g->placer, n * sizeof(float)) : malloc(n * sizeof(float));
}

static void operand_free(const cph_gemm_ref *g, float *p) {
    if (g->placer)
        cph_placer_release(g->placer, p);
    else
        free(p);
}

static cp_status alloc_operands(cph_gemm_ref *g, uint64_t seed) {
    const size_t na = (size_t)(g->products * g->m * g->k);
    const size_t nb = (size_t)(g->products * g->k * g->ldb);
    const size_t nc = (size_t)(g->products * g->m * g->ldb);
    g->a = operand(g, na);
    g->b = operand(g, nb);
    g->c = operand(g, nc);
    if (!g->a || !g->b || !g->c) {
        cph_gemm_ref_free(g);
        return CP_ENOMEM;
    }
    cph_fill_uniform(g->a, na, seed ^ 0x5a5au);
    cph_fill_uniform(g->b, nb, seed ^ 0xa5a5u);
    memset(g->c, 0, nc * sizeof(float));
    return CP_OK;
}

cp_status cph_gemm_ref_im2col(const cp_shape *s, uint64_t seed, cph_gemm_ref *out) {
    return cph_gemm_ref_im2col_placed(s, seed, NULL, out);
}

cp_status cph_gemm_ref_winograd(const cp_shape *s, int64_t tb, uint64_t seed, cph_gemm_ref *out) {
    return cph_gemm_ref_winograd_placed(s, tb, seed, NULL, out);
}

cp_status cph_gemm_ref_im2col_placed(const cp_shape *s, uint64_t seed, cph_placer *placer,
                                     cph_gemm_ref *out) {
    memset(out, 0, sizeof *out);
    out->placer = placer;
    out->m = s->k / s->groups;
    out->k = (s->c / s->groups) * s->r * s->s;
    out->n = out->ldb = out->last_n = cp_shape_out_h(s) * cp_shape_out_w(s);
    out->products = s->groups;
    out->repeats = s->n;
    return alloc_operands(out, seed);
}

cp_status cph_gemm_ref_winograd_placed(const cp_shape *s, int64_t tb, uint64_t seed,
                                       cph_placer *placer, cph_gemm_ref *out) {
    memset(out, 0, sizeof *out);
    out->placer = placer;
    if (tb < 1) return CP_EINVAL;
    const int64_t tiles =
        s->n * ((cp_shape_out_h(s) + 1) / 2) * ((cp_shape_out_w(s) + 1) / 2);
    out->m = s->k;
    out->k = s->c;
    out->n = tiles < tb ? tiles : tb;
    out->ldb = (out->n + 15) / 16 * 16;
    out->products = 16;
    out->repeats = (tiles + tb - 1) / tb;
    out->last_n = tiles - (out->repeats - 1) * tb;
    return alloc_operands(out, seed);
}

int cph_gemm_ref_run(void *arg) {
    const cph_gemm_ref *g = arg;
    for (int64_t r = 0; r < g->repeats; r++) {
        const int64_t n = r == g->repeats - 1 ? g->last_n : g->n;
        for (int64_t p = 0; p < g->products; p++)
            cblas_sgemm(CblasRowMajor, CblasNoTrans, CblasNoTrans, (blasint)g->m, (blasint)n,
                        (blasint)g->k, 1.0f, g->a + p * g->m * g->k, (blasint)g->k,
                        g->b + p * g->k * g->ldb, (blasint)g->ldb, 0.0f,
                        g->c + p * g->m * g->ldb, (blasint)g->ldb);
    }
    return 0;
}

double cph_gemm_ref_flops(const cph_gemm_ref *g) {
    const double per = 2.0 * (double)g->m * (double)g->k;
    return per * (double)g->products * ((double)(g->repeats - 1) * (double)g->n + (double)g->last_n);
}

void cph_gemm_ref_free(cph_gemm_ref *g) {
    operand_free(g, g->a);
    operand_free(g, g->b);
    operand_free(g, g->c);
    g->a = g->b = g->c = NULL;
}
