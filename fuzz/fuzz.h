/* The entry point every fuzz target defines: libFuzzer calls it with each
 * input it generates (build with -DCP_FUZZ=ON), and replay_main.c calls it
 * with each file of a committed corpus in the normal builds, so that every
 * input that once crashed stays a regression test. */
#ifndef CONVPICK_FUZZ_H
#define CONVPICK_FUZZ_H

#include <stddef.h>
#include <stdint.h>

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

/* Aborts with the message when cond is false: a property of the code under
 * test that an input broke (libFuzzer and the replay both report the abort). */
void cpf_require(int cond, const char *what);

#endif
