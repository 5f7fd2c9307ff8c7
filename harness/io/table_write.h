/* Writing tuning tables (the harness side; deploying programs only load).
 * Parts: table_doc_impl.h.
 *
 * A table document is built from the machine, the measurement settings and
 * one entry per layer x flip x threads, and written atomically: a temporary
 * file in the table's directory, fsync, rename, fsync of the directory, so a
 * reader (or a killed tune) sees the old table or the new one, never half of
 * one.  Format: docs/table-format.md.  The JSON goes through jansson. */
#ifndef CONVPICK_TABLE_WRITE_H
#define CONVPICK_TABLE_WRITE_H

#include <stddef.h>
#include <stdint.h>

#include "convpick/convpick.h"
#include "harness/machine/machine.h"

#define CPH_TABLE_MAX_THREADS 16

/* The measurement settings recorded in "settings".  All of them except the
 * threads list enter the settings_key of each entry: an entry measured with
 * other settings is re-measured by a resumed tune. */
typedef struct cph_table_settings {
    double target_rel_ci;   /* CI half-width target, relative to the median (0.02 = +-2 %) */
    double confidence;      /* of the median's confidence interval (0.95) */
    double max_seconds;     /* cap on one candidate's measurement, s */
    int cold;               /* 1: caches flushed before each sample */
    int warmup;             /* untimed runs before sampling */
    size_t min_samples, max_samples;
    double max_rel_err;     /* candidates above it are disqualified */
    double budget_seconds;  /* per layer x flip x threads, all candidates, s */
    int max_candidates;     /* per algorithm */
    uint64_t seed;          /* of the test data */
    int threads[CPH_TABLE_MAX_THREADS]; /* thread counts tuned */
    int nthreads;
} cph_table_settings;

/* 16 hex digits: FNV-1a of the settings above except the threads list. */
void cph_table_settings_key(const cph_table_settings *s, char out[17]);

/* What the writer records about an entry beyond cp_table_entry ("tried" and
 * each candidate's "note").  Any pointer may be NULL. */
typedef struct cph_entry_notes {
    const char *const *candidate_notes; /* one per candidate, or NULL (all "") */
    int planned, measured, skipped, disqualified, failed, unsupported;
    double seconds;                     /* wall time spent on the entry */
    const char *const *search_notes;    /* free text lines about the search */
    size_t nsearch_notes;
    /* The fixed control timed beside the trials, one value per round
     * (seconds), and what it is (control.h); ncontrol 0: none. */
    const double *control_fma, *control_gemm;
    size_t ncontrol;
    const char *control_what;
} cph_entry_notes;

typedef struct cph_table_doc cph_table_doc;

/* A new empty document for this machine and these settings. */
cp_status cph_table_doc_new(const cph_machine *m, const cph_table_settings *s,
                            cph_table_doc **out, char *msg, size_t cap);
/* Opens an existing table for --resume: reads it once, migrates an older
 * version to the current one and checks it with the loader's decoder, keeps
 * its entries and records the current settings and device description.  A table of
 * another device (fingerprint) is refused with CP_EDEVICE. */
cp_status cph_table_doc_open(const char *path, const cph_machine *m, const cph_table_settings *s,
                             cph_table_doc **out, char *msg, size_t cap);
void cph_table_doc_free(cph_table_doc *d);

enum {
    CPH_TABLE_ABSENT = 0, /* no entry of this shape, flip and threads */
    CPH_TABLE_SAME = 1,   /* present, measured with the document's settings_key */
    CPH_TABLE_STALE = 2   /* present, measured with other settings */
};
int cph_table_doc_find(const cph_table_doc *d, const cp_shape *s, cp_flip flip, int threads);
size_t cph_table_doc_count(const cph_table_doc *d);
/* The settings_key that cph_table_doc_put records. */
const char *cph_table_doc_settings_key(const cph_table_doc *d);

/* Replaces the entry of the same shape, flip and threads, or appends. */
cp_status cph_table_doc_put(cph_table_doc *d, const cp_table_entry *e, const cph_entry_notes *n,
                            char *msg, size_t cap);

/* Writes the document atomically to path (see above) through
 * cph_write_atomic (rawfile.h).  On failure the old file is untouched, no
 * temporary file remains, and msg names the step and the errno text.
 *
 * Several processes may write one table: the write holds an advisory lock
 * (flock) on PATH.lock, created beside the table and left there, around
 * read-merge-write.  When the file on disk is not the one this document was
 * read from (cph_table_doc_open), replaces (cph_table_doc_replaces) or last
 * wrote, another process wrote it: its entries are merged in (this
 * process's own measurements win for the same shape, flip and threads), so
 * neither loses the other's entries.  A file on disk that is no longer a
 * valid table of this device is an error and is left as it is. */
cp_status cph_table_doc_write(cph_table_doc *d, const char *path, char *msg, size_t cap);

/* Records that the document replaces the file now at path (tune --force): a
 * later write overwrites that file instead of merging its entries. */
void cph_table_doc_replaces(cph_table_doc *d, const char *path);

#endif
