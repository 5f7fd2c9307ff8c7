/* The roof kernels (harness/machine/roofs_avx2.c is compiled with -mavx2 -mfma,
 * roofs_avx512.c with -mavx512f; the portable ones live in harness/machine/roofs.c).  Each returns a value derived from
 * its accumulators so that the work cannot be optimised away. */
#ifndef CONVPICK_ROOFS_H
#define CONVPICK_ROOFS_H

#include <stddef.h>
#include <stdint.h>

/* FP32 FMA chains: iters x 12 independent 8-lane FMAs = iters * 192 FLOPs. */
#define CPH_ROOF_AVX2_FLOPS_PER_ITER 192.0
float cph_roof_fma_avx2(int64_t iters);

/* FP32 FMA chains: iters x 16 independent 16-lane FMAs = iters * 512 FLOPs. */
#define CPH_ROOF_AVX512_FLOPS_PER_ITER 512.0
float cph_roof_fma_avx512(int64_t iters);

/* Portable multiply-add chains: iters x 16 chains x (1 mul + 1 add) = iters * 32 FLOPs. */
#define CPH_ROOF_PORTABLE_FLOPS_PER_ITER 32.0
float cph_roof_fma_portable(int64_t iters);

/* The loop of one width: 512, 256, or 0 for the portable one. */
float cph_roof_fma(int bits, int64_t iters);

/* a[i] = b[i] + s * c[i] for i in [begin, end). */
void cph_roof_triad(float *a, const float *b, const float *c, float s, size_t begin, size_t end);

#endif
