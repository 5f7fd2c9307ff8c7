/* What the processor says about itself through the cpuid instruction: vendor,
 * brand, family/model/stepping, the ISA features convpick cares about (with
 * the operating system's support of the AVX register state checked through
 * xgetbv), and the cache geometry.
 *
 * Compiled into the library (loader/cpuid.c) because the device
 * fingerprint a deploying program computes must come from the same facts as
 * the harness's, without hwloc.  On a processor other than x86 every field is
 * zero / empty. */
#ifndef CONVPICK_CPUID_H
#define CONVPICK_CPUID_H

#include <stddef.h>
#include <stdint.h>

typedef struct cpl_cpu_id {
    char vendor[13];        /* "AuthenticAMD", "GenuineIntel" */
    char brand[49];         /* leaves 0x80000002..4, leading/trailing blanks removed */
    int family, model, stepping; /* display values (extended fields folded in) */
    /* ISA: 1 when the processor has it AND the OS saves its register state. */
    int sse42, avx, avx2, fma, avx512f, avx512bw, avx512vl, avx512dq, avx512_vnni, avx512_bf16;
    int os_avx;             /* XCR0 has the SSE and AVX state bits */
    int os_avx512;          /* XCR0 has the opmask and ZMM state bits as well */
} cpl_cpu_id;

/* Reads cpuid (and xgetbv).  Pure apart from the instruction itself. */
void cpl_cpuid_read(cpl_cpu_id *out);

/* The named ISA features as bits (bit 0 sse42 ... bit 9 avx512_bf16) - a
 * compact, order-fixed summary for the fingerprint. */
uint32_t cpl_cpuid_feature_bits(const cpl_cpu_id *id);

/* One cache as cpuid describes it. */
typedef struct cpl_cpuid_cache {
    int level;              /* 1, 2, 3 */
    int type;               /* 1 data, 2 instruction, 3 unified */
    uint32_t size;          /* bytes */
    uint32_t line;          /* bytes */
    uint32_t ways;          /* 0 when cpuid says fully associative or does not say */
    uint32_t sharing;       /* logical processors sharing it (as cpuid reports; 0 = unknown) */
} cpl_cpuid_cache;

/* Cache geometry: leaf 4 (Intel), leaf 0x8000001D (AMD with topology
 * extensions), else the older AMD leaves 0x80000005/0x80000006.  Writes at most
 * max caches, returns how many were found. */
int cpl_cpuid_caches(cpl_cpuid_cache *out, int max);

#endif
