/* Internal helpers shared by the algorithm files (prefix cpa_).  Not installed. */
#ifndef CONVPICK_CPA_H
#define CONVPICK_CPA_H

#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>

#include "convpick/algo.h"

/* The one (msg, cap) message writer: formats into msg when msg and cap allow
 * (msg may be NULL).  cpa_refuse and cpa_fail below are its two return
 * conventions; a caller with its own return type wraps this one. */
void cpa_vmessage(char *msg, size_t cap, const char *fmt, va_list ap)
    __attribute__((format(printf, 3, 0)));

/* Writes a reason into why (if any) and returns 0: the "not supported" path. */
int cpa_refuse(char *why, size_t cap, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));

/* Writes a one-line message into msg (if any) and returns st: the error
 * path of every call that reports through a (msg, cap) buffer. */
cp_status cpa_fail(cp_status st, char *msg, size_t cap, const char *fmt, ...)
    __attribute__((format(printf, 4, 5)));

/* Strips leading and trailing white space in place: returns the first
 * non-space character of s (the end is cut with a NUL).  The one trim of
 * the project (the CPU brand string, shape specs, shape files, options). */
char *cpa_trim(char *s);

/* Rounds n up to a multiple of 64 (workspace sub-buffers stay aligned). */
static inline size_t cpa_align64(size_t n) { return (n + 63u) & ~(size_t)63u; }

/* prepared_size/prepare of an algorithm whose run() reads cross-correlation
 * weights: true convolution pre-flips them once (cp_weights_flip); the size
 * is 0 (raw weights) for cross-correlation, and also for a 1x1 kernel when
 * skip_1x1 is set (its flip is the identity). */
size_t cpa_preflip_size(const cp_shape *s, cp_flip flip, int skip_1x1);
cp_status cpa_preflip_prepare(const cp_shape *s, cp_flip flip, const cp_params *p,
                              const float *w, void *out);

#endif
