/* Reproducible test tensors (uniform in [-1, 1) from a seed). */
#ifndef CONVPICK_DATA_H
#define CONVPICK_DATA_H

#include <stddef.h>
#include <stdint.h>

uint64_t cph_rng_next(uint64_t *state);
void cph_fill_uniform(float *v, size_t n, uint64_t seed);

#endif
