/* Fuzz target: the shape spec parser (cph_parse_shape, harness/select/shape_spec.c).
 * Properties: it never crashes; an accepted spec is a valid shape; its short
 * form (cph_shape_format_short) parses back to the same shape. */
#include <stdlib.h>
#include <string.h>

#include "fuzz.h"
#include "harness/select/shape_spec.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size) {
    if (size > 4096) return 0;
    char *spec = malloc(size + 1);
    if (!spec) return 0;
    memcpy(spec, data, size);
    spec[size] = '\0';
    cp_shape s;
    char msg[512];
    if (cph_parse_shape(spec, "fuzz", &s, msg, sizeof msg) == CP_OK) {
        cpf_require(cp_shape_validate(&s, NULL, 0) == CP_SHAPE_OK, "accepted spec is valid");
        char short_form[512];
        int n = cph_shape_format_short(&s, short_form, sizeof short_form);
        cpf_require(n > 0 && (size_t)n < sizeof short_form, "short form fits");
        cp_shape back;
        cpf_require(cph_parse_shape(short_form, "fuzz", &back, msg, sizeof msg) == CP_OK,
                    "short form parses");
        cpf_require(memcmp(&back, &s, sizeof s) == 0, "short form reads back the same shape");
    } else {
        cpf_require(memchr(msg, '\0', sizeof msg) != NULL && msg[0] != '\0',
                    "a refusal has a message");
    }
    free(spec);
    return 0;
}
