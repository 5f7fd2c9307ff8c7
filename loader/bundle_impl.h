/* A bundle's storage (loader/bundle.c reads it, bundle_pick.c picks). */
#ifndef CONVPICK_BUNDLE_IMPL_H
#define CONVPICK_BUNDLE_IMPL_H

#include "convpick/bundle.h"
#include "loader/json_get.h"

struct cp_bundle {
    char **paths;         /* dir/name, or FILE:name in a bundle file; sorted by name */
    cp_device_desc *devs; /* one per path */
    size_t n, cap;
    char *data;           /* a bundle file's bytes (NULL for a directory) */
    size_t *off, *size;   /* where each table lies in data */
};

/* One table's device from its header (the entries are not parsed): from a
 * file, or from text in memory named c->file in messages. */
cp_status cpl_bundle_read_device(const char *path, cp_device_desc *d, char *msg, size_t cap);
cp_status cpl_bundle_text_device(const cpl_jctx *c, const char *data, size_t len,
                                 cp_device_desc *d);

/* bundle_file.c: a bundle file (docs/table-format.md, "Bundle files") read
 * into b: its bytes, each table's name, place and device. */
cp_status cpl_bundle_read_file(const char *path, cp_bundle *b, char *msg, size_t cap);
/* 1 when the bytes start as a bundle file does. */
int cpl_bundle_file_magic(const char *d, size_t len);

#endif
