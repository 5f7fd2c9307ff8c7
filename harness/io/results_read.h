/* Reading measurements back for comparison: a bench results file (format
 * "convpick-bench-results", harness/cli/cmd_bench.c) or a tuning table
 * ("convpick-tuning-table", docs/table-format.md), version 2 or the version 1
 * they migrate from, becomes one flat list of
 * measured items, each with its samples, so that `convpick diff` compares
 * any mix of the two the same way.
 *
 * Only what a comparison needs is read, and checked: a missing or mistyped
 * field is reported with the file and its JSON path
 * ("base.json: results[3].measurement.samples[7]: expected a number >= 0"),
 * malformed JSON with file:line:column (getters and shared objects:
 * loader/json_get.h, loader/codec.h).  Unknown keys are ignored (both
 * formats only ever add fields within a version).  Algorithm names are kept
 * as text and not resolved against this build's registry, so that results of
 * an algorithm since renamed or removed still read (and show as unmatched). */
#ifndef CONVPICK_RESULTS_READ_H
#define CONVPICK_RESULTS_READ_H

#include <stddef.h>

#include "convpick/convpick.h"

typedef enum cph_results_kind {
    CPH_RESULTS_BENCH = 0,
    CPH_RESULTS_TABLE = 1
} cph_results_kind;

/* What a bench row measured (tables: every item is CPH_ITEM_ALGORITHM). */
typedef enum cph_item_kind {
    CPH_ITEM_ALGORITHM = 0, /* an algorithm with its parameters (a table's candidate) */
    CPH_ITEM_REFERENCE = 1, /* a bare SGEMM reference row */
    CPH_ITEM_CHOSEN = 2     /* what a tuning table chose for the layer */
} cph_item_kind;

/* One measured algorithm on one layer shape, flip and thread count. */
typedef struct cph_result_item {
    char layer[64];
    cp_shape shape;
    cp_flip flip;
    int threads;
    char algo[32];
    char params[160];   /* "name=value,..." sorted by name; "" without parameters */
    double *samples;    /* seconds, in run order (owned); NULL when none were recorded */
    size_t nsamples;
    double median;      /* seconds: of the samples, else the recorded median */
    cp_timing timing;   /* as recorded: median, interval, noisy (seconds) */
    int count;          /* bench results: the layer's "layer_count" (0 when absent) */
    cph_item_kind kind; /* bench results: the row's "kind" (absent: algorithm) */
    char chosen_algo[32]; /* bench chosen rows: the algorithm the table chose */
    int trials;         /* 1: the samples are trial medians (measurement.settings.samples_are) */
    double rel_err;     /* error against the fp64 oracle ("rel_err"); NaN when not recorded */
    int chosen;         /* tables: this candidate is its entry's choice */
    size_t entry;       /* tables: index of its entry in "entries" */
    char where[96];     /* its JSON path: "results[3]" or "entries[2].candidates[1]" */
} cph_result_item;

/* Tables only: what each entry chose. */
typedef struct cph_result_choice {
    char layer[64];
    cp_shape shape;
    cp_flip flip;
    int threads;
    char algo[32];
    char params[160];
    double median;      /* of the chosen candidate as recorded */
    int confident;      /* a runner-up exists and its margin is not in the noise */
} cph_result_choice;

/* Bench results: the fixed control's trial medians, one series per piece of
 * work (harness/measure/control.h: "gemm", "fma"; in the file "gemm_s",
 * "fma_s"), in run order. */
#define CPH_RESULTS_CONTROL_SERIES 2
extern const char *const cph_results_control_names[CPH_RESULTS_CONTROL_SERIES]; /* gemm, fma */
typedef struct cph_result_series {
    double *v; /* seconds (owned); NULL when none */
    size_t n;
} cph_result_series;

typedef struct cph_results {
    cph_results_kind kind;
    char path[1024];
    char fingerprint[17];
    char model[128];        /* device model text ("" when absent) */
    int cold;               /* caches flushed before each sample: 1, 0, or -1 when mixed */
    cph_result_item *items;
    size_t nitems;
    cph_result_choice *choices; /* tables only */
    size_t nchoices;
    size_t nunsupported;    /* bench results "unsupported", not listed */
    size_t nfailed;         /* bench results "error", table candidates failed or disqualified */
    int has_control;        /* bench results with a "control" object */
    cph_result_series control[CPH_RESULTS_CONTROL_SERIES];
    size_t nchosen_rows;    /* bench results: rows of kind "chosen" */
    int trials;             /* bench results: 1 every item's samples are trial medians, 0 none,
                               -1 some */
} cph_results;

/* Reads path.  CP_EIO (cannot read), CP_EFORMAT (malformed JSON, wrong format
 * name, a missing or mistyped field), CP_EVERSION (another format version),
 * each with a one-line message starting with the file name. */
cp_status cph_results_read(const char *path, cph_results *out, char *msg, size_t cap);
/* The same for a document in memory (len bytes); name stands for the file in
 * messages.  cph_results_read reads the file (a directory is refused, a FIFO
 * without a writer reads as empty, a file growing while read is refused) and
 * calls this. */
cp_status cph_results_read_buffer(const void *data, size_t len, const char *name,
                                  cph_results *out, char *msg, size_t cap);
void cph_results_free(cph_results *r);

/* "bench results" or "tuning table". */
const char *cph_results_kind_name(cph_results_kind k);

/* 1 when a and b are the same measurement point: shape, flip, threads,
 * algorithm (and for chosen rows the chosen algorithm) and parameters. */
int cph_result_same_point(const cph_result_item *a, const cph_result_item *b);

#endif
