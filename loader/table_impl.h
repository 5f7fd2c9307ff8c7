/* What a loaded tuning table holds, shared by the loader (lib_table_load.c)
 * and the lookup (lib_table_lookup.c).  Part of libconvpick; not installed. */
#ifndef CONVPICK_LIB_TABLE_IMPL_H
#define CONVPICK_LIB_TABLE_IMPL_H

#include <stddef.h>
#include <stdint.h>

#include "convpick/table.h"

#define CPT_KEY_MAX 40 /* longest settings_key kept, NUL included */
#define CPT_MAX_BYTES (1ull << 31) /* largest table file read (2 GiB) */
/* Internal loader flag (beside the CP_TABLE_ flags): parse the whole document
 * as one tree, the reference the fast path is checked against (fuzz). */
#define CPT_LOAD_WHOLE (1u << 30)

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

/* Orders by every shape field, then mode (0 = equal): the sort key of the
 * index, so entries of one shape and mode are adjacent. */
static inline int cpl_shape_flip_cmp(const cp_shape *a, cp_flip ma, const cp_shape *b,
                                     cp_flip mb) {
    const int64_t fa[] = {a->n,        a->c,          a->h,          a->w,        a->k,
                          a->r,        a->s,          a->stride_h,   a->stride_w, a->pad_top,
                          a->pad_left, a->pad_bottom, a->pad_right,  a->dil_h,    a->dil_w,
                          a->groups,   a->act_layout, a->wt_layout,  ma};
    const int64_t fb[] = {b->n,        b->c,          b->h,          b->w,        b->k,
                          b->r,        b->s,          b->stride_h,   b->stride_w, b->pad_top,
                          b->pad_left, b->pad_bottom, b->pad_right,  b->dil_h,    b->dil_w,
                          b->groups,   b->act_layout, b->wt_layout,  mb};
    for (size_t i = 0; i < sizeof fa / sizeof fa[0]; i++)
        if (fa[i] != fb[i]) return fa[i] < fb[i] ? -1 : 1;
    return 0;
}

/* The same, then threads. */
static inline int cpl_entry_cmp(const cp_table_entry *a, const cp_table_entry *b) {
    int r = cpl_shape_flip_cmp(&a->shape, a->flip, &b->shape, b->flip);
    if (r) return r;
    return (a->threads > b->threads) - (a->threads < b->threads);
}

#endif
