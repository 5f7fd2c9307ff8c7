/* Tuning tables: what `convpick tune` measured and chose, loaded by a
 * deploying program to dispatch each layer to its chosen algorithm.
 *
 * A table is a JSON file of format "convpick-tuning-table", version 2
 * (docs/table-format.md, docs/table.schema.json); version-1 tables still load
 * (migrated as the document describes).  It records the device
 * (description and fingerprint), the measurement settings, and one entry per
 * layer shape x flip x thread count with the chosen algorithm, its parameters
 * and statistics, the runner-up and the margin, and every candidate tried.
 *
 * Only the loader and lookup are here: writing tables is the harness's job. */
#ifndef CONVPICK_TABLE_H
#define CONVPICK_TABLE_H

#include <stddef.h>
#include <stdint.h>

#include "convpick/algo.h"
#include "convpick/shape.h"
#include "convpick/status.h"

#define CP_TABLE_FORMAT "convpick-tuning-table"
#define CP_TABLE_VERSION 2 /* the version written; 1 is still read */

/* Timing statistics as recorded (seconds). */
typedef struct cp_timing {
    double median, ci_lo, ci_hi;
    uint32_t samples;
    int noisy;
} cp_timing;

/* One candidate that tune measured for an entry. */
typedef struct cp_candidate {
    char algo[32];
    cp_params params;
    cp_timing timing;
    double rel_err;     /* against the fp64 oracle */
    int disqualified;   /* rel_err above the run's max_rel_err (then not timed) */
    int failed;         /* could not be run or timed (rel_err NaN, timing zero); rel_err is
                           also NaN for a disqualified candidate whose error was not finite */
    double *samples;    /* every timed sample (seconds, run order), or NULL */
    size_t nsamples;
} cp_candidate;

typedef struct cp_table_entry {
    char name[64];          /* layer name as given to tune */
    cp_shape shape;
    cp_flip flip;
    int threads;
    const cp_algo *algo;    /* the chosen algorithm (resolved against the registry) */
    cp_params params;
    double rel_err;         /* the choice's recorded error against the oracle: from its
                               candidate, or choice.rel_err in a lean table; NaN unknown */
    cp_timing timing;
    const cp_algo *runner_up; /* NULL when only one candidate qualified */
    cp_params runner_up_params;
    double margin;          /* runner-up / chosen - 1 (paired ratio of trials, >= 0) */
    double margin_lo, margin_hi; /* its interval (level in the table's settings); NaN when
                                    unbounded or not recorded (tables before the race) */
    int margin_in_noise;    /* the interval does not lie wholly above 0 */
    size_t ncandidates;
    cp_candidate *candidates;
} cp_table_entry;

typedef struct cp_table cp_table;

/* Loader flags. */
enum {
    CP_TABLE_STRICT_DEVICE = 1 /* refuse (CP_EDEVICE) a table whose fingerprint is not this machine's */
};

/* Loads a table.  Errors: CP_EIO (cannot read), CP_EFORMAT with
 * "file:line:column: ..." for malformed JSON or "file: entries[3].shape.k: ..."
 * for a missing or mistyped field, CP_EVERSION for another format version,
 * CP_ENOTFOUND for an algorithm this build does not have ("file:
 * entries[2].choice.algo: unknown algorithm 'x'"), CP_EDEVICE (with
 * CP_TABLE_STRICT_DEVICE) for another device.  Without the flag a device
 * mismatch loads and is reported by cp_table_device_matches().  Two entries of
 * the same shape, flip and threads are a CP_EFORMAT error. */
cp_status cp_table_load(const char *path, unsigned flags, cp_table **out, char *msg, size_t cap);
/* The same from a document already in memory (len bytes, not necessarily
 * NUL-terminated); name stands for the file in messages.  cp_table_load
 * reads the file (at most 2 GiB; a regular file that grows while read is
 * refused) and calls this. */
cp_status cp_table_load_buffer(const void *data, size_t len, const char *name, unsigned flags,
                               cp_table **out, char *msg, size_t cap);
void cp_table_free(cp_table *t);

size_t cp_table_count(const cp_table *t);
const cp_table_entry *cp_table_entry_at(const cp_table *t, size_t i);
/* The fingerprint recorded in the table, and whether it is this machine's. */
const char *cp_table_fingerprint(const cp_table *t);
int cp_table_device_matches(const cp_table *t);
/* Cache sizes recorded for the device (for default parameters on lookup). */
cp_cache_sizes cp_table_caches(const cp_table *t);
/* The settings_key recorded for entry i ("" out of range): a hash of the
 * measurement settings, so that a resumed tune can tell whether an entry was
 * measured the way it would measure it now. */
const char *cp_table_settings_key(const cp_table *t, size_t i);
/* The entry of exactly this shape, flip and thread count, or NULL (O(log n)). */
const cp_table_entry *cp_table_find(const cp_table *t, const cp_shape *s, cp_flip flip,
                                    int threads);

/* This machine's fingerprint (16 hex digits + NUL): a hash of the cpuid
 * vendor, family, model, stepping, brand, ISA features, cache geometry and the
 * number of logical CPUs.  Measured figures never enter it. */
void cp_device_fingerprint(char out[17]);

/* How a lookup was answered. */
typedef enum cp_match {
    CP_MATCH_EXACT = 0,   /* an entry of exactly this shape, flip and thread count */
    CP_MATCH_NEAREST,     /* a compatible entry (rules below), reported as approximate */
    CP_MATCH_DEFAULT      /* no compatible entry: the documented default choice */
} cp_match;

/* "exact", "approximate" or "default". */
const char *cp_match_str(cp_match m);

typedef struct cp_choice {
    cp_match match;
    const cp_algo *algo;
    cp_params params;
    const cp_table_entry *entry; /* the entry used, NULL for CP_MATCH_DEFAULT */
    char why[256];               /* one line: how the answer was found */
    double max_rel_err;          /* the error bound the answer was chosen within: the
                                    one given to cp_table_lookup_bounded, or INFINITY
                                    (cp_table_lookup: the bound tune used applies) */
    double rel_err;              /* the answer's recorded error against the oracle,
                                    NaN when not recorded (nearest match, default) */
} cp_choice;

/* Lookup rules.
 *  1. Exact: same shape (every field), flip and threads.  threads <= 0 means
 *     "any": the entry with the most threads <= the machine's is not guessed;
 *     the smallest thread count recorded is used.
 *  2. Nearest: entries with the same flip, kernel size r x s, stride,
 *     dilation and groups class (1, depthwise = groups == c, or other), whose
 *     chosen algorithm supports the asked shape; the one nearest in
 *     |log(FLOPs)| wins (then the nearer thread count, then the earlier entry).
 *     Its algorithm is used; its parameters are used when they pass
 *     cp_params_check, else the algorithm's defaults for the asked shape.
 *  3. Default: im2col_gemm with defaults from the table's cache sizes (it
 *     supports every shape).
 * t may be NULL (no table: the default, with fallback cache sizes).
 * Fails only for an invalid shape (CP_EINVAL). */
cp_status cp_table_lookup(const cp_table *t, const cp_shape *s, cp_flip flip, int threads,
                          cp_choice *out, char *msg, size_t cap);

/* 1 when tune timed candidate c: neither disqualified nor failed, with a
 * finite recorded error and a positive median time. */
int cp_candidate_timed(const cp_candidate *c);

/* Accuracy-aware lookup: the exact entry of this shape, flip and threads
 * (rule 1 above) answered with the fastest candidate whose recorded error is
 * at most max_rel_err.  The candidates are those tune timed (neither
 * disqualified nor failed, finite error): the entry's chosen one when its
 * error is within the bound (the winner of the race), else the one with the
 * smallest recorded median time among those within it.  out->max_rel_err is
 * the bound used, out->rel_err the answer's recorded error; why names both.
 * Errors: CP_EINVAL for an invalid shape or a bound that is NaN or negative;
 * CP_ENOTFOUND with a one-line reason when there is no exact entry (an error
 * bound needs recorded errors: no approximate answer is given) or no
 * recorded candidate within the bound (the message names the most accurate
 * one recorded). */
cp_status cp_table_lookup_bounded(const cp_table *t, const cp_shape *s, cp_flip flip,
                                  int threads, double max_rel_err, cp_choice *out, char *msg,
                                  size_t cap);

/* Dispatch in one call: looks the shape up and creates a plan with the chosen
 * algorithm and parameters, preparing the weights once.  The plan's workspace
 * is sized for `threads` workers (threads <= 0: the entry's thread count, 1
 * for the default); default parameters come from cp_table_caches(t).  Run it as often as
 * needed with cp_plan_run(); free it with cp_plan_destroy().  choice may be
 * NULL. */
cp_status cp_table_plan(const cp_table *t, const cp_shape *s, cp_flip flip, int threads,
                        const float *w, cp_plan **out, cp_choice *choice, char *msg, size_t cap);

#endif
