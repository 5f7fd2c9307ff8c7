/* A whole tuning run: per layer x flip x thread count, cph_tune_layer, then
 * the tuning table written after each layer (atomically), so that a killed
 * run loses at most the layer in flight and a resumed run measures only what
 * is missing.  SIGINT and SIGTERM stop it between candidates. */
#ifndef CONVPICK_TUNE_RUN_H
#define CONVPICK_TUNE_RUN_H

#include <stdint.h>

#include "harness/measure/network.h"
#include "harness/select/selection.h"
#include "harness/tune/tuner.h"

typedef struct cph_tune_job {
    const cph_selection *sel; /* finished: layers, algorithms, flips, seed */
    cph_tune_opts opts;       /* opts.seed is taken from sel */
    const char *out;          /* the table to write */
    const char *threads;      /* --threads list ("1", "1,all", ...), syntax already checked */
    int resume;               /* keep out's entries, measure what is missing */
    int force;                /* replace an existing out */
    int quiet;                /* no progress on stderr */
    uint64_t max_memory;      /* 0: the default share of the machine's memory */
} cph_tune_job;

/* Runs the job; reports any error once (one line on stderr) and returns the
 * exit code: 0 done, 1 a layer had no qualifying candidate, 2 bad input or a
 * write failed, 130 interrupted (the table holds every finished layer). */
int cph_tune_run(const cph_tune_job *job);

/* The network total's share of one tuned entry (tune_network.c): L's count x
 * the chosen median to "chosen", and x the fastest qualified candidate's
 * median of each algorithm to that algorithm's row.  cph_tune_run prints the
 * totals on standard output at the end. */
void cph_tune_network_add(cph_net_total *t, const cph_layer *L, const cp_table_entry *e);

#endif
