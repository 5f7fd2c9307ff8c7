/* The layer list: what verify, bench, tune and the cache study run on.  A
 * layer is a shape with a name and the number of times it occurs in its
 * network; a shape already in the list only counts once more. */
#ifndef CONVPICK_LAYERS_H
#define CONVPICK_LAYERS_H

#include <stddef.h>

#include "convpick/convpick.h"

typedef struct cph_layer {
    char name[64];   /* "conv2_1a" or "layer3" when unnamed */
    cp_shape shape;
    int count;       /* how many times the shape occurs in its network */
} cph_layer;

typedef struct cph_layer_list {
    cph_layer *v;
    size_t n, cap;
} cph_layer_list;

/* Appends a layer; a shape already in the list only increments its count. */
cp_status cph_layers_add(cph_layer_list *l, const char *name, const cp_shape *s, int count);
void cph_layers_free(cph_layer_list *l);

#endif
