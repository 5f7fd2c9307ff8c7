/* The AVX2 + FMA build of the Winograd transform loops: the same source as the
 * portable build, compiled with -mavx2 -mfma (CMake gives every *_avx2.c those
 * flags), so that the compiler vectorises the loops 8 floats wide.  Only used
 * after cpa_wino_kernels_select() saw both features. */
#include "algos/kernels/winograd_kernels.h"

#define CPA_WINO_K(name) wino_avx2_##name
#define CPA_WINO_SET cpa_wino_kernels_avx2
#include "algos/kernels/winograd_kernels_body.h"
