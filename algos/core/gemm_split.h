/* SGEMM split over the caller's workers.
 *
 * A pool of pinned workers and OpenBLAS's own threads must not both run on
 * the same cores: OpenBLAS threads spin after a call and compete with the
 * workers that run the next transform or lowering, and they are not pinned.
 * So when a run gets an executor with several workers, the GEMM-based
 * algorithms split each product over those workers (columns, or whole
 * products of a batch), every worker calling cblas_sgemm with OpenBLAS set to
 * one thread by the caller (the harness's pool does; see convpick/exec.h).
 * With one worker the product is one call and OpenBLAS threads as the caller
 * set it.  Row-major, no transposes, C = A * B (beta 0). */
#ifndef CPA_GEMM_SPLIT_H
#define CPA_GEMM_SPLIT_H

#include <stdint.h>

#include "convpick/exec.h"

/* C (m x n) = A (m x k) * B (k x n): columns split into one slice per worker,
 * slice edges on multiples of 16 columns (64 bytes) so that workers write
 * distinct cache lines of each row when ldc is a multiple of 16; products too
 * small to pay for the hand-off run on the calling thread. */
void cpa_sgemm_cols(const cp_exec *exec, int64_t m, int64_t n, int64_t k, const float *a,
                    int64_t lda, const float *b, int64_t ldb, float *c, int64_t ldc);

/* count products of the same shape, product i reading a + i*sa, b + i*sb and
 * writing c + i*sc: whole products are shared out over the workers. */
void cpa_sgemm_batch(const cp_exec *exec, int64_t count, int64_t m, int64_t n, int64_t k,
                     const float *a, int64_t sa, int64_t lda, const float *b, int64_t sb,
                     int64_t ldb, float *c, int64_t sc, int64_t ldc);

#endif
