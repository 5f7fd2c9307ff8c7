/* The shape-file writer (shapefile.h): the form the reader reads back. */
#include "harness/select/shapefile.h"
#include "harness/select/shape_spec.h"

#include <string.h>

/* Writes text as '#' comment lines. */
static void write_comment(FILE *f, const char *text) {
    for (const char *p = text; p && *p;) {
        const char *nl = strchr(p, '\n');
        const int len = (int)(nl ? (size_t)(nl - p) : strlen(p));
        fprintf(f, "# %.*s\n", len, p);
        p = nl ? nl + 1 : NULL;
    }
}

int cph_write_shape_file(FILE *f, const char *header, const cph_layer_list *l) {
    write_comment(f, header);
    for (size_t i = 0; i < l->n; i++) {
        const cph_layer *L = &l->v[i];
        char spec[320];
        cph_shape_format_short(&L->shape, spec, sizeof spec);
        const char *names = cph_layer_names(L);
        int nnames = 1;
        for (const char *c = names; *c; c++) nnames += *c == ',';
        const int each = L->count / nnames, extra = L->count % nnames;
        int k = 0;
        for (const char *p = names; p; k++) {
            const char *comma = strchr(p, ',');
            const int len = (int)(comma ? (size_t)(comma - p) : strlen(p));
            const int count = each + (k < extra);
            if (count > 1)
                fprintf(f, "%.*s: %s,count=%d\n", len, p, spec, count);
            else
                fprintf(f, "%.*s: %s\n", len, p, spec);
            p = comma ? comma + 1 : NULL;
        }
    }
    return ferror(f) ? -1 : 0;
}
