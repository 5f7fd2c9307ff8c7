/* Gathering shard tables into one (convpick gather), and the lean form of a
 * table with its evidence side file.  Rules: docs/table-format.md, "Gathering
 * shards" and "Lean tables". */
#ifndef CONVPICK_TABLE_GATHER_H
#define CONVPICK_TABLE_GATHER_H

#include <stddef.h>

#include "convpick/status.h"

typedef struct cph_gather_opts {
    int allow_mixed; /* accept shards of other devices or settings (said in "gathered") */
    int lean;        /* write OUT lean and the evidence to OUT's side file */
} cph_gather_opts;

typedef struct cph_gather_result {
    size_t inputs, entries; /* tables read, entries written */
    size_t conflicts;       /* keys measured in more than one shard (resolved by the rule) */
    int mixed;              /* the shards differ in device or settings (allowed) */
    char evidence[512];     /* the side file written with lean, else "" */
} cph_gather_result;

/* Reads every input (each migrated and checked by the loader), refuses
 * mismatched devices or settings unless allowed, resolves conflicts, and
 * writes out atomically.  The bytes written depend only on the set of input
 * documents, never on their order.  Nothing is written on error. */
cp_status cph_table_gather(const char *const *inputs, size_t n, const char *out,
                           const cph_gather_opts *o, cph_gather_result *res, char *msg,
                           size_t cap);

/* "T.json" -> "T.evidence.json" (any other name: NAME + ".evidence.json"). */
void cph_evidence_path(const char *table, char *out, size_t cap);

#endif
