/* The AVX-512 build of the Winograd transform loops: the same source as the
 * portable build, compiled with -mavx512f ... -mprefer-vector-width=512 (CMake
 * gives every *_avx512.c those flags), so that the compiler vectorises the
 * loops 16 floats wide.  Only used after cpa_wino_kernels_select() saw
 * AVX-512F and the OS's ZMM state. */
#include "algos/kernels/winograd_kernels.h"

#define CPA_WINO_K(name) wino_avx512_##name
#define CPA_WINO_SET cpa_wino_kernels_avx512
#include "algos/kernels/winograd_kernels_body.h"
