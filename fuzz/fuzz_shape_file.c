/* Fuzz target: the shape-file reader (cph_load_shape_text, the in-memory
 * form of cph_load_shape_file; harness/select/shapefile.c).  Properties: no crash,
 * no leak; every layer read is a valid shape with a non-empty name; an error
 * leaves a message. */
#include <string.h>

#include "fuzz.h"
#include "harness/select/shapefile.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size) {
    if (size > (1u << 20)) return 0;
    cph_layer_list l = {0};
    char msg[512] = "";
    cp_status st = cph_load_shape_text((const char *)data, size, "fuzz.txt", &l, msg, sizeof msg);
    if (st == CP_OK) {
        cpf_require(l.n > 0, "an accepted file has a layer");
        for (size_t i = 0; i < l.n; i++) {
            cpf_require(cp_shape_validate(&l.v[i].shape, NULL, 0) == CP_SHAPE_OK, "layer valid");
            cpf_require(l.v[i].name[0] != '\0', "layer named");
            cpf_require(memchr(l.v[i].name, '\0', sizeof l.v[i].name) != NULL, "name terminated");
        }
    } else {
        cpf_require(msg[0] != '\0', "a refusal has a message");
    }
    cph_layers_free(&l);
    return 0;
}
