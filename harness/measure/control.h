/* The fixed control: two pieces of work that never change between builds,
 * timed interleaved with the work under test so that the state of the
 * machine while it was measured is on record beside it.
 *   fma   the FMA peak loop of the roofs (harness/machine/roofs.h) at the
 *         widest width the CPU has, a fixed number of iterations (about
 *         0.1 ms): the core's speed (frequency, a sibling thread, steal);
 *   gemm  a fixed single-threaded SGEMM, 64 x 576 x 196 (the im2col product
 *         of a 3x3 layer, 64 channels, 14x14: about 14 MFLOP), on OpenBLAS:
 *         the core with its caches and memory.
 * Two runs of one build that differ only in the machine's state differ in
 * their controls; a regression of the code under test does not move them.
 * `diff` reads a row's ratio against its control's ratio (docs/measurement.md).
 * The control is not a convolution: the harness may run it itself. */
#ifndef CONVPICK_CONTROL_H
#define CONVPICK_CONTROL_H

#include <stddef.h>

#include "convpick/convpick.h"
#include "harness/measure/gemm_ref.h"

typedef struct cph_control {
    cph_gemm_ref gemm;
    int fma_width;      /* 512, 256 or 0 (portable) */
    long long fma_iters;
} cph_control;

/* The control for a machine with (or without) AVX-512 / AVX2 FMA.
 * CP_ENOMEM when its operands cannot be allocated. */
cp_status cph_control_init(cph_control *c, int have_avx512, int have_avx2_fma);
void cph_control_free(cph_control *c);

/* One trial of the control: a warm-up and `samples` timed runs of each piece;
 * their medians in seconds. */
void cph_control_trial(cph_control *c, size_t samples, double *fma_s, double *gemm_s);

/* "fma512 x 200 iterations + sgemm 64x576x196, 1 thread" */
void cph_control_describe(const cph_control *c, char *buf, size_t cap);

#endif
