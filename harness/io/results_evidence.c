/* A lean table's evidence file (docs/table-format.md, "Lean tables"): diff
 * and the report read the measured candidates from the full table the lean
 * one names, beside it. */
#include <jansson.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "harness/io/results_impl.h"
#include "loader/table_impl.h"

int cph_results_evidence_path(const char *path, const char *data, size_t len, char *out,
                              size_t cap) {
    json_t *root = cpl_parse_header(data, len);
    const char *ev = json_string_value(json_object_get(root, "evidence"));
    int found = 0;
    if (ev && ev[0] && !strchr(ev, '/')) {
        const char *slash = strrchr(path, '/');
        const int dlen = slash ? (int)(slash - path + 1) : 0;
        const int k = snprintf(out, cap, "%.*s%s", dlen, path, ev);
        found = k > 0 && (size_t)k < cap;
    }
    json_decref(root);
    return found;
}
