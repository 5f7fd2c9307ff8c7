/* The part of Winograd convolution F(m x m, 3x3) that does not depend on m:
 * tiling, blocking, the element-wise stage as alpha^2 batched GEMMs (alpha =
 * m + 2), the parameters and the workspace.  Each variant (algos/winograd_*.c)
 * supplies its transforms through a cpa_wino_variant and wraps these
 * functions as its cp_algo callbacks.
 *
 * Data flow for one block of `tile_block` m x m output tiles (alpha x alpha
 * input tiles overlapping by 2), xi = alpha*i + j:
 *   prepare: U[xi] (K x C) = (G g G^T)[xi] for every (k, c).
 *   run:     V[xi] (C x T) = (B^T d B)[xi] per tile and channel   (parallel over c)
 *            M[xi] (K x T) = U[xi] * V[xi], alpha^2 GEMMs          (OpenBLAS shared out
 *                                   over the workers, gemm_split.h, or the packed
 *                                   blocked tile kernel, parallel over (xi, K panel))
 *            y = A^T M A + bias, clipped to P x Q                  (parallel over k)
 * Workspace: the block's alpha^2 V and M matrices plus alpha row buffers per
 * worker, so it grows with the block, never with the layer. */
#ifndef CPA_WINO_DRIVER_H
#define CPA_WINO_DRIVER_H

#include <stdint.h>

#include "convpick/algo.h"

enum { CPA_WINO_TILE_BLOCK = 0, CPA_WINO_KERNELS = 1, CPA_WINO_GEMM = 2, CPA_WINO_NPARAMS };

typedef struct cpa_wino_variant {
    const char *name; /* "F(2x2,3x3)", for refusals */
    int m;            /* output tile edge */
    int alpha;        /* input tile edge, m + 2 */
    /* G, alpha x 3 row-major: U = G g G^T for a 3x3 cross-correlation filter g
     * (computed in double, rounded once to float). */
    const double *g;
    /* The transform kernels for the `kernels` parameter (0 best, 1 portable). */
    const void *(*select)(int64_t kernels);
    /* V = B^T d B for nt tiles of one tile row: rows holds alpha input rows of
     * len = m*nt + 2 floats each (zero outside the image; may be overwritten);
     * V[xi] of tile t goes to v[xi * vstride + t]. */
    void (*input)(const void *kern, float *rows, int64_t len, int64_t nt, float *v,
                  int64_t vstride);
    /* y = A^T M A + bias for nt tiles (M[xi] of tile t at mm[xi * mstride + t]),
     * writing only output rows < nrows and columns < ncols of the segment
     * (row stride ldy); scratch holds alpha * (m*nt + 2) floats. */
    void (*output)(const void *kern, const float *mm, int64_t mstride, float bias, float *y,
                   int64_t ldy, int64_t nrows, int64_t ncols, int64_t nt, float *scratch);
} cpa_wino_variant;

/* The three parameters' descriptions (same for every variant). */
extern const cp_param_desc cpa_wino_params[CPA_WINO_NPARAMS];

int cpa_wino_supports(const cpa_wino_variant *v, const cp_shape *s, char *why, size_t cap);
void cpa_wino_defaults(const cpa_wino_variant *v, const cp_shape *s, const cp_cache_sizes *c,
                       cp_params *out);
int cpa_wino_candidates(const cpa_wino_variant *v, const cp_shape *s, const cp_cache_sizes *c,
                        cp_params *out, int max);
size_t cpa_wino_workspace_size(const cpa_wino_variant *v, const cp_shape *s, const cp_params *p,
                               int nthreads);
size_t cpa_wino_prepared_size(const cpa_wino_variant *v, const cp_shape *s, const cp_params *p);
cp_status cpa_wino_prepare(const cpa_wino_variant *v, const cp_shape *s, cp_flip flip,
                           const cp_params *p, const float *w, void *out);
cp_status cpa_wino_run(const cpa_wino_variant *v, const cp_run_args *a);
/* The builds a run with parameters p uses ("avx512+blas", ...; cp_algo.isa). */
const char *cpa_wino_isa(const cp_params *p);

/* Defines `const cp_algo SYM` for variant VAR (a static const
 * cpa_wino_variant) with one-line wrappers of the driver as its callbacks. */
#define CPA_WINO_ALGO(SYM, VAR, NAME, SUMMARY, TOL)                                          \
    static int SYM##_supports(const cp_shape *s, cp_flip f, char *why, size_t cap) {         \
        (void)f; /* CP_CONV: the weights are flipped in prepare */                           \
        return cpa_wino_supports(&VAR, s, why, cap);                                         \
    }                                                                                        \
    static void SYM##_defaults(const cp_shape *s, const cp_cache_sizes *c, cp_params *o) {   \
        cpa_wino_defaults(&VAR, s, c, o);                                                    \
    }                                                                                        \
    static int SYM##_candidates(const cp_shape *s, const cp_cache_sizes *c, cp_params *o,    \
                                int max) {                                                   \
        return cpa_wino_candidates(&VAR, s, c, o, max);                                      \
    }                                                                                        \
    static size_t SYM##_workspace_size(const cp_shape *s, cp_flip f, const cp_params *p,     \
                                       int nthreads) {                                       \
        (void)f;                                                                             \
        return cpa_wino_workspace_size(&VAR, s, p, nthreads);                                \
    }                                                                                        \
    static size_t SYM##_prepared_size(const cp_shape *s, cp_flip f, const cp_params *p) {    \
        (void)f;                                                                             \
        return cpa_wino_prepared_size(&VAR, s, p);                                           \
    }                                                                                        \
    static cp_status SYM##_prepare(const cp_shape *s, cp_flip f, const cp_params *p,         \
                                   const float *w, void *out) {                              \
        return cpa_wino_prepare(&VAR, s, f, p, w, out);                                      \
    }                                                                                        \
    static cp_status SYM##_run(const cp_run_args *a) { return cpa_wino_run(&VAR, a); }       \
    static const char *SYM##_isa(const cp_shape *s, const cp_params *p) {                    \
        (void)s;                                                                             \
        return cpa_wino_isa(p);                                                              \
    }                                                                                        \
    const cp_algo SYM = {                                                                    \
        .name = NAME,                                                                        \
        .summary = SUMMARY,                                                                  \
        .tolerance = TOL,                                                                    \
        .nparams = CPA_WINO_NPARAMS,                                                         \
        .params = cpa_wino_params,                                                           \
        .supports = SYM##_supports,                                                          \
        .defaults = SYM##_defaults,                                                          \
        .candidates = SYM##_candidates,                                                      \
        .workspace_size = SYM##_workspace_size,                                              \
        .prepared_size = SYM##_prepared_size,                                                \
        .prepare = SYM##_prepare,                                                            \
        .run = SYM##_run,                                                                    \
        .isa = SYM##_isa,                                                                    \
    }

#endif
