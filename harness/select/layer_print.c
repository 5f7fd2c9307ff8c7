/* The layer listing commands print before their work (layers.h): one line a
 * shape, its count, its spec and, when several layers share it, every name. */
#include "harness/select/layers.h"
#include "harness/select/shape_spec.h"

#include <string.h>

void cph_layers_print(FILE *f, const cph_layer_list *l) {
    int w = 5;
    for (size_t i = 0; i < l->n; i++) {
        const int len = (int)strlen(l->v[i].name);
        if (len > w) w = len;
    }
    for (size_t i = 0; i < l->n; i++) {
        const cph_layer *L = &l->v[i];
        char spec[320];
        cph_shape_format_short(&L->shape, spec, sizeof spec);
        fprintf(f, "  %-*s  x%-3d %s%s%s\n", w, L->name, L->count, spec, L->names ? "  names: " : "",
                L->names ? L->names : "");
    }
}
