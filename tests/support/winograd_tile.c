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
