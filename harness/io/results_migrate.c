/* Bench results version 1 -> CPH_BENCH_VERSION, in place (the table's
 * migration is the loader's, loader/codec_migrate.c; the parts both share
 * come from there).  Version 1 spelled:
 *   "convpick_version", "git_rev"  -> "convpick": {"version", "git"}
 *   "created_utc"                  -> "created"
 *   top-level "fingerprint"        -> "device.fingerprint" (already there)
 *   device cpu.brand / cpu.model   -> cpu.model / cpu.model_id; isa object ->
 *                                     array; blas.config -> blas.version
 *   settings.modes ["xcorr"]       -> settings.flipped [false]
 *   results[].shape dil_h, dil_w   -> dilation_h, dilation_w (+ layout)
 *   results[].mode, summaries[].mode -> flipped
 *   params ukernel                 -> tile_isa
 * Documented in docs/table-format.md, "Migration". */
#include "harness/io/codec_encode.h"
#include "harness/io/results_impl.h"

static int migrate_provenance(json_t *root) {
    json_t *ver = json_object_get(root, "convpick_version"), *git = json_object_get(root, "git_rev");
    if (!json_object_get(root, "convpick") && (ver || git)) {
        json_t *o = json_object();
        if (!o || json_object_set_new(root, "convpick", o) != 0) return 0;
        if (ver && json_object_set(o, "version", ver) != 0) return 0;
        if (git && json_object_set(o, "git", git) != 0) return 0;
        json_object_del(root, "convpick_version");
        json_object_del(root, "git_rev");
    }
    json_t *dev = json_object_get(root, "device"), *fp = json_object_get(root, "fingerprint");
    if (fp && json_is_object(dev)) {
        if (!json_object_get(dev, "fingerprint") && json_object_set(dev, "fingerprint", fp) != 0)
            return 0;
        json_object_del(root, "fingerprint");
    }
    return cpl_rename(root, "created_utc", "created");
}

cp_status cph_bench_migrate(const cpl_jctx *c, json_t *root) {
    json_t *v = NULL;
    cp_status st = cpl_jfield(c, root, "", "version", JSON_INTEGER, 0, &v);
    if (st) return st;
    if (json_integer_value(v) == CPH_BENCH_VERSION) return CP_OK;
    if (json_integer_value(v) != 1)
        return cpl_jfail(c, CP_EVERSION, "version: %s version %lld is not supported (this build "
                         "reads versions 1 to %d)", CPH_BENCH_FORMAT,
                         (long long)json_integer_value(v), CPH_BENCH_VERSION);
    int ok = migrate_provenance(root) && cpl_migrate_device(json_object_get(root, "device")) &&
             cpl_migrate_mode_list(json_object_get(root, "settings"), "modes");
    size_t i;
    json_t *e;
    json_array_foreach(json_object_get(root, "results"), i, e) {
        if (ok && json_is_object(e))
            ok = cpl_migrate_shape(json_object_get(e, "shape")) && cpl_migrate_mode(e) &&
                 cpl_migrate_params(e);
    }
    json_array_foreach(json_object_get(root, "summaries"), i, e) {
        if (ok && json_is_object(e)) ok = cpl_migrate_mode(e);
    }
    if (ok) ok = json_object_set_new(root, "version", json_integer(CPH_BENCH_VERSION)) == 0;
    return ok ? CP_OK : cpl_jfail(c, CP_ENOMEM, "out of memory migrating version 1");
}
