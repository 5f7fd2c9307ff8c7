/* What a loaded tuning table holds, shared by the loader (lib_table_load.c)
 * and the lookup (lib_table_lookup.c).  Part of libconvpick; not installed. */
#ifndef CONVPICK_LIB_TABLE_IMPL_H
#define CONVPICK_LIB_TABLE_IMPL_H

#include <stddef.h>

#include "convpick/table.h"

#define CPT_KEY_MAX 40 /* longest settings_key kept, NUL included */

struct cp_table {
    char fingerprint[17];
    int device_matches;
    cp_cache_sizes caches;
    size_t n;
    cp_table_entry *entries;
    char (*settings_keys)[CPT_KEY_MAX];
    /* Entry indices sorted by (shape, mode, threads, index): exact lookups are
     * a binary search, and entries of one shape and mode sit side by side. */
    size_t *order;
};

/* Orders two entries by shape fields, then mode, then threads (0 = equal). */
int cpt_entry_cmp(const cp_table_entry *a, const cp_table_entry *b);
/* Same, ignoring threads. */
int cpt_shape_mode_cmp(const cp_shape *a, cp_mode ma, const cp_shape *b, cp_mode mb);

#endif
