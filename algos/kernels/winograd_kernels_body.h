/* Template of the transform loops (contract in winograd_kernels.h).  Included
 * by winograd_kernels_ref.c, winograd_kernels_avx2.c and winograd_kernels_avx512.c with
 *   CPA_WINO_K(name)  the name of each function to define
 *   CPA_WINO_SET      the name of the cpa_wino_kernels table to define
 * The matrices are those of Lavin & Gray 2016 (see winograd_2x2_3x3.c). */

static void CPA_WINO_K(in_rows)(float *restrict r0, float *restrict r1, float *restrict r2,
                                float *restrict r3, int64_t len) {
    for (int64_t u = 0; u < len; u++) {
        const float d0 = r0[u], d1 = r1[u], d2 = r2[u], d3 = r3[u];
        r0[u] = d0 - d2;
        r1[u] = d1 + d2;
        r2[u] = d2 - d1;
        r3[u] = d1 - d3;
    }
}

static void CPA_WINO_K(in_cols)(const float *restrict r, float *restrict v0, float *restrict v1,
                                float *restrict v2, float *restrict v3, int64_t nt) {
    for (int64_t t = 0; t < nt; t++) {
        const float e0 = r[2 * t], e1 = r[2 * t + 1], e2 = r[2 * t + 2], e3 = r[2 * t + 3];
        v0[t] = e0 - e2;
        v1[t] = e1 + e2;
        v2[t] = e2 - e1;
        v3[t] = e1 - e3;
    }
}

/* A^T on the rows of M: s0 = M0 + M1 + M2, s1 = M1 - M2 - M3 (Mi = row i,
 * elements xi = 4i .. 4i+3); then A on the columns of s0 and s1. */
#define CPA_WINO_ROWS(m, ms)                                                    \
    const float *restrict m0 = (m), *restrict m1 = (m) + (ms);                  \
    const float *restrict m2 = (m) + 2 * (ms), *restrict m3 = (m) + 3 * (ms);   \
    const float *restrict m4 = (m) + 4 * (ms), *restrict m5 = (m) + 5 * (ms);   \
    const float *restrict m6 = (m) + 6 * (ms), *restrict m7 = (m) + 7 * (ms);   \
    const float *restrict m8 = (m) + 8 * (ms), *restrict m9 = (m) + 9 * (ms);   \
    const float *restrict m10 = (m) + 10 * (ms), *restrict m11 = (m) + 11 * (ms); \
    const float *restrict m12 = (m) + 12 * (ms), *restrict m13 = (m) + 13 * (ms); \
    const float *restrict m14 = (m) + 14 * (ms), *restrict m15 = (m) + 15 * (ms)

static void CPA_WINO_K(out_2rows)(const float *restrict m, int64_t ms, float bias,
                                  float *restrict o0, float *restrict o1, int64_t nt) {
    CPA_WINO_ROWS(m, ms);
    for (int64_t t = 0; t < nt; t++) {
        const float s00 = m0[t] + m4[t] + m8[t], s01 = m1[t] + m5[t] + m9[t];
        const float s02 = m2[t] + m6[t] + m10[t], s03 = m3[t] + m7[t] + m11[t];
        const float s10 = m4[t] - m8[t] - m12[t], s11 = m5[t] - m9[t] - m13[t];
        const float s12 = m6[t] - m10[t] - m14[t], s13 = m7[t] - m11[t] - m15[t];
        o0[2 * t] = s00 + s01 + s02 + bias;
        o0[2 * t + 1] = s01 - s02 - s03 + bias;
        o1[2 * t] = s10 + s11 + s12 + bias;
        o1[2 * t + 1] = s11 - s12 - s13 + bias;
    }
}

static void CPA_WINO_K(out_1row)(const float *restrict m, int64_t ms, float bias,
                                 float *restrict o0, int64_t nt) {
    CPA_WINO_ROWS(m, ms);
    (void)m12; (void)m13; (void)m14; (void)m15;
    for (int64_t t = 0; t < nt; t++) {
        const float s00 = m0[t] + m4[t] + m8[t], s01 = m1[t] + m5[t] + m9[t];
        const float s02 = m2[t] + m6[t] + m10[t], s03 = m3[t] + m7[t] + m11[t];
        o0[2 * t] = s00 + s01 + s02 + bias;
        o0[2 * t + 1] = s01 - s02 - s03 + bias;
    }
}

#undef CPA_WINO_ROWS

const cpa_wino_kernels CPA_WINO_SET = {
    CPA_WINO_K(in_rows),
    CPA_WINO_K(in_cols),
    CPA_WINO_K(out_2rows),
    CPA_WINO_K(out_1row),
};
