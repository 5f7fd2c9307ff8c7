/* The single-tile F(2,3) / F(2x2,3x3) reference: plain matrix products with
 * the matrices of Lavin & Gray 2016 (see winograd_tile.h). */
#include "tests/support/winograd_tile.h"

static const float wino_bt[4][4] = {
    {1.0f, 0.0f, -1.0f, 0.0f},
    {0.0f, 1.0f, 1.0f, 0.0f},
    {0.0f, -1.0f, 1.0f, 0.0f},
    {0.0f, 1.0f, 0.0f, -1.0f},
};
static const float wino_g[4][3] = {
    {1.0f, 0.0f, 0.0f},
    {0.5f, 0.5f, 0.5f},
    {0.5f, -0.5f, 0.5f},
    {0.0f, 0.0f, 1.0f},
};
static const float wino_at[2][4] = {
    {1.0f, 1.0f, 1.0f, 0.0f},
    {0.0f, 1.0f, -1.0f, -1.0f},
};

void cpt_wino_filter_tx(const float g[9], float u[16]) {
    float gg[4][3]; /* G g */
    for (int i = 0; i < 4; i++)
        for (int j = 0; j < 3; j++) {
            float acc = 0.0f;
            for (int k = 0; k < 3; k++) acc += wino_g[i][k] * g[k * 3 + j];
            gg[i][j] = acc;
        }
    for (int i = 0; i < 4; i++) /* (G g) G^T */
        for (int j = 0; j < 4; j++) {
            float acc = 0.0f;
            for (int k = 0; k < 3; k++) acc += gg[i][k] * wino_g[j][k];
            u[i * 4 + j] = acc;
        }
}

void cpt_wino_input_tx(const float d[16], float v[16]) {
    float bd[4][4]; /* B^T d */
    for (int i = 0; i < 4; i++)
        for (int j = 0; j < 4; j++) {
            float acc = 0.0f;
            for (int k = 0; k < 4; k++) acc += wino_bt[i][k] * d[k * 4 + j];
            bd[i][j] = acc;
        }
    for (int i = 0; i < 4; i++) /* (B^T d) B, B = (B^T)^T */
        for (int j = 0; j < 4; j++) {
            float acc = 0.0f;
            for (int k = 0; k < 4; k++) acc += bd[i][k] * wino_bt[j][k];
            v[i * 4 + j] = acc;
        }
}

void cpt_wino_output_tx(const float m[16], float y[4]) {
    float am[2][4]; /* A^T m */
    for (int i = 0; i < 2; i++)
        for (int j = 0; j < 4; j++) {
            float acc = 0.0f;
            for (int k = 0; k < 4; k++) acc += wino_at[i][k] * m[k * 4 + j];
            am[i][j] = acc;
        }
    for (int i = 0; i < 2; i++) /* (A^T m) A */
        for (int j = 0; j < 2; j++) {
            float acc = 0.0f;
            for (int k = 0; k < 4; k++) acc += am[i][k] * wino_at[j][k];
            y[i * 2 + j] = acc;
        }
}

void cpt_wino_f2x2_3x3_tile(const float d[16], const float g[9], float y[4], long *mults) {
    float u[16], v[16], m[16];
    cpt_wino_filter_tx(g, u);
    cpt_wino_input_tx(d, v);
    long count = 0;
    for (int i = 0; i < 16; i++) {
        m[i] = u[i] * v[i];
        count++;
    }
    cpt_wino_output_tx(m, y);
    if (mults) *mults += count;
}

void cpt_wino_f2_3(const float d[4], const float g[3], float y[2], long *mults) {
    float u[4], v[4], m[4];
    for (int i = 0; i < 4; i++) {
        u[i] = wino_g[i][0] * g[0] + wino_g[i][1] * g[1] + wino_g[i][2] * g[2];
        v[i] = 0.0f;
        for (int k = 0; k < 4; k++) v[i] += wino_bt[i][k] * d[k];
    }
    long count = 0;
    for (int i = 0; i < 4; i++) {
        m[i] = u[i] * v[i];
        count++;
    }
    for (int i = 0; i < 2; i++) {
        y[i] = 0.0f;
        for (int k = 0; k < 4; k++) y[i] += wino_at[i][k] * m[k];
    }
    if (mults) *mults += count;
}

/* F(4x4,3x3): the matrices of Lavin & Gray 2016, section 4.2 (interpolation
 * points 0, 1, -1, 2, -2, infinity), as matrices. */
static const float wino4_bt[6][6] = {
    {4, 0, -5, 0, 1, 0}, {0, -4, -4, 1, 1, 0}, {0, 4, -4, -1, 1, 0},
    {0, -2, -1, 2, 1, 0}, {0, 2, -1, -2, 1, 0}, {0, 4, 0, -5, 0, 1},
};
static const float wino4_g[6][3] = {
    {1.0f / 4, 0, 0},
    {-1.0f / 6, -1.0f / 6, -1.0f / 6},
    {-1.0f / 6, 1.0f / 6, -1.0f / 6},
    {1.0f / 24, 1.0f / 12, 1.0f / 6},
    {1.0f / 24, -1.0f / 12, 1.0f / 6},
    {0, 0, 1},
};
static const float wino4_at[4][6] = {
    {1, 1, 1, 1, 1, 0}, {0, 1, -1, 2, -2, 0}, {0, 1, 1, 4, 4, 0}, {0, 1, -1, 8, -8, 1},
};

/* out (ra x cb) = a (ra x n, row stride lda) * b (n x cb, strides bs0 per row
 * index, bs1 per column index): b is read transposed with bs0 = 1. */
static void wino4_mul(const float *a, int ra, int n, int lda, const float *b, int bs0, int bs1,
                      int cb, float *out) {
    for (int i = 0; i < ra; i++)
        for (int j = 0; j < cb; j++) {
            float acc = 0.0f;
            for (int k = 0; k < n; k++) acc += a[i * lda + k] * b[k * bs0 + j * bs1];
            out[i * cb + j] = acc;
        }
}

void cpt_wino_f4x4_3x3_tile(const float d[36], const float g[9], float y[16], long *mults) {
    float t[36], u[36], v[36], m[36], s[24];
    wino4_mul(&wino4_g[0][0], 6, 3, 3, g, 3, 1, 3, t);          /* G g (6x3) */
    wino4_mul(t, 6, 3, 3, &wino4_g[0][0], 1, 3, 6, u);          /* (G g) G^T */
    wino4_mul(&wino4_bt[0][0], 6, 6, 6, d, 6, 1, 6, t);         /* B^T d */
    wino4_mul(t, 6, 6, 6, &wino4_bt[0][0], 1, 6, 6, v);         /* (B^T d) B */
    long count = 0;
    for (int i = 0; i < 36; i++) {
        m[i] = u[i] * v[i];
        count++;
    }
    wino4_mul(&wino4_at[0][0], 4, 6, 6, m, 6, 1, 6, s);         /* A^T m (4x6) */
    wino4_mul(s, 4, 6, 6, &wino4_at[0][0], 1, 6, 4, y);         /* (A^T m) A */
    if (mults) *mults += count;
}
