/* The portable build of the Winograd transform loops (always compiled). */
#include "algos/kernels/winograd_kernels.h"

#define CPA_WINO_K(name) wino_ref_##name
#define CPA_WINO_SET cpa_wino_kernels_ref
#include "algos/kernels/winograd_kernels_body.h"
