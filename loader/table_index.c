/* A loaded table's storage and index: allocation, the sorted order lookups
 * search, the duplicate check (two entries of one shape, flip and threads are
 * an error), and freeing. */
#include <stdlib.h>
#include <string.h>

#include "loader/table_impl.h"

cp_status cpl_table_alloc(const cpl_jctx *c, cp_table *t, size_t n) {
    if (!n) return CP_OK;
    t->entries = calloc(n, sizeof *t->entries);
    t->settings_keys = calloc(n, sizeof *t->settings_keys);
    t->order = calloc(n, sizeof *t->order);
    if (!t->entries || !t->settings_keys || !t->order)
        return cpl_jfail(c, CP_ENOMEM, "out of memory for %zu entries", n);
    t->cap = n;
    return CP_OK;
}

cp_status cpl_table_reserve(const cpl_jctx *c, cp_table *t, size_t n) {
    if (n <= t->cap) return CP_OK;
    size_t nc = t->cap ? t->cap : 64;
    while (nc < n) nc *= 2;
    cp_table_entry *e = realloc(t->entries, nc * sizeof *e);
    if (e) t->entries = e;
    char(*k)[CPT_KEY_MAX] = e ? realloc(t->settings_keys, nc * sizeof *k) : NULL;
    if (k) t->settings_keys = k;
    size_t *o = k ? realloc(t->order, nc * sizeof *o) : NULL;
    if (!o) return cpl_jfail(c, CP_ENOMEM, "out of memory for %zu entries", nc);
    t->order = o;
    memset(t->entries + t->cap, 0, (nc - t->cap) * sizeof *e);
    memset(t->settings_keys + t->cap, 0, (nc - t->cap) * sizeof *k);
    t->cap = nc;
    return CP_OK;
}

cp_status cpl_table_add(const cpl_jctx *c, cp_table *t, const json_t *e, size_t i) {
    t->n = i + 1; /* so that cp_table_free releases the candidates read so far */
    t->order[i] = i;
    return cpl_decode_entry(c, e, i, &t->entries[i], t->settings_keys[i], CPT_KEY_MAX, &t->caches);
}

/* qsort has no context argument: the entries being sorted. */
static _Thread_local const cp_table_entry *sort_base;

static int order_cmp(const void *pa, const void *pb) {
    size_t ia = *(const size_t *)pa, ib = *(const size_t *)pb;
    int r = cpl_entry_cmp(&sort_base[ia], &sort_base[ib]);
    if (r) return r;
    return (ia > ib) - (ia < ib);
}

cp_status cpl_table_index(const cpl_jctx *c, cp_table *t) {
    const size_t n = t->n;
    sort_base = t->entries;
    /* Tables gather writes are already in key order: checked in one pass, the
     * sort is then skipped. */
    size_t sorted = 1;
    while (sorted < n && cpl_entry_cmp(&t->entries[sorted - 1], &t->entries[sorted]) < 0)
        sorted++;
    if (n && sorted < n) qsort(t->order, n, sizeof *t->order, order_cmp);
    for (size_t i = 1; i < n; i++)
        if (cpl_entry_cmp(&t->entries[t->order[i - 1]], &t->entries[t->order[i]]) == 0)
            return cpl_jfail(c, CP_EFORMAT,
                             "entries[%zu]: same shape, flipped and threads as entries[%zu]",
                             t->order[i], t->order[i - 1]);
    return CP_OK;
}

void cpl_table_clear(cp_table *t) {
    for (size_t i = 0; i < t->n; i++) {
        for (size_t j = 0; j < t->entries[i].ncandidates; j++)
            free(t->entries[i].candidates[j].samples);
        free(t->entries[i].candidates);
    }
    free(t->entries);
    free(t->settings_keys);
    free(t->order);
    memset(t, 0, sizeof *t);
}

void cp_table_free(cp_table *t) {
    if (!t) return;
    cpl_table_clear(t);
    free(t);
}
