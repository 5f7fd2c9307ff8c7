/* winograd_4x4_3x3: Winograd minimal filtering F(4x4,3x3), the element-wise
 * stage as 36 GEMMs: 36 general multiplications per 4x4 output tile and input
 * channel instead of direct's 144 (4x fewer; F(2x2,3x3) saves 2.25x).
 * Matrices of Lavin & Gray, "Fast Algorithms for Convolutional Neural
 * Networks", CVPR 2016, section 4.2 (F(4,3) from the interpolation points 0,
 * 1, -1, 2, -2 and infinity, nested as F(4x4,3x3) = F(4,3) x F(4,3)):
 *   B^T = [4 0 -5 0 1 0; 0 -4 -4 1 1 0; 0 4 -4 -1 1 0;
 *          0 -2 -1 2 1 0; 0 2 -1 -2 1 0; 0 4 0 -5 0 1]
 *   G   = [1/4 0 0; -1/6 -1/6 -1/6; -1/6 1/6 -1/6;
 *          1/24 1/12 1/6; 1/24 -1/12 1/6; 0 0 1]
 *   A^T = [1 1 1 1 1 0; 0 1 -1 2 -2 0; 0 1 1 4 4 0; 0 1 -1 8 -8 1]
 * G is the table wino4_g below (applied by the driver); B^T and A^T in the transform loops of
 * kernels/winograd4_kernels_body.h (portable, AVX2 and AVX-512, chosen at run time);
 * tests/support/winograd_tile.c keeps all three as matrices for the tests.
 * Tiling, blocking, the GEMM stage, the parameters and partial edge tiles'
 * bookkeeping are the shared driver's (algos/core/wino_driver.h).  Any
 * padding the shape rules allow; groups = 1 only (grouped layers refused). */
#include <string.h>

#include "algos/core/cpa.h"
#include "algos/core/wino_driver.h"
#include "algos/kernels/blocked_tile.h"
#include "algos/kernels/winograd4_kernels.h"

/* G above, row-major (6 x 3). */
static const double wino4_g[18] = {
    1.0 / 4,  0.0,       0.0,     -1.0 / 6, -1.0 / 6, -1.0 / 6, -1.0 / 6, 1.0 / 6, -1.0 / 6,
    1.0 / 24, 1.0 / 12,  1.0 / 6, 1.0 / 24, -1.0 / 12, 1.0 / 6, 0.0,      0.0,     1.0,
};

static const void *wino4_select(int64_t kernels) {
    return cpa_wino4_kernels_select(kernels); /* CPA_ISA_* level, resolved for the CPU */
}

/* V = B^T d B: B^T on the six whole rows, then B on each tile's six columns. */
static void wino4_input(const void *kern, float *rows, int64_t len, int64_t nt, float *v,
                        int64_t vs) {
    const cpa_wino4_kernels *k = kern;
    k->in_rows(rows, len);
    for (int i = 0; i < 6; i++) k->in_cols(rows + i * len, v + 6 * i * vs, vs, nt);
}

/* y = A^T M A + bias.  Full tiles of a full tile row straight into y; when the
 * tile row is cut by the bottom edge, through scratch and copied; the last
 * tile alone when the right edge cuts it. */
static void wino4_output(const void *kern, const float *mk, int64_t ms, float bias, float *y,
                         int64_t ldy, int64_t nrows, int64_t ncols, int64_t nt,
                         float *scratch) {
    (void)nt;
    const cpa_wino4_kernels *k = kern;
    const int64_t nfull = ncols / 4, rest = ncols % 4;
    if (nfull > 0) {
        if (nrows == 4) {
            k->out_tiles(mk, ms, bias, y, ldy, nfull);
        } else {
            k->out_tiles(mk, ms, bias, scratch, 4 * nfull, nfull);
            for (int64_t i = 0; i < nrows; i++)
                memcpy(y + i * ldy, scratch + i * 4 * nfull, (size_t)(4 * nfull) * sizeof(float));
        }
    }
    if (rest) {
        float m[36], o[16];
        for (int xi = 0; xi < 36; xi++) m[xi] = mk[xi * ms + nfull];
        k->out_tiles(m, 1, bias, o, 4, 1);
        for (int64_t i = 0; i < nrows; i++)
            memcpy(y + i * ldy + 4 * nfull, o + 4 * i, (size_t)rest * sizeof(float));
    }
}

static const cpa_wino_variant wino4 = {
    .name = "F(4x4,3x3)",
    .m = 4,
    .alpha = 6,
    .g = wino4_g,
    .select = wino4_select,
    .input = wino4_input,
    .output = wino4_output,
};

/* Tolerance.  Measured against the fp64 oracle (error relative to sum|x||w| +
 * |b| of each output's receptive field, convpick/oracle.h), data uniform in
 * [-1, 1), AVX2 transforms, U computed in double and rounded once:
 *   ResNet-50's 3x3 stride-1 layers (tests/harness/test_winograd_error.c):
 *     1.0e-6 .. 2.3e-6, 12x to 23x F(2x2,3x3)'s 0.8e-7 .. 1.1e-7;
 *   the oracle grid (tests/lib/test_algos_grid.c): at most 2.8e-6, except the
 *     single-channel layer with full padding: 1.7e-3 without bias (7.7e-4
 *     and 1.0e-3 with two other ways of rounding U, so it is rounding luck).
 * That exception is the per-element measure, not a fault: a corner output of
 * a fully padded layer sees one tap (its sum|x||w| was about 1.7e-3), but
 * Winograd computes it from the whole 6x6 tile, whose transforms (entries up
 * to 8 in A^T, 5 in B^T) carry the rounding of every value of the tile into
 * it: its absolute error was 1.3e-6, the same as on interior outputs.  The
 * error bound of F(m x m, 3x3) grows with the tile and with the size of the
 * matrices' entries (Barabasz, Anderson, Soodhalter & Gregg, "Error Analysis
 * and Improving the Accuracy of Winograd Convolution for Deep Neural
 * Networks", ACM TOMS 2020), so this algorithm cannot share F(2x2,3x3)'s
 * 5e-5.  5e-3 is that worst case with a 3x margin for other seeds and
 * rounding; the real layers' error is what tune records per candidate
 * (rel_err), and `tune --max-rel-err` or a bounded lookup
 * (cp_table_lookup_bounded) keeps this algorithm out where it matters. */
CPA_WINO_ALGO(cpa_winograd_4x4_3x3, wino4, "winograd_4x4_3x3",
              "Winograd F(4x4,3x3), element-wise stage as 36 GEMMs (3x3, stride 1)", 5e-3);
