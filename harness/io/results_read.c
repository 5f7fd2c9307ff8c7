/* Bench results and tuning tables -> one list of measured items (see
 * results_read.h): the file, the JSON, and which of the two formats. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "harness/io/codec_encode.h"
#include "harness/io/results_impl.h"

#define RESULTS_MAX_BYTES ((size_t)1 << 31)

cp_status cph_results_read(const char *path, cph_results *out, char *msg, size_t cap) {
    memset(out, 0, sizeof *out);
    cpl_jctx c = {path, msg, cap};
    char *data;
    size_t len;
    cp_status st = cpl_read_file(&c, path, RESULTS_MAX_BYTES, "results file", "convpick", &data,
                                 &len);
    if (st != CP_OK) return st;
    char evidence[4096];
    if (cph_results_evidence_path(path, data, len, evidence, sizeof evidence)) {
        /* a lean table: its candidates are in the evidence file beside it */
        free(data);
        c.file = evidence;
        st = cpl_read_file(&c, evidence, RESULTS_MAX_BYTES, "evidence file of a lean table",
                           "convpick", &data, &len);
        if (st != CP_OK) return st;
        path = evidence;
    }
    st = cph_results_read_buffer(data, len, path, out, msg, cap);
    free(data);
    return st;
}

cp_status cph_results_read_buffer(const void *data, size_t len, const char *name,
                                  cph_results *out, char *msg, size_t cap) {
    if (!name) name = "(buffer)";
    memset(out, 0, sizeof *out);
    snprintf(out->path, sizeof out->path, "%s", name);
    cph_rctx c = {{name, msg, cap}, out, 0};
    json_error_t err;
    json_t *root = json_loadb(data ? data : "", data ? len : 0, JSON_REJECT_DUPLICATES, &err);
    if (!root) {
        if (msg && cap)
            snprintf(msg, cap, "%s:%d:%d: malformed JSON: %s", name, err.line, err.column, err.text);
        return CP_EFORMAT;
    }
    cp_status st;
    json_t *fmt = json_object_get(root, "format");
    if (!json_is_object(root)) {
        st = cpl_jfail(&c.j, CP_EFORMAT, "expected a JSON object at the top, found %s",
                       cpl_json_type_name(root));
    } else if (!json_is_string(fmt)) {
        st = cpl_jfail(&c.j, CP_EFORMAT, "format: %s (expected \"%s\" or \"%s\")",
                       fmt ? "not a string" : "missing", CPH_BENCH_FORMAT, CP_TABLE_FORMAT);
    } else if (strcmp(json_string_value(fmt), CPH_BENCH_FORMAT) == 0) {
        out->kind = CPH_RESULTS_BENCH;
        st = cph_results_read_bench(&c, root);
    } else if (strcmp(json_string_value(fmt), CP_TABLE_FORMAT) == 0) {
        out->kind = CPH_RESULTS_TABLE;
        st = cph_results_read_table(&c, root);
    } else {
        st = cpl_jfail(&c.j, CP_EFORMAT, "format: \"%s\" is neither \"%s\" nor \"%s\"",
                       json_string_value(fmt), CPH_BENCH_FORMAT, CP_TABLE_FORMAT);
    }
    json_decref(root);
    if (st) cph_results_free(out);
    return st;
}

const char *const cph_results_control_names[CPH_RESULTS_CONTROL_SERIES] = {"gemm", "fma"};

void cph_results_free(cph_results *r) {
    for (size_t i = 0; i < r->nitems; i++) free(r->items[i].samples);
    for (int s = 0; s < CPH_RESULTS_CONTROL_SERIES; s++) {
        free(r->control[s].v);
        r->control[s].v = NULL;
        r->control[s].n = 0;
    }
    free(r->items);
    free(r->choices);
    r->items = NULL;
    r->choices = NULL;
    r->nitems = r->nchoices = 0;
}

const char *cph_results_kind_name(cph_results_kind k) {
    return k == CPH_RESULTS_TABLE ? "tuning table" : "bench results";
}

int cph_result_same_point(const cph_result_item *a, const cph_result_item *b) {
    return a->flip == b->flip && a->threads == b->threads && strcmp(a->algo, b->algo) == 0 &&
           strcmp(a->chosen_algo, b->chosen_algo) == 0 && strcmp(a->params, b->params) == 0 &&
           cp_shape_equal(&a->shape, &b->shape);
}
