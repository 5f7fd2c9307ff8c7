/* Merging the entries another process wrote into this process's table
 * document (table_write.h, cph_table_doc_write). */
#include <string.h>

#include "algos/core/cpa.h"
#include "harness/io/table_doc_impl.h"

/* Under the lock: the table on disk was written by someone else since this
 * process read or last wrote it.  The merged list is the disk's entries in
 * their order, each replaced by this process's own measurement of it, then
 * this process's entries the disk lacks.  A disk table that is no longer a
 * valid table of this device is left alone (an error, nothing written). */
cp_status cph_table_merge_from_disk(cph_table_doc *d, const char *path, char *msg, size_t cap) {
    json_t *disk;
    char fp[17], why[512];
    cp_status st = cph_table_read_tree(path, &disk, fp, why, sizeof why);
    if (st != CP_OK)
        return cpa_fail(st, msg, cap, "%s changed on disk during this run and cannot be merged "
                                      "(%s); it was left as it is", path, why);
    if (strcmp(fp, d->fingerprint) != 0) {
        json_decref(disk);
        return cpa_fail(CP_EDEVICE, msg, cap, "%s was replaced during this run by a table of "
                                              "another device; it was left as it is", path);
    }
    json_t *merged = json_array(), *seen = json_object();
    st = CP_OK;
    char k[512];
    size_t i;
    json_t *e;
    json_array_foreach(json_object_get(disk, "entries"), i, e) {
        if (!cph_table_entry_key(e, k, sizeof k)) continue;
        json_t *ours = json_object_get(d->mine, k);
        json_array_append(merged, ours ? ours : e);
        json_object_set_new(seen, k, json_true());
    }
    json_array_foreach(d->entries, i, e) {
        if (!cph_table_entry_key(e, k, sizeof k) || json_object_get(seen, k)) continue;
        json_array_append(merged, e);
        json_object_set_new(seen, k, json_true());
    }
    if (!merged || !seen || json_object_set(d->root, "entries", merged) != 0)
        st = cpa_fail(CP_ENOMEM, msg, cap, "table: out of memory");
    else
        d->entries = merged;
    json_decref(merged);
    json_decref(seen);
    json_decref(disk);
    return st;
}
