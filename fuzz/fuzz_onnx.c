/* Fuzz target: the ONNX model reader (cph_onnx_import_buffer, the in-memory
 * form of cph_onnx_import; harness/model/).  Properties: no crash, no leak,
 * no hang (the tensor table is hashed); an accepted model has at least one
 * layer, every layer a valid shape with a name; a refusal has a one-line
 * message; the layers listed after a refusal are valid too. */
#include <string.h>

#include "fuzz.h"
#include "harness/model/onnx_import.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size) {
    if (size > (1u << 20)) return 0;
    cph_layer_list l = {0};
    char msg[1024] = "";
    /* The options fill any symbolic dims, so that inputs reach the operators. */
    const cph_onnx_opts o = {1, 8, 8};
    const cp_status st = cph_onnx_import_buffer(data, size, "fuzz.onnx", &o, &l, NULL, msg, sizeof msg);
    if (st == CP_OK)
        cpf_require(l.n > 0, "an accepted model has a layer");
    else
        cpf_require(msg[0] != '\0' && !strchr(msg, '\n'), "a refusal has a one-line message");
    for (size_t i = 0; i < l.n; i++) {
        cpf_require(cp_shape_validate(&l.v[i].shape, NULL, 0) == CP_SHAPE_OK, "layer valid");
        cpf_require(l.v[i].name[0] != '\0', "layer named");
        cpf_require(l.v[i].count >= 1, "layer counted");
    }
    cph_layers_free(&l);
    return 0;
}
