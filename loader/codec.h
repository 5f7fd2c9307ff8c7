/* Decoding the objects every convpick format shares, spelled one way in all of
 * them (docs/table-format.md, "Shared objects"):
 *   shape    {"n", "c", "h", "w", "k", "r", "s", "stride_h", "stride_w",
 *             "pad_top", "pad_left", "pad_bottom", "pad_right", "dilation_h",
 *             "dilation_w", "groups", "layout": "NCHW/KCRS", "spec"}
 *   flipped  false (cross-correlation) | true (true convolution)
 *   params   {"name": integer, ...}, the algorithm's parameters
 *   timing   {"stats": {"n", "median", "ci_lo", "ci_hi", "noisy", ...},
 *             "samples": [seconds, ...]} (samples optional in tables)
 *   device   {"fingerprint", "cpu": {...}, "caches": [{"level", "kind",
 *             "size", "line", ...}], "isa": [...], "blas": {...}, ...}
 *   settings {"timing": {"cold": bool, ...}, ...}
 * The harness writes them (harness/io/codec_encode.h); the table loader and
 * the results reader read them through these functions, so a field has one
 * name and one check.  Older documents are first rewritten to the current
 * spelling by the migrations (codec_migrate.c).  Part of libconvpick. */
#ifndef CONVPICK_CODEC_H
#define CONVPICK_CODEC_H

#include <stddef.h>

#include "convpick/table.h"
#include "loader/json_get.h"

#define CPL_LAYOUT "NCHW/KCRS"
/* The 16 integer fields of a shape object, in cp_shape order. */
#define CPL_SHAPE_NKEYS 16
extern const char *const cpl_shape_keys[CPL_SHAPE_NKEYS];
/* Pointers to the matching cp_shape members. */
void cpl_shape_fields(cp_shape *s, int64_t *out[CPL_SHAPE_NKEYS]);

/* obj.shape -> a validated shape. */
cp_status cpl_decode_shape(const cpl_jctx *c, const json_t *obj, const char *where, cp_shape *out);
/* obj.flipped -> CP_XCORR (false) or CP_CONV (true). */
cp_status cpl_decode_flipped(const cpl_jctx *c, const json_t *obj, const char *where,
                             cp_flip *out);
/* obj.algo resolved against the registry (CP_ENOTFOUND naming the known ones). */
cp_status cpl_decode_algo(const cpl_jctx *c, const json_t *obj, const char *where,
                          const cp_algo **out);
/* obj.params checked against algorithm a; a parameter missing takes a's
 * default for the shape and caches. */
cp_status cpl_decode_params(const cpl_jctx *c, const json_t *obj, const char *where,
                            const cp_algo *a, const cp_shape *shape, const cp_cache_sizes *caches,
                            cp_params *out);
/* A timing object (t itself, named where) -> median, interval, count, noisy;
 * with samples != NULL also its "samples" array when present. */
cp_status cpl_decode_timing(const cpl_jctx *c, const json_t *t, const char *where, cp_timing *out,
                            double **samples, size_t *nsamples);
/* What identifies a table entry (table_entry.c): entries[idx] must be an
 * object; its name, shape, flipped and threads.  where gets "entries[idx]". */
cp_status cpl_decode_entry_head(const cpl_jctx *c, const json_t *e, size_t idx, char where[48],
                                char *name, size_t namecap, cp_shape *shape, cp_flip *flip,
                                int *threads);
/* root.device -> its fingerprint and the cache sizes algorithms' defaults use. */
cp_status cpl_decode_device(const cpl_jctx *c, const json_t *root, char fingerprint[17],
                            cp_cache_sizes *caches);
/* root.settings.timing.cold. */
cp_status cpl_decode_cold(const cpl_jctx *c, const json_t *root, int *cold);

/* ---- migrations (codec_migrate.c): older spellings -> current, in place ---- */
/* Table version 1 -> CP_TABLE_VERSION (documented in docs/table-format.md,
 * "Migration"): the header and every entry root.entries holds.  *from: the
 * version read.  A current-version document (or one without an integer
 * version, which the decoder reports) is left alone; CP_EVERSION for a
 * version it does not know, CP_ENOMEM. */
cp_status cpl_table_migrate(const cpl_jctx *c, json_t *root, int *from);
/* One entry of a table of version from (the loader's entry-at-a-time path);
 * 0 when out of memory. */
int cpl_table_migrate_entry(json_t *e, int from);
/* The parts shared with the results format's migration. */
int cpl_migrate_shape(json_t *shape);        /* dil_h/dil_w -> dilation_*, layout added */
int cpl_migrate_mode(json_t *obj);           /* "mode": "xcorr"|"conv" -> "flipped" */
int cpl_migrate_params(json_t *obj);         /* obj.params.ukernel -> tile_isa */
int cpl_migrate_device(json_t *device);      /* both version-1 device shapes -> current */
int cpl_migrate_mode_list(json_t *obj, const char *key); /* ["xcorr"] -> "flipped": [false] */
int cpl_rename(json_t *obj, const char *from, const char *to); /* when to is absent */

/* ---- bounded file reading (file_read.c) ------------------------------------ */
/* Reads path whole (at most limit bytes) into a new buffer (*len may be 0): a
 * directory is refused, a FIFO without a writer reads as empty instead of
 * blocking, a regular file that grows while read is refused, and a stream not
 * starting with '{' is refused before much of it is read.  noun ("table") and
 * format (its format name) word the messages.  CP_EIO / CP_EFORMAT /
 * CP_ENOMEM with a message. */
cp_status cpl_read_file(const cpl_jctx *c, const char *path, size_t limit, const char *noun,
                        const char *format, char **data, size_t *len);

#endif
