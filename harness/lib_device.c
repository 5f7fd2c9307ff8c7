/* PLACEHOLDER: the real device fingerprint replaces this file before landing.
 * Only here so that the table loader links: a hash of the cpuid vendor and
 * brand string and the number of online CPUs. */
#include <cpuid.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>
#include <unistd.h>

#include "convpick/table.h"

void cp_device_fingerprint(char out[17]) {
    unsigned r[12] = {0};
    __get_cpuid(0, &r[0], &r[1], &r[3], &r[2]);
    for (unsigned i = 0; i < 3; i++) __get_cpuid(0x80000002u + i, &r[4 * i], &r[4 * i + 1], &r[4 * i + 2], &r[4 * i + 3]);
    uint64_t h = 1469598103934665603ull;
    const unsigned char *b = (const unsigned char *)r;
    for (size_t i = 0; i < sizeof r; i++) h = (h ^ b[i]) * 1099511628211ull;
    long n = sysconf(_SC_NPROCESSORS_ONLN);
    h = (h ^ (uint64_t)n) * 1099511628211ull;
    snprintf(out, 17, "%016llx", (unsigned long long)h);
}
