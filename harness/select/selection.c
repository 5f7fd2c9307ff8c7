/* The selection a command runs on (selection.h). */
#include "harness/select/selection.h"
#include "algos/core/cpa.h"

#include <stdio.h>
#include <string.h>

void cph_selection_init(cph_selection *sel) {
    memset(sel, 0, sizeof *sel);
    sel->seed = 1;
}

void cph_selection_free(cph_selection *sel) { cph_layers_free(&sel->layers); }

cp_status cph_selection_set_batch(cph_selection *sel, int64_t batch) {
    cph_layer_list nl = {0};
    cp_status st = CP_OK;
    for (size_t i = 0; i < sel->layers.n && st == CP_OK; i++) {
        const cph_layer *L = &sel->layers.v[i];
        cp_shape s = L->shape;
        s.n = batch;
        st = cph_layers_add_names(&nl, cph_layer_names(L), &s, L->count);
    }
    if (st != CP_OK) {
        cph_layers_free(&nl);
        return st;
    }
    cph_layers_free(&sel->layers);
    sel->layers = nl;
    return CP_OK;
}

cp_status cph_selection_finish(cph_selection *sel, const cp_flip *default_flips, int ndefault,
                               char *msg, size_t cap) {
    if (sel->nalgos == 0) {
        size_t n = cp_algo_count();
        if (n > CPH_SELECTION_MAX_ALGOS) n = CPH_SELECTION_MAX_ALGOS;
        for (size_t i = 0; i < n; i++) sel->algos[i] = cp_algo_at(i);
        sel->nalgos = n;
    }
    if (sel->nflips == 0) {
        if (ndefault > 2) ndefault = 2;
        for (int i = 0; i < ndefault; i++) sel->flips[i] = default_flips[i];
        sel->nflips = ndefault;
    }
    if (sel->layers.n == 0)
        return cpa_fail(CP_EINVAL, msg, cap,
                        "no layers selected (give --shape, --shapes, --suite or --onnx)");
    return CP_OK;
}

const char *cph_flip_word(cp_flip f) { return f == CP_CONV ? "yes" : "no"; }
