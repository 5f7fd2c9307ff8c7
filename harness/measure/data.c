/* Reproducible test data: a seeded generator shared by verify, bench and tests. */
#include "harness/measure/data.h"

/* splitmix64 (Steele, Lea & Flood, "Fast Splittable Pseudorandom Number
 * Generators", OOPSLA 2014): tiny, seedable, good enough for test tensors. */
uint64_t cph_rng_next(uint64_t *state) {
    uint64_t z = (*state += 0x9E3779B97F4A7C15ull);
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ull;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBull;
    return z ^ (z >> 31);
}

void cph_fill_uniform(float *v, size_t n, uint64_t seed) {
    uint64_t st = seed;
    for (size_t i = 0; i < n; i++) {
        /* 24 random bits -> [-1, 1) exactly representable in float */
        const uint32_t bits = (uint32_t)(cph_rng_next(&st) >> 40);
        v[i] = (float)bits / 8388608.0f - 1.0f;
    }
}
