/* A layer as text: an optional "name:" and a shape spec (shape_spec.h) that
 * may hold one more key, count=N (how many times the layer occurs in its
 * network, default 1), e.g.
 *   conv2_1a: n=1,c=64,h=56,w=56,k=64,r=3,pad=1,count=3
 * The form of --shape and of a shape file's lines. */
#ifndef CONVPICK_LAYER_SPEC_H
#define CONVPICK_LAYER_SPEC_H

#include <stddef.h>

#include "harness/select/layers.h"

/* A name is 1..63 characters of [A-Za-z0-9_.-/]. */
#define CPH_LAYER_NAME_MAX 63

/* Parses one layer.  name (cap >= CPH_LAYER_NAME_MAX + 1) is set to "" when
 * the text has none.  Errors name the key or the name, prefixed by ctx (such
 * as "file.txt:12") when ctx is not NULL. */
cp_status cph_parse_layer(const char *text, const char *ctx, char *name, int *count,
                          cp_shape *out, char *msg, size_t cap);

#endif
