/* Shape files: one layer a line as a shape spec (shape_spec.h), optional
 * "name:" first, '#' starts a comment, blank lines ignored. */
#ifndef CONVPICK_SHAPEFILE_H
#define CONVPICK_SHAPEFILE_H

#include <stddef.h>

#include "harness/select/layers.h"

/* Reads a shape file, appending its layers to out; errors name file:line and
 * the key.  A file without any layer is an error. */
cp_status cph_load_shape_file(const char *path, cph_layer_list *out, char *msg, size_t cap);
/* The same from text in memory (len bytes, NUL bytes allowed); name stands
 * for the file in messages. */
cp_status cph_load_shape_text(const char *text, size_t len, const char *name,
                              cph_layer_list *out, char *msg, size_t cap);

#endif
