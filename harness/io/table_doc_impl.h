/* The table writer's parts (table_write.h is their interface):
 *   table_encode.c  settings and entries as JSON, the settings key
 *   table_doc.c     the document model: new, open (--resume), find, put
 *   table_merge.c   merging another process's entries from disk
 *   table_lock.c    the advisory lock and the atomic write */
#ifndef CONVPICK_TABLE_DOC_IMPL_H
#define CONVPICK_TABLE_DOC_IMPL_H

#include <jansson.h>
#include <sys/types.h>
#include <time.h>

#include "harness/io/table_write.h"

/* Which file a path named at some moment: every atomic write makes a new
 * inode, so a changed identity means someone wrote the table. */
typedef struct cph_file_id {
    int exists;
    dev_t dev;
    ino_t ino;
    off_t size;
    struct timespec mtime;
} cph_file_id;

struct cph_table_doc {
    json_t *root;      /* the whole document */
    json_t *entries;   /* borrowed from root */
    json_t *mine;      /* entry key -> entry put by this process (they win a merge) */
    char key[17];
    char fingerprint[17];
    cph_file_id start; /* the file the document was read from or replaces */
    cph_file_id last;  /* the file this process last wrote */
};

cph_file_id cph_file_identify(const char *path);

/* table_encode.c */
json_t *cph_table_settings_json(const cph_table_settings *s, const cph_machine *m);
json_t *cph_table_entry_json(const cp_table_entry *e, const cph_entry_notes *n, const char *key);
/* The identity of an entry for merging (shape, flipped, threads, printed);
 * 0 when the entry lacks them (never for a table the loader accepted). */
int cph_table_entry_key(const json_t *e, char *buf, size_t cap);

/* table_doc.c: reads a table file into a tree migrated to the current
 * version and checked by the loader (one parse); *fp: its fingerprint. */
cp_status cph_table_read_tree(const char *path, json_t **root, char fp[17], char *msg, size_t cap);

/* table_merge.c */
cp_status cph_table_merge_from_disk(cph_table_doc *d, const char *path, char *msg, size_t cap);

#endif
