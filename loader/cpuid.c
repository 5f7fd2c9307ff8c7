/* cpuid and xgetbv, read once per call.  See cpuid.h for why this lives in the
 * library.  Leaf and bit positions: Intel SDM vol. 2A (CPUID) and AMD APM
 * vol. 3 (CPUID Fn0000_0001, Fn0000_0007, Fn8000_001D, Fn8000_0005/6). */
#include "loader/cpuid.h"

#include "algos/core/cpa.h"

#include <string.h>

#if defined(__x86_64__) || defined(__i386__)
#include <cpuid.h>

static int leaf(unsigned l, unsigned sub, unsigned r[4]) {
    return __get_cpuid_count(l, sub, &r[0], &r[1], &r[2], &r[3]);
}

/* XCR0, only to be read when cpuid says OSXSAVE. */
static uint64_t xcr0(void) {
    uint32_t lo, hi;
    __asm__ volatile("xgetbv" : "=a"(lo), "=d"(hi) : "c"(0));
    return ((uint64_t)hi << 32) | lo;
}

void cpl_cpuid_read(cpl_cpu_id *out) {
    unsigned r[4];
    memset(out, 0, sizeof *out);
    if (!leaf(0, 0, r)) return;
    const unsigned max_leaf = r[0];
    memcpy(out->vendor, &r[1], 4);     /* EBX EDX ECX spell the vendor */
    memcpy(out->vendor + 4, &r[3], 4);
    memcpy(out->vendor + 8, &r[2], 4);
    out->vendor[12] = '\0';

    unsigned ecx1 = 0, ebx7 = 0, ecx7 = 0, edx7 = 0, eax7_1 = 0;
    if (leaf(1, 0, r)) {
        const unsigned base_family = (r[0] >> 8) & 0xf, base_model = (r[0] >> 4) & 0xf;
        out->family = (int)base_family;
        out->model = (int)base_model;
        if (base_family == 0xf) out->family += (int)((r[0] >> 20) & 0xff);
        if (base_family == 0x6 || base_family == 0xf)
            out->model += (int)(((r[0] >> 16) & 0xf) << 4);
        out->stepping = (int)(r[0] & 0xf);
        ecx1 = r[2];
    }
    if (max_leaf >= 7 && leaf(7, 0, r)) {
        ebx7 = r[1];
        ecx7 = r[2];
        edx7 = r[3];
        if (r[0] >= 1 && leaf(7, 1, r)) eax7_1 = r[0];
    }
    (void)edx7;
    const uint64_t x = (ecx1 & (1u << 27)) ? xcr0() : 0; /* OSXSAVE */
    out->os_avx = (x & 0x6) == 0x6;                       /* SSE + AVX state */
    out->os_avx512 = out->os_avx && (x & 0xe0) == 0xe0;   /* opmask, ZMM_Hi256, Hi16_ZMM */

    out->sse42 = (ecx1 >> 20) & 1;
    out->avx = out->os_avx && ((ecx1 >> 28) & 1);
    out->fma = out->os_avx && ((ecx1 >> 12) & 1);
    out->avx2 = out->os_avx && ((ebx7 >> 5) & 1);
    out->avx512f = out->os_avx512 && ((ebx7 >> 16) & 1);
    out->avx512dq = out->os_avx512 && ((ebx7 >> 17) & 1);
    out->avx512bw = out->os_avx512 && ((ebx7 >> 30) & 1);
    out->avx512vl = out->os_avx512 && ((ebx7 >> 31) & 1);
    out->avx512_vnni = out->os_avx512 && ((ecx7 >> 11) & 1);
    out->avx512_bf16 = out->os_avx512 && ((eax7_1 >> 5) & 1);

    if (leaf(0x80000000u, 0, r) && r[0] >= 0x80000004u) {
        char b[49];
        for (unsigned i = 0; i < 3; i++) {
            leaf(0x80000002u + i, 0, r);
            memcpy(b + 16 * i, r, 16);
        }
        b[48] = '\0';
        const char *t = cpa_trim(b);
        memmove(b, t, strlen(t) + 1);
        memcpy(out->brand, b, sizeof out->brand);
    }
}

/* Deterministic caches leaf (Intel 4, AMD 0x8000001D): same register layout. */
static int caches_deterministic(unsigned l, cpl_cpuid_cache *out, int max) {
    unsigned r[4];
    int n = 0;
    for (unsigned sub = 0; sub < 32 && n < max; sub++) {
        if (!leaf(l, sub, r)) break;
        const unsigned type = r[0] & 0x1f;
        if (type == 0) break;
        cpl_cpuid_cache *c = &out[n++];
        c->level = (int)((r[0] >> 5) & 0x7);
        c->type = (int)type;
        c->sharing = ((r[0] >> 14) & 0xfff) + 1;
        c->line = (r[1] & 0xfff) + 1;
        const uint32_t parts = ((r[1] >> 12) & 0x3ff) + 1;
        const uint32_t ways = ((r[1] >> 22) & 0x3ff) + 1;
        const uint32_t sets = r[2] + 1;
        c->ways = ((r[0] >> 9) & 1) ? 0 : ways; /* bit 9: fully associative */
        c->size = ways * parts * c->line * sets;
    }
    return n;
}

/* AMD's legacy leaves: L1d in 0x80000005 ECX, L2 and L3 in 0x80000006 ECX/EDX.
 * The associativity is an encoded field there; the size is what matters. */
static int caches_amd_legacy(cpl_cpuid_cache *out, int max) {
    unsigned r[4];
    int n = 0;
    if (!leaf(0x80000000u, 0, r) || r[0] < 0x80000006u) return 0;
    if (n < max && leaf(0x80000005u, 0, r) && (r[2] >> 24)) {
        cpl_cpuid_cache *c = &out[n++];
        *c = (cpl_cpuid_cache){1, 1, (r[2] >> 24) * 1024u, r[2] & 0xff, (r[2] >> 16) & 0xff, 0};
    }
    if (leaf(0x80000006u, 0, r)) {
        if (n < max && (r[2] >> 16)) {
            cpl_cpuid_cache *c = &out[n++];
            *c = (cpl_cpuid_cache){2, 3, (r[2] >> 16) * 1024u, r[2] & 0xff, (r[2] >> 12) & 0xf, 0};
        }
        if (n < max && (r[3] >> 18)) {
            cpl_cpuid_cache *c = &out[n++];
            *c = (cpl_cpuid_cache){3, 3, (r[3] >> 18) * 512u * 1024u, r[3] & 0xff,
                                   (r[3] >> 12) & 0xf, 0};
        }
    }
    return n;
}

int cpl_cpuid_caches(cpl_cpuid_cache *out, int max) {
    unsigned r[4];
    if (max <= 0 || !leaf(0, 0, r)) return 0;
    const unsigned max_leaf = r[0];
    char vendor[13];
    memcpy(vendor, &r[1], 4);
    memcpy(vendor + 4, &r[3], 4);
    memcpy(vendor + 8, &r[2], 4);
    vendor[12] = '\0';
    if (strcmp(vendor, "GenuineIntel") == 0 && max_leaf >= 4) return caches_deterministic(4, out, max);
    if (leaf(0x80000000u, 0, r) && r[0] >= 0x8000001Du && leaf(0x80000001u, 0, r) &&
        ((r[2] >> 22) & 1)) { /* TOPOEXT */
        int n = caches_deterministic(0x8000001Du, out, max);
        if (n > 0) return n;
    }
    return caches_amd_legacy(out, max);
}

#else /* not x86 */

void cpl_cpuid_read(cpl_cpu_id *out) { memset(out, 0, sizeof *out); }
int cpl_cpuid_caches(cpl_cpuid_cache *out, int max) {
    (void)out;
    (void)max;
    return 0;
}

#endif

uint32_t cpl_cpuid_feature_bits(const cpl_cpu_id *id) {
    const int f[] = {id->sse42,    id->avx,      id->avx2,     id->fma,         id->avx512f,
                     id->avx512bw, id->avx512vl, id->avx512dq, id->avx512_vnni, id->avx512_bf16};
    uint32_t bits = 0;
    for (unsigned i = 0; i < sizeof f / sizeof f[0]; i++)
        if (f[i]) bits |= 1u << i;
    return bits;
}
