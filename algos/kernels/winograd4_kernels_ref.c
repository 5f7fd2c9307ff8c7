/* The portable build of the F(4x4,3x3) transform loops (always compiled). */
#include "algos/kernels/winograd4_kernels.h"

#define CPA_WINO4_K(name) wino4_ref_##name
#define CPA_WINO4_SET cpa_wino4_kernels_ref
#include "algos/kernels/winograd4_kernels_body.h"
