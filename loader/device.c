/* This machine's fingerprint: which processor model, ISA, cache geometry and
 * logical CPU count a tuning table was measured on.  Only identity enters it,
 * never a measured figure, so it is stable across runs and reboots; it changes
 * when the table may no longer apply (another CPU model, a VM given another
 * CPU count).  The harness's machine description uses this same function. */
#define _GNU_SOURCE
#include <unistd.h>

#include "convpick/table.h"
#include "loader/device.h"

uint64_t cpl_fnv1a64(uint64_t h, const void *p, size_t n) {
    const unsigned char *b = p;
    for (size_t i = 0; i < n; i++) {
        h ^= b[i];
        h *= CPL_FNV1A64_PRIME;
    }
    return h;
}

static uint64_t hash_int(uint64_t h, int64_t v) {
    unsigned char b[8];
    const uint64_t u = (uint64_t)v;
    for (int i = 0; i < 8; i++) b[i] = (unsigned char)(u >> (8 * i));
    return cpl_fnv1a64(h, b, sizeof b);
}

static uint64_t hash_str(uint64_t h, const char *s) {
    size_t n = 0;
    while (s[n]) n++;
    return cpl_fnv1a64(h, s, n + 1);
}

void cpl_fingerprint_of(const cpl_cpu_id *id, const cpl_cpuid_cache *caches, int ncaches,
                        long logical_cpus, char out[17]) {
    static const char hex[] = "0123456789abcdef";
    uint64_t h = CPL_FNV1A64_OFFSET;
    h = hash_str(h, "convpick-device-1"); /* bump when the recipe changes */
    h = hash_str(h, id->vendor);
    h = hash_int(h, id->family);
    h = hash_int(h, id->model);
    h = hash_int(h, id->stepping);
    h = hash_str(h, id->brand);
    h = hash_int(h, cpl_cpuid_feature_bits(id));
    h = hash_int(h, ncaches);
    for (int i = 0; i < ncaches; i++) {
        const cpl_cpuid_cache *c = &caches[i];
        h = hash_int(h, c->level);
        h = hash_int(h, c->type);
        h = hash_int(h, c->size);
        h = hash_int(h, c->line);
        h = hash_int(h, c->ways);
        h = hash_int(h, c->sharing);
    }
    h = hash_int(h, logical_cpus);
    for (int i = 0; i < 16; i++) out[i] = hex[(h >> (60 - 4 * i)) & 0xf];
    out[16] = '\0';
}

void cp_device_fingerprint(char out[17]) {
    cpl_cpu_id id;
    cpl_cpuid_cache caches[16];
    cpl_cpuid_read(&id);
    const int n = cpl_cpuid_caches(caches, 16);
    cpl_fingerprint_of(&id, caches, n, sysconf(_SC_NPROCESSORS_ONLN), out);
}
