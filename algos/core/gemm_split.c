/* SGEMM split over the caller's workers (see gemm_split.h). */
#include "algos/core/gemm_split.h"

#include <cblas.h>

/* Below this many multiply-adds a product runs on the calling thread: waking
 * workers costs microseconds (common practice, no source; 2^20 multiply-adds
 * is about 10 us at this machine's one-core peak). */
#define SPLIT_MIN_MACS ((int64_t)1 << 20)

static void sgemm(int64_t m, int64_t n, int64_t k, const float *a, int64_t lda, const float *b,
                  int64_t ldb, float *c, int64_t ldc) {
    if (m <= 0 || n <= 0) return;
    cblas_sgemm(CblasRowMajor, CblasNoTrans, CblasNoTrans, (blasint)m, (blasint)n, (blasint)k,
                1.0f, a, (blasint)lda, b, (blasint)ldb, 0.0f, c, (blasint)ldc);
}

typedef struct split_job {
    int64_t m, n, k, lda, ldb, ldc, sa, sb, sc;
    int64_t slice; /* columns per slice (cols) */
    const float *a, *b;
    float *c;
} split_job;

static void cols_task(void *arg, int64_t begin, int64_t end, int worker) {
    (void)worker;
    const split_job *j = arg;
    for (int64_t i = begin; i < end; i++) {
        const int64_t c0 = i * j->slice;
        const int64_t c1 = c0 + j->slice < j->n ? c0 + j->slice : j->n;
        sgemm(j->m, c1 - c0, j->k, j->a, j->lda, j->b + c0, j->ldb, j->c + c0, j->ldc);
    }
}

void cpa_sgemm_cols(const cp_exec *exec, int64_t m, int64_t n, int64_t k, const float *a,
                    int64_t lda, const float *b, int64_t ldb, float *c, int64_t ldc) {
    const int t = cp_exec_threads(exec);
    if (t <= 1 || m * n * k < SPLIT_MIN_MACS || n < 32) {
        sgemm(m, n, k, a, lda, b, ldb, c, ldc);
        return;
    }
    int64_t slice = (n + t - 1) / t;
    slice = (slice + 15) / 16 * 16;
    const int64_t nslices = (n + slice - 1) / slice;
    split_job j = {m, n, k, lda, ldb, ldc, 0, 0, 0, slice, a, b, c};
    cp_parallel_for(exec, nslices, cols_task, &j);
}

static void batch_task(void *arg, int64_t begin, int64_t end, int worker) {
    (void)worker;
    const split_job *j = arg;
    for (int64_t i = begin; i < end; i++)
        sgemm(j->m, j->n, j->k, j->a + i * j->sa, j->lda, j->b + i * j->sb, j->ldb,
              j->c + i * j->sc, j->ldc);
}

void cpa_sgemm_batch(const cp_exec *exec, int64_t count, int64_t m, int64_t n, int64_t k,
                     const float *a, int64_t sa, int64_t lda, const float *b, int64_t sb,
                     int64_t ldb, float *c, int64_t sc, int64_t ldc) {
    split_job j = {m, n, k, lda, ldb, ldc, sa, sb, sc, 0, a, b, c};
    if (cp_exec_threads(exec) <= 1 || count * m * n * k < SPLIT_MIN_MACS)
        batch_task(&j, 0, count, 0);
    else
        cp_parallel_for(exec, count, batch_task, &j);
}
