/* Table bundles: one program shipped with tuning tables for several kinds of
 * machine.  A bundle is either a directory holding tables (*.json, full or
 * lean, each of one device; *.evidence.json side files are not tables and are
 * skipped), or one bundle file holding several tables (line-framed, written by
 * `convpick pack`; docs/table-format.md, "Bundle files").  Both are read by
 * the functions below, given the directory or the file.  The library picks
 * the table for the running machine:
 *
 *  1. exact: a table whose device fingerprint is this machine's;
 *  2. nearest: among tables whose ISA features are all present here (a table
 *     tuned with a feature this machine lacks is never picked), the one
 *     sharing the most features; then the nearest cache sizes (the sum over
 *     L1d, L2 and L3 of |log2(table size / machine size)|; a level either
 *     side lacks counts 1); then the nearest logical CPU count
 *     (|log2(table / machine)|); then the file name that sorts first;
 *  3. none: no table's features fit (CP_ENOTFOUND); the program runs on the
 *     default choice (cp_table_lookup with a NULL table).
 * The pick says which file and why in one line.  Reference:
 * docs/table-format.md, "Bundles". */
#ifndef CONVPICK_BUNDLE_H
#define CONVPICK_BUNDLE_H

#include <stddef.h>
#include <stdint.h>

#include "convpick/status.h"
#include "convpick/table.h"

/* What the pick compares: a device as a table records it. */
typedef struct cp_device_desc {
    char fingerprint[17];
    uint32_t isa;          /* bit i: feature i of CP_ISA_NAMES */
    size_t l1d, l2, l3;    /* bytes per instance; 0 unknown */
    int cpus;              /* logical CPUs; 0 unknown */
} cp_device_desc;

/* The ISA feature names, in bit order, as tables list them ("isa"). */
#define CP_ISA_COUNT 10
extern const char *const cp_isa_names[CP_ISA_COUNT];

/* This machine (cpuid, sysconf), as the fingerprint sees it. */
void cp_device_describe(cp_device_desc *out);

typedef struct cp_bundle cp_bundle;

/* 1 when path is a directory or a bundle file (its first line says so). */
int cp_bundle_is(const char *path);

/* Reads the device of every table in the bundle dir (a directory or a bundle
 * file; headers only).  A table that is not valid is an error naming it
 * (CP_EFORMAT "dir/t.json: ..." or "file.bundle:t.json: ..."); a bundle file
 * whose framing is wrong says the line ("file.bundle:7: ..."); an empty
 * bundle is CP_ENOTFOUND. */
cp_status cp_bundle_open(const char *dir, cp_bundle **out, char *msg, size_t cap);
void cp_bundle_free(cp_bundle *b);
size_t cp_bundle_count(const cp_bundle *b);
/* The i-th table's path (sorted by file name; "file.bundle:name" in a bundle
 * file) and device. */
const char *cp_bundle_path(const cp_bundle *b, size_t i);
const cp_device_desc *cp_bundle_device(const cp_bundle *b, size_t i);

typedef enum cp_pick_kind { CP_PICK_EXACT = 0, CP_PICK_NEAREST, CP_PICK_NONE } cp_pick_kind;

typedef struct cp_bundle_pick {
    cp_pick_kind kind;
    size_t index;  /* the table picked (not for CP_PICK_NONE) */
    char why[512]; /* one line: which file and why */
} cp_bundle_pick;

/* Picks for the device dev by the rules above.  Always fills out; returns
 * CP_ENOTFOUND for CP_PICK_NONE. */
cp_status cp_bundle_pick_for(const cp_bundle *b, const cp_device_desc *dev, cp_bundle_pick *out);

/* Loads the i-th table of the bundle (flags as cp_table_load; messages name
 * it as cp_bundle_path does). */
cp_status cp_bundle_table(const cp_bundle *b, size_t i, unsigned flags, cp_table **out,
                          char *msg, size_t cap);

/* Opens dir (a directory or a bundle file), picks for this machine and loads the table picked (flags as
 * cp_table_load).  pick (may be NULL) says which and why; with no match,
 * *out is NULL and the status CP_ENOTFOUND. */
cp_status cp_bundle_load(const char *dir, unsigned flags, cp_table **out, cp_bundle_pick *pick,
                         char *msg, size_t cap);

#endif
