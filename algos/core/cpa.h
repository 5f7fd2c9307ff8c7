/* Internal helpers shared by the algorithm files (prefix cpa_).  Not installed. */
#ifndef CONVPICK_CPA_H
#define CONVPICK_CPA_H

#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>

#include "convpick/algo.h"

/* Writes a reason into why (if any) and returns 0: the "not supported" path. */
int cpa_refuse(char *why, size_t cap, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));

/* Writes a one-line message into msg (if any) and returns st: the error
 * path of every call that reports through a (msg, cap) buffer. */
cp_status cpa_fail(cp_status st, char *msg, size_t cap, const char *fmt, ...)
    __attribute__((format(printf, 4, 5)));

/* Rounds n up to a multiple of 64 (workspace sub-buffers stay aligned). */
static inline size_t cpa_align64(size_t n) { return (n + 63u) & ~(size_t)63u; }

/* Adds bias[k] to each of the npix outputs of channel k, for nk channels. */
void cpa_add_bias(float *y, const float *bias, int64_t nk, int64_t npix);

/* Registered algorithms (one per file in algos/). */
extern const cp_algo cpa_direct;
extern const cp_algo cpa_direct_flipidx;
extern const cp_algo cpa_im2col_gemm;
extern const cp_algo cpa_winograd_2x2_3x3;
extern const cp_algo cpa_blocked;
extern const cp_algo cpa_blocked_flipidx;

#endif
