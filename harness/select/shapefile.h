/* Shape files: one layer a line as a layer spec (layer_spec.h: optional
 * "name:" first, a shape spec, optional count=N), '#' starts a comment, blank
 * lines ignored.  Layers of identical shape keep every name and sum their
 * counts (layers.h).  The writer writes the same form back. */
#ifndef CONVPICK_SHAPEFILE_H
#define CONVPICK_SHAPEFILE_H

#include <stddef.h>
#include <stdio.h>

#include "harness/select/layers.h"

/* Reads a shape file, appending its layers to out; errors name file:line and
 * the key.  A file without any layer is an error. */
cp_status cph_load_shape_file(const char *path, cph_layer_list *out, char *msg, size_t cap);
/* The same from text in memory (len bytes, NUL bytes allowed); name stands
 * for the file in messages. */
cp_status cph_load_shape_text(const char *text, size_t len, const char *name,
                              cph_layer_list *out, char *msg, size_t cap);

/* Writes the layers as a shape file: a comment header (lines of header, may
 * be NULL), then one line per layer name, "name: spec[,count=N]" -- a layer
 * with several names is written once per name, its count split as evenly as
 * the names allow, so that reading the file back gives the same list.
 * Returns 0, or -1 on a write error. */
int cph_write_shape_file(FILE *f, const char *header, const cph_layer_list *l);

#endif
