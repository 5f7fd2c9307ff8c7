/* Packing tuning tables into one bundle file (convpick pack), the one writer
 * of the format loader/bundle_file.c reads (docs/table-format.md, "Bundle
 * files"). */
#ifndef CONVPICK_BUNDLE_PACK_H
#define CONVPICK_BUNDLE_PACK_H

#include <stddef.h>

#include "convpick/status.h"

/* Packs the tables named by inputs (table files, or bundle directories: every
 * table cp_bundle_open lists in them) into out.  Each table is first loaded as
 * a deploying program loads it (cp_table_load: a bad one refuses the pack
 * with its message) and then copied byte for byte under its file name, in
 * name order, so the bytes written depend only on the set of tables.
 * Refused (CP_EFORMAT, one line): two tables of one name, two tables of one
 * device fingerprint (the exact pick would be ambiguous), a bundle file given
 * as an input.  out is written atomically; nothing is written on error.
 * *ntables: the tables packed. */
cp_status cph_bundle_pack(const char *const *inputs, size_t n, const char *out, size_t *ntables,
                          char *msg, size_t cap);

#endif
