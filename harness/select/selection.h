/* A selection: the layers, algorithms and kernel orientations (flips) a
 * command runs on, and the seed of its random tensors.  The command line
 * fills it (harness/cli/options.h); the memory budget and the commands read it. */
#ifndef CONVPICK_SELECTION_H
#define CONVPICK_SELECTION_H

#include <stddef.h>
#include <stdint.h>

#include "harness/select/layers.h"

#define CPH_SELECTION_MAX_ALGOS 32
#define CPH_SELECTION_MAX_MODELS 8

typedef struct cph_selection {
    cph_layer_list layers;
    const cp_algo *algos[CPH_SELECTION_MAX_ALGOS];
    size_t nalgos;        /* 0 until finished = all registered */
    cp_flip flips[2];
    int nflips;           /* 0 until finished = the command's default */
    uint64_t seed;        /* default 1 */
    /* Models (--onnx) are imported when the options are finished, after
     * --batch and --input-size are known; their layers come after the others. */
    const char *models[CPH_SELECTION_MAX_MODELS];
    size_t nmodels;
    int64_t batch;        /* > 0: every layer's n (--batch) */
    int64_t input_h, input_w; /* > 0: a model input's symbolic H and W */
} cph_selection;

void cph_selection_init(cph_selection *sel);
/* Sets every layer's n to batch (layers that become identical merge). */
cp_status cph_selection_set_batch(cph_selection *sel, int64_t batch);
/* Fills what was not given (all algorithms; flips = default_flips) and fails
 * if no layer was selected. */
cp_status cph_selection_finish(cph_selection *sel, const cp_flip *default_flips, int ndefault,
                               char *msg, size_t cap);
void cph_selection_free(cph_selection *sel);

/* The word --flip gives an orientation, as human output prints it: "no"
 * (cross-correlation) or "yes" (true convolution, the kernel read flipped). */
const char *cph_flip_word(cp_flip f);

#endif
