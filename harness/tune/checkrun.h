/* The checking run: plan a candidate and run it once into y, the run whose
 * output is compared with the oracle before anything is timed (verify, tune's
 * qualification, bench's error column).  With isolate set, a plugin
 * algorithm's checking run happens in a child process (fork), so that a
 * plugin that crashes fails that candidate, with the signal, instead of
 * taking the command down. */
#ifndef CONVPICK_TUNE_CHECKRUN_H
#define CONVPICK_TUNE_CHECKRUN_H

#include <stddef.h>

#include "convpick/convpick.h"

typedef struct cph_check_run {
    const cp_algo *algo;
    const cp_shape *shape;
    cp_flip flip;
    const cp_params *params;      /* NULL: the defaults for caches */
    const cp_cache_sizes *caches; /* NULL: cp_cache_sizes_fallback() */
    int threads;                  /* workspace for this many workers */
    const float *x, *w, *bias;
    const cp_exec *exec; /* NULL = serial; a child process always runs serially
                          * (the parent's pool threads do not exist there) */
    int isolate;         /* in a child process when algo is a plugin's */
} cph_check_run;

/* y (ny elements) is poisoned with NaN, then planned and run once.  CP_OK, or
 * the failing status with one line in why ("run failed: ...", the plan's
 * message, or "crashed in its checking run: signal 11 (SIGSEGV)"). */
cp_status cph_check_run_once(const cph_check_run *r, float *y, size_t ny, char *why, size_t cap);

/* The checking run compared with the oracle's ref and mag (cp_oracle_run on
 * r's tensors, computed once by the caller and shared by every row of a
 * layer): y (ny elements) holds the output, *e the error.  CP_OK, or the
 * run's status with why as cph_check_run_once says.  Verify, tune's
 * qualification and bench's error column all measure through it. */
cp_status cph_check_error(const cph_check_run *r, const double *ref, const double *mag, float *y,
                          size_t ny, cp_error *e, char *why, size_t cap);

/* 1 when e is within algo's tolerance (finite outputs, rel_err <= it); else 0
 * with why: "error 0.5 above its tolerance 1e-05 against the oracle". */
int cph_error_within_tolerance(const cp_algo *a, const cp_error *e, char *why, size_t cap);

#endif
