/* The device fingerprint's parts, exposed so that they can be tested on given
 * inputs (cp_device_fingerprint in convpick/table.h reads the real ones). */
#ifndef CONVPICK_DEVICE_H
#define CONVPICK_DEVICE_H

#include <stddef.h>
#include <stdint.h>

#include "loader/cpuid.h"

/* FNV-1a, 64 bits (Fowler, Noll, Vo; draft-eastlake-fnv): offset basis and
 * prime as published there. */
#define CPL_FNV1A64_OFFSET 0xcbf29ce484222325ull
#define CPL_FNV1A64_PRIME 0x100000001b3ull

/* Continues hash h over n bytes (start with CPL_FNV1A64_OFFSET). */
uint64_t cpl_fnv1a64(uint64_t h, const void *p, size_t n);

/* The fingerprint of the given facts as 16 lower-case hex digits + NUL.  Each
 * integer is hashed as 8 little-endian bytes and each string with its
 * terminating NUL, in a fixed order, so the value does not depend on the
 * compiler or the structure layout. */
void cpl_fingerprint_of(const cpl_cpu_id *id, const cpl_cpuid_cache *caches, int ncaches,
                        long logical_cpus, char out[17]);

#endif
