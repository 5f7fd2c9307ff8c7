/* What a loaded tuning table holds, shared by the loader (table_load.c: the
 * document; table_entry.c: one entry; table_index.c: storage, order and
 * duplicates) and the lookup (table_lookup.c).  Part of libconvpick; not
 * installed. */
#ifndef CONVPICK_LIB_TABLE_IMPL_H
#define CONVPICK_LIB_TABLE_IMPL_H

#include <stddef.h>
#include <stdint.h>

#include "convpick/table.h"
#include "loader/json_get.h"

#define CPT_KEY_MAX 40 /* longest settings_key kept, NUL included */
#define CPT_MAX_BYTES (1ull << 31) /* largest table file read (2 GiB) */
/* Internal loader flag (beside the CP_TABLE_ flags): parse the whole document
 * as one tree, the reference the fast path is checked against (fuzz). */
#define CPT_LOAD_WHOLE (1u << 30)
/* Internal loader flag: each entry as a jansson tree, the entry reader
 * (table_read.c) off: the loader as it was before the reader, for the load
 * benchmark's ratio (experiments/table_load_bench.c). */
#define CPT_LOAD_TREES (1u << 29)

struct cp_table {
    char fingerprint[17];
    int device_matches;
    cp_cache_sizes caches;
    size_t n, cap; /* entries read, room for */
    cp_table_entry *entries;
    char (*settings_keys)[CPT_KEY_MAX];
    /* Entry indices sorted by (shape, flip, threads, index): exact lookups are
     * a binary search, and entries of one shape and flip sit side by side. */
    size_t *order;
};

/* Orders by every shape field, then mode (0 = equal): the sort key of the
 * index, so entries of one shape and mode are adjacent.  Field by field: the
 * sort of a 100 000-entry table calls it some 1.7 million times. */
#define CPL_ORDER_BY(x, y) \
    if ((x) != (y)) return (x) < (y) ? -1 : 1
static inline int cpl_shape_flip_cmp(const cp_shape *a, cp_flip ma, const cp_shape *b,
                                     cp_flip mb) {
    CPL_ORDER_BY(a->n, b->n);
    CPL_ORDER_BY(a->c, b->c);
    CPL_ORDER_BY(a->h, b->h);
    CPL_ORDER_BY(a->w, b->w);
    CPL_ORDER_BY(a->k, b->k);
    CPL_ORDER_BY(a->r, b->r);
    CPL_ORDER_BY(a->s, b->s);
    CPL_ORDER_BY(a->stride_h, b->stride_h);
    CPL_ORDER_BY(a->stride_w, b->stride_w);
    CPL_ORDER_BY(a->pad_top, b->pad_top);
    CPL_ORDER_BY(a->pad_left, b->pad_left);
    CPL_ORDER_BY(a->pad_bottom, b->pad_bottom);
    CPL_ORDER_BY(a->pad_right, b->pad_right);
    CPL_ORDER_BY(a->dil_h, b->dil_h);
    CPL_ORDER_BY(a->dil_w, b->dil_w);
    CPL_ORDER_BY(a->groups, b->groups);
    CPL_ORDER_BY((int64_t)a->act_layout, (int64_t)b->act_layout);
    CPL_ORDER_BY((int64_t)a->wt_layout, (int64_t)b->wt_layout);
    CPL_ORDER_BY((int64_t)ma, (int64_t)mb);
    return 0;
}
#undef CPL_ORDER_BY

/* The same, then threads. */
static inline int cpl_entry_cmp(const cp_table_entry *a, const cp_table_entry *b) {
    int r = cpl_shape_flip_cmp(&a->shape, a->flip, &b->shape, b->flip);
    if (r) return r;
    return (a->threads > b->threads) - (a->threads < b->threads);
}

/* table_entry.c: entries[idx] -> out and its settings_key. */
/* Clears *out (no bound, error not recorded) and validates s; CP_EINVAL with
 * "invalid shape: ..." in msg when it fails (table_lookup.c). */
cp_status cpl_lookup_start(const cp_shape *s, cp_choice *out, char *msg, size_t cap);

/* The recorded error of the entry's chosen candidate, NaN when it has none
 * (table_bounded.c). */
double cpl_entry_chosen_err(const cp_table_entry *e);

cp_status cpl_decode_entry(const cpl_jctx *c, const json_t *e, size_t idx, cp_table_entry *out,
                           char *key, size_t keycap, const cp_cache_sizes *caches);
/* The evidence of an entry: its "candidates" array (already checked to be an
 * array) -> out->candidates (where: "entries[i]"). */
cp_status cpl_decode_candidates(const cpl_jctx *c, const json_t *cands, const char *where,
                                const cp_cache_sizes *caches, cp_table_entry *out);

/* table_read.c: the entry reader of the load (why and what it accepts: its
 * header comment).  Reads the entry at d[0..len) (d[0] is its first byte)
 * into t->entries[i] and its settings_key; 1 and *used = the bytes it took
 * when it read it, 0 when it declines: it never words an error, the entry is
 * then read by cpl_table_add (the tree decoder), which says what is wrong.
 * *rd: its reusable scratch, NULL at first, freed by cpl_entry_reader_free. */
typedef struct cpl_entry_reader cpl_entry_reader;
int cpl_read_entry(cpl_entry_reader **rd, const cpl_jctx *c, const char *d, size_t len,
                   cp_table *t, size_t i, size_t *used);
void cpl_entry_reader_free(cpl_entry_reader *rd);

/* table_index.c */
cp_status cpl_table_alloc(const cpl_jctx *c, cp_table *t, size_t n);
/* Room for at least n entries (zeroed), kept as they are: for a load that
 * does not count the entries first. */
cp_status cpl_table_reserve(const cpl_jctx *c, cp_table *t, size_t n);
cp_status cpl_table_add(const cpl_jctx *c, cp_table *t, const json_t *e, size_t i);
cp_status cpl_table_index(const cpl_jctx *c, cp_table *t); /* sort + duplicate check */
void cpl_table_clear(cp_table *t);                         /* frees the contents */

/* table_scan.c: JSON white space; the top-level "entries" array of the text
 * d[0..len): d[*open] == '[', d[*close] == ']', *count elements (0 when the
 * document does not look as expected). */
static inline int cpl_is_ws(char ch) {
    return ch == ' ' || ch == '\t' || ch == '\n' || ch == '\r';
}
int cpl_find_entries(const char *d, size_t len, size_t *open, size_t *close, size_t *count);
/* The same; with close == NULL it stops at the array's '[' (*open), without
 * reading the entries. */
int cpl_scan_entries(const char *d, size_t len, size_t *open, size_t *close, size_t *count);
/* The guess that the entries array is the document's last member (as the
 * writers put it): *close = its ']' when the text after open ends in "] }"
 * (white space aside).  Only a guess: the caller checks the entries read end
 * exactly there. */
int cpl_entries_last(const char *d, size_t len, size_t open, size_t *close);
/* The text d[0..len) with the entries array at [open, close] emptied (a
 * malloc'ed copy, *hlen bytes; NULL when out of memory). */
char *cpl_header_text(const char *d, size_t len, size_t open, size_t close, size_t *hlen);
/* The document's header: everything but the entries (parsed with "entries":
 * []), or NULL when the text does not look like a table or is malformed. */
json_t *cpl_parse_header(const char *d, size_t len);

/* table_load.c: a table from a document already parsed (and migrated in
 * place to the current version), for the harness's table writer, which keeps
 * the tree.  Messages name `name`. */
cp_status cpl_table_from_json(json_t *root, const char *name, unsigned flags, cp_table **out,
                              char *msg, size_t cap);

#endif
