/* The CPU feature test every run-time kernel choice makes, in one place. */
#ifndef CPA_CPU_FEATURES_H
#define CPA_CPU_FEATURES_H

/* 1 when the running CPU has AVX2 and FMA (x86 only; 0 elsewhere). */
int cpa_cpu_avx2_fma(void);

#endif
