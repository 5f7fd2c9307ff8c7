/* The layer list: what verify, bench, tune and the cache study run on.  A
 * layer is a shape with a name and the number of times it occurs in its
 * network.  A shape already in the list is not timed twice: its count grows
 * by the new layer's count and the new name joins its names, so that every
 * layer of a network stays visible ("conv2_1a,conv2_2a" x2). */
#ifndef CONVPICK_LAYERS_H
#define CONVPICK_LAYERS_H

#include <stddef.h>
#include <stdio.h>

#include "convpick/convpick.h"

typedef struct cph_layer {
    char name[64];   /* the first name: "conv2_1a", or "layer3" when unnamed */
    char *names;     /* every name, comma-separated, when more than one layer
                        has this shape; NULL otherwise (heap, the list owns it) */
    cp_shape shape;
    int count;       /* how many times the shape occurs in its network */
} cph_layer;

typedef struct cph_layer_list {
    cph_layer *v;
    size_t n, cap;
} cph_layer_list;

/* Appends a layer; a shape already in the list adds count to that layer's
 * and name to its names (a name it already holds is not repeated). */
cp_status cph_layers_add(cph_layer_list *l, const char *name, const cp_shape *s, int count);
/* The same with names given as "a,b,c" (as cph_layer_names gives them). */
cp_status cph_layers_add_names(cph_layer_list *l, const char *names, const cp_shape *s, int count);
void cph_layers_free(cph_layer_list *l);

/* Every name of the layer ("a" or "a,b,c"). */
const char *cph_layer_names(const cph_layer *L);

/* The sum of the counts: the number of conv layers in the network. */
long long cph_layers_total(const cph_layer_list *l);

/* Lists the layers: "  NAME  xCOUNT SPEC[  names: a,b]" a line. */
void cph_layers_print(FILE *f, const cph_layer_list *l);

#endif
