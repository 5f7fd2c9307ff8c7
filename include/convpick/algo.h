/* The algorithm interface: the one contract every conv2d implementation keeps.
 *
 * Every algorithm is a constant cp_algo value listed in the registry
 * (algos/registry.c).  Adding one is a new file in algos/ that defines it and
 * one line in the registry table; an algorithm from outside the tree keeps
 * the same contract in a plugin (convpick/plugin.h), appended to the registry
 * at run time after the built-in ones.
 *
 * Rules every algorithm keeps:
 *  - Layouts: input NCHW, weights KCRS, output NKPQ (NCHW), float32, densely
 *    packed (no row padding).  Pointers need only float alignment.
 *  - Workspace: run() may use `workspace` (64-byte aligned, at least
 *    workspace_size() bytes, contents undefined on entry and exit) and nothing
 *    else it allocates itself.
 *  - Output: run() overwrites every element of y; it never accumulates into y.
 *    x, the weights, the prepared weights and bias are read only.
 *  - Weights: when prepared_size() returns 0, run() receives the raw KCRS
 *    weights.  Otherwise the caller first calls prepare() once into a buffer of
 *    that many bytes (64-byte aligned) and passes that buffer to every run().
 *    Preparation is where filter transforms, packing and the pre-flip for
 *    CP_CONV happen, so that repeated runs do not pay for them.
 *  - Thread safety: supports, workspace_size, prepared_size and defaults are
 *    pure.  run() is reentrant: concurrent calls are safe when each has its own
 *    workspace and output.  run() parallelises only through cp_parallel_for().
 *  - Machine knowledge: algorithms never detect the machine.  Block sizes and
 *    other parameters arrive as explicit cp_params; defaults() derives them
 *    from cache sizes the caller passes in.
 *  - Purity: kernels never time, print, allocate, or read files.
 *  - Preconditions: the shape passed cp_shape_validate() and supports()
 *    returned 1 for it; params passed cp_params_check(). */
#ifndef CONVPICK_ALGO_H
#define CONVPICK_ALGO_H

#include <stddef.h>
#include <stdint.h>

#include "convpick/exec.h"
#include "convpick/shape.h"
#include "convpick/status.h"

#define CP_MAX_PARAMS 6

/* Cache sizes the caller knows (from hwloc in the harness, from a tuning table
 * in a deploying program, or cp_cache_sizes_fallback()).  Bytes. */
typedef struct cp_cache_sizes {
    size_t l1d, l2, l3, line;
} cp_cache_sizes;

/* 32 KiB / 512 KiB / 8 MiB / 64 B: used only when nothing better is known. */
cp_cache_sizes cp_cache_sizes_fallback(void);

/* One tunable integer parameter of an algorithm. */
typedef struct cp_param_desc {
    const char *name; /* short identifier used in tables and on the command line */
    const char *doc;  /* one line: what it controls and its default rule */
    int64_t min, max; /* inclusive range run() accepts */
} cp_param_desc;

/* Parameter values, in the order of the algorithm's cp_param_desc list. */
typedef struct cp_params {
    int64_t v[CP_MAX_PARAMS];
} cp_params;

/* Everything run() gets. */
typedef struct cp_run_args {
    const cp_shape *shape;
    cp_flip flip;
    const cp_params *params;
    const float *x;       /* N x C x H x W */
    const void *weights;  /* raw KCRS weights, or the prepared buffer (see above) */
    const float *bias;    /* K values added to every output of a channel, or NULL */
    float *y;             /* N x K x P x Q, overwritten */
    void *workspace;      /* workspace_size() bytes, 64-byte aligned, or NULL if 0 */
    const cp_exec *exec;  /* parallel_for to use; NULL = serial */
} cp_run_args;

typedef struct cp_algo {
    /* Registry name: lower case, [a-z0-9_], unique ("direct", "im2col_gemm", ...). */
    const char *name;
    /* One line for --help and reports. */
    const char *summary;
    /* Largest error relative to sum(|x|*|w|)+|b| over an output's receptive
     * field (see convpick/oracle.h) that verify accepts.  Set from measurement. */
    double tolerance;
    /* Tunable parameters (nparams <= CP_MAX_PARAMS; may be 0). */
    int nparams;
    const cp_param_desc *params;

    /* 1 if the algorithm computes this shape in this mode.  Otherwise 0 and a
     * one-line reason in why (why may be NULL). */
    int (*supports)(const cp_shape *s, cp_flip flip, char *why, size_t cap);
    /* Default parameters for this shape from the cache sizes given (never from
     * the machine).  May be NULL when nparams == 0. */
    void (*defaults)(const cp_shape *s, const cp_cache_sizes *caches, cp_params *out);
    /* Candidate parameter sets worth timing for this shape, best guesses first
     * (the tuner's search space).  Writes at most max sets, returns the number
     * written.  May be NULL: then only the defaults are tried. */
    int (*candidates)(const cp_shape *s, const cp_cache_sizes *caches, cp_params *out, int max);
    /* Bytes of workspace run() needs with nthreads workers. */
    size_t (*workspace_size)(const cp_shape *s, cp_flip flip, const cp_params *p, int nthreads);
    /* Bytes of prepared weights, or 0 when run() takes the raw weights. */
    size_t (*prepared_size)(const cp_shape *s, cp_flip flip, const cp_params *p);
    /* Writes the prepared weights for raw KCRS weights w into out. NULL iff
     * prepared_size is NULL or always 0. */
    cp_status (*prepare)(const cp_shape *s, cp_flip flip, const cp_params *p,
                         const float *w, void *out);
    /* Computes the layer. */
    cp_status (*run)(const cp_run_args *a);
    /* The instruction set run() uses with these parameters on the running CPU
     * ("avx512", "avx2", "portable"; "+blas" when a stage is OpenBLAS's), for
     * reports.  May be NULL: the algorithm does not say. */
    const char *(*isa)(const cp_shape *s, const cp_params *p);
} cp_algo;

/* --- The registry --------------------------------------------------------- */

/* Number of registered algorithms and the i-th of them (NULL out of range):
 * the built-in ones, then those of loaded plugins (convpick/plugin.h). */
size_t cp_algo_count(void);
const cp_algo *cp_algo_at(size_t i);
/* The algorithm of that name, or NULL. */
const cp_algo *cp_algo_find(const char *name);

/* Fills p with the algorithm's defaults (zeros beyond nparams). */
void cp_algo_defaults(const cp_algo *a, const cp_shape *s, const cp_cache_sizes *caches,
                      cp_params *p);
/* Checks every value against its range; names the parameter at fault. */
cp_status cp_params_check(const cp_algo *a, const cp_params *p, char *msg, size_t cap);
/* Index of the parameter called name, or -1. */
int cp_algo_param_index(const cp_algo *a, const char *name);
/* "kb=64,kt=4" or "" (like snprintf). */
int cp_params_format(const cp_algo *a, const cp_params *p, char *buf, size_t cap);

/* --- Plans: prepared weights + workspace, run many times ------------------ */

typedef struct cp_plan cp_plan;

/* Where plans put their memory (prepared weights, workspace, the weights'
 * copy).  A deploying program may give an arena or huge pages; the harness
 * gives one that places each block at a chosen or random offset, so that
 * placement is measured rather than left to the heap (docs/measurement.md).
 * alloc returns `bytes` bytes aligned to 64 bytes, or NULL; release gets the
 * pointer and the size it was asked for. */
typedef struct cp_allocator {
    void *(*alloc)(void *ctx, size_t bytes);
    void (*release)(void *ctx, void *ptr, size_t bytes);
    void *ctx;
} cp_allocator;

/* Sets the allocator of the plans created from now on; NULL restores the C
 * library's (aligned_alloc / free).  A plan keeps the allocator it was made
 * with and returns its memory to it.  Not synchronised: set it before other
 * threads create plans. */
void cp_set_allocator(const cp_allocator *a);

/* Validates the shape and params, checks support, allocates the workspace for
 * nthreads workers and prepares the weights (copied/transformed: w may be freed
 * afterwards).  params NULL = defaults from caches (caches NULL = fallback). */
cp_status cp_plan_create(const cp_algo *a, const cp_shape *s, cp_flip flip,
                         const cp_params *params, const cp_cache_sizes *caches, int nthreads,
                         const float *w, cp_plan **out, char *msg, size_t cap);
/* Runs the layer.  Not safe to call concurrently on one plan (it owns one
 * workspace); make one plan per concurrent caller. */
cp_status cp_plan_run(cp_plan *p, const float *x, const float *bias, float *y,
                      const cp_exec *exec);
const cp_algo *cp_plan_algo(const cp_plan *p);
const cp_params *cp_plan_params(const cp_plan *p);
void cp_plan_destroy(cp_plan *p);

/* --- Helpers shared by algorithms ----------------------------------------- */

/* wf[k,c,r,s] = w[k,c,R-1-r,S-1-s]: the weights of true convolution as
 * cross-correlation weights. */
void cp_weights_flip(const cp_shape *s, const float *w, float *wf);

#endif
