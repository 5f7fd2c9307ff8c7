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
    size_t open, close, count;
    if (!cpl_find_entries(data, len, &open, &close, &count)) return 0;
    /* the header alone: the document with "entries" emptied */
    const size_t hlen = open + 2 + (len - close - 1);
    char *head = malloc(hlen);
    if (!head) return 0;
    memcpy(head, data, open);
    memcpy(head + open, "[]", 2);
    memcpy(head + open + 2, data + close + 1, len - close - 1);
    json_t *root = json_loadb(head, hlen, 0, NULL);
    free(head);
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
