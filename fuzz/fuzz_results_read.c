/* Fuzz target: the results reader of `convpick diff` (cph_results_read_buffer,
 * the in-memory form of cph_results_read; harness/io/results_read.c), on bench
 * results and tuning tables alike, version 2 and the version 1 they migrate
 * from.  Properties: no crash, no leak; every
 * item read has its samples when it claims some, a finite median >= 0, and
 * NUL-terminated texts; a refusal has a message. */
#include <math.h>
#include <string.h>

#include "fuzz.h"
#include "harness/io/results_read.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size) {
    if (size > (1u << 20)) return 0;
    cph_results r;
    char msg[512] = "";
    if (cph_results_read_buffer(data, size, "fuzz.json", &r, msg, sizeof msg) != CP_OK) {
        cpf_require(msg[0] != '\0', "a refusal has a message");
        cpf_require(r.items == NULL && r.choices == NULL, "a refusal keeps nothing");
        return 0;
    }
    for (size_t i = 0; i < r.nitems; i++) {
        const cph_result_item *it = &r.items[i];
        cpf_require(it->nsamples == 0 || it->samples != NULL, "samples present");
        cpf_require(isfinite(it->median) && it->median >= 0, "median finite and >= 0");
        cpf_require(memchr(it->algo, '\0', sizeof it->algo) && memchr(it->layer, '\0', sizeof it->layer) &&
                        memchr(it->params, '\0', sizeof it->params),
                    "texts terminated");
        cpf_require(cph_result_same_point(it, it), "an item is its own point");
    }
    cph_results_free(&r);
    return 0;
}
