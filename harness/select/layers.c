/* The layer list: shapes with a name and a count (layers.h). */
#include "harness/select/layers.h"

#include <limits.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

cp_status cph_layers_add(cph_layer_list *l, const char *name, const cp_shape *s, int count) {
    if (count < 1) return CP_EINVAL;
    for (size_t i = 0; i < l->n; i++)
        if (cp_shape_equal(&l->v[i].shape, s)) {
            if (l->v[i].count > INT_MAX - count) return CP_EINVAL;
            l->v[i].count += count;
            return CP_OK;
        }
    if (l->n == l->cap) {
        size_t ncap = l->cap ? 2 * l->cap : 16;
        cph_layer *nv = realloc(l->v, ncap * sizeof *nv);
        if (!nv) return CP_ENOMEM;
        l->v = nv;
        l->cap = ncap;
    }
    cph_layer *e = &l->v[l->n++];
    memset(e, 0, sizeof *e);
    snprintf(e->name, sizeof e->name, "%s", name ? name : "");
    if (!e->name[0]) snprintf(e->name, sizeof e->name, "layer%zu", l->n);
    e->shape = *s;
    e->count = count;
    return CP_OK;
}

void cph_layers_free(cph_layer_list *l) {
    free(l->v);
    l->v = NULL;
    l->n = l->cap = 0;
}
