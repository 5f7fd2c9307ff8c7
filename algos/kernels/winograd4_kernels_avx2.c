/* The AVX2 + FMA build of the F(4x4,3x3) transform loops: the same source as
 * the portable build, compiled with -mavx2 -mfma (CMake gives every *_avx2.c
 * those flags).  Only used after cpa_wino4_kernels_select() saw both. */
#include "algos/kernels/winograd4_kernels.h"

#define CPA_WINO4_K(name) wino4_avx2_##name
#define CPA_WINO4_SET cpa_wino4_kernels_avx2
#include "algos/kernels/winograd4_kernels_body.h"
