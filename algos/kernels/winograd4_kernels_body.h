/* Template of the F(4x4,3x3) transform loops (contract in
 * winograd4_kernels.h).  Included by winograd4_kernels_ref.c and
 * winograd4_kernels_avx2.c with
 *   CPA_WINO4_K(name)  the name of each function to define
 *   CPA_WINO4_SET      the name of the cpa_wino4_kernels table to define
 *   CPA_WINO4_STORAGE  (optional) its storage class, e.g. static
 * B^T = [4 0 -5 0 1 0; 0 -4 -4 1 1 0; 0 4 -4 -1 1 0;
 *        0 -2 -1 2 1 0; 0 2 -1 -2 1 0; 0 4 0 -5 0 1]
 * A^T = [1 1 1 1 1 0; 0 1 -1 2 -2 0; 0 1 1 4 4 0; 0 1 -1 8 -8 1]
 * (Lavin & Gray 2016), written as additions on shared subexpressions. */

/* t0..t5 = B^T (d0..d5). */
#define CPA_WINO4_BT(d0, d1, d2, d3, d4, d5, t0, t1, t2, t3, t4, t5) \
    do {                                                              \
        const float a_ = (d4) - 4.0f * (d2), b_ = (d3) - 4.0f * (d1); \
        const float c_ = (d4) - (d2), e_ = 2.0f * ((d3) - (d1));      \
        t0 = 4.0f * (d0) - 5.0f * (d2) + (d4);                        \
        t1 = a_ + b_;                                                 \
        t2 = a_ - b_;                                                 \
        t3 = c_ + e_;                                                 \
        t4 = c_ - e_;                                                 \
        t5 = 4.0f * (d1) - 5.0f * (d3) + (d5);                        \
    } while (0)

/* y0..y3 = A^T (m0..m5). */
#define CPA_WINO4_AT(m0, m1, m2, m3, m4, m5, y0, y1, y2, y3) \
    do {                                                      \
        const float p_ = (m1) + (m2), q_ = (m1) - (m2);       \
        const float r_ = (m3) + (m4), s_ = (m3) - (m4);       \
        y0 = (m0) + p_ + r_;                                  \
        y1 = q_ + 2.0f * s_;                                  \
        y2 = p_ + 4.0f * r_;                                  \
        y3 = q_ + 8.0f * s_ + (m5);                           \
    } while (0)

static void CPA_WINO4_K(in_rows)(float *restrict r, int64_t len) {
    float *restrict r0 = r, *restrict r1 = r + len, *restrict r2 = r + 2 * len;
    float *restrict r3 = r + 3 * len, *restrict r4 = r + 4 * len, *restrict r5 = r + 5 * len;
    for (int64_t u = 0; u < len; u++) {
        const float d0 = r0[u], d1 = r1[u], d2 = r2[u], d3 = r3[u], d4 = r4[u], d5 = r5[u];
        float t0, t1, t2, t3, t4, t5;
        CPA_WINO4_BT(d0, d1, d2, d3, d4, d5, t0, t1, t2, t3, t4, t5);
        r0[u] = t0; r1[u] = t1; r2[u] = t2; r3[u] = t3; r4[u] = t4; r5[u] = t5;
    }
}

static void CPA_WINO4_K(in_cols)(const float *restrict r, float *restrict v, int64_t vs,
                                 int64_t nt) {
    float *restrict v0 = v, *restrict v1 = v + vs, *restrict v2 = v + 2 * vs;
    float *restrict v3 = v + 3 * vs, *restrict v4 = v + 4 * vs, *restrict v5 = v + 5 * vs;
    for (int64_t t = 0; t < nt; t++) {
        const float *e = r + 4 * t;
        float t0, t1, t2, t3, t4, t5;
        CPA_WINO4_BT(e[0], e[1], e[2], e[3], e[4], e[5], t0, t1, t2, t3, t4, t5);
        v0[t] = t0; v1[t] = t1; v2[t] = t2; v3[t] = t3; v4[t] = t4; v5[t] = t5;
    }
}

static void CPA_WINO4_K(out_tiles)(const float *restrict m, int64_t ms, float bias,
                                   float *restrict o, int64_t ldo, int64_t nt) {
    for (int64_t t = 0; t < nt; t++) {
        float s[4][6]; /* A^T M: rows of the 6x6 element-wise product combined */
        for (int j = 0; j < 6; j++)
            CPA_WINO4_AT(m[j * ms + t], m[(6 + j) * ms + t], m[(12 + j) * ms + t],
                         m[(18 + j) * ms + t], m[(24 + j) * ms + t], m[(30 + j) * ms + t],
                         s[0][j], s[1][j], s[2][j], s[3][j]);
        for (int i = 0; i < 4; i++) { /* (A^T M) A */
            float y0, y1, y2, y3;
            CPA_WINO4_AT(s[i][0], s[i][1], s[i][2], s[i][3], s[i][4], s[i][5], y0, y1, y2, y3);
            float *oi = o + i * ldo + 4 * t;
            oi[0] = y0 + bias; oi[1] = y1 + bias; oi[2] = y2 + bias; oi[3] = y3 + bias;
        }
    }
}

#undef CPA_WINO4_BT
#undef CPA_WINO4_AT

#ifndef CPA_WINO4_STORAGE
#define CPA_WINO4_STORAGE
#endif
CPA_WINO4_STORAGE const cpa_wino4_kernels CPA_WINO4_SET = {
    CPA_WINO4_K(in_rows),
    CPA_WINO4_K(in_cols),
    CPA_WINO4_K(out_tiles),
};
