/* Fuzz target: what `convpick run` does with raw tensor files.  The input is
 * a shape spec line, one byte choosing the algorithm and mode, then the bytes
 * of the input tensor followed by those of the weights.  The tensors go
 * through cph_f32_from_bytes (the in-memory form of cph_read_f32,
 * harness/io/rawfile.c) and, when their sizes fit the shape, through a plan of
 * the chosen algorithm.  Properties: no crash, no leak, whatever the bytes
 * (NaN, Inf, denormals); a wrong size is refused with a message. */
#include <stdlib.h>
#include <string.h>

#include "convpick/convpick.h"
#include "fuzz.h"
#include "harness/io/rawfile.h"
#include "harness/select/shape_spec.h"

/* Keeps each input fast: the direct algorithms cost ~flops. */
#define MAX_ELEMS 8192
#define MAX_FLOPS 2e6
/* Keeps each input within memory: a small tensor with a huge padding or
 * dilation makes a padded-copy workspace of gigabytes, which the plan refuses
 * with CP_ENOMEM where the allocator says no -- but ASan's allocator aborts
 * instead of saying no, so such shapes are skipped here. */
#define MAX_PLAN_BYTES ((size_t)256 << 20)

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size) {
    const uint8_t *nl = memchr(data, '\n', size < 256 ? size : 256);
    if (!nl || (size_t)(nl - data) + 2 > size) return 0;
    char spec[256];
    size_t slen = (size_t)(nl - data);
    memcpy(spec, data, slen);
    spec[slen] = '\0';
    cp_shape s;
    char msg[512];
    if (cph_parse_shape(spec, "fuzz", &s, msg, sizeof msg) != CP_OK) return 0;
    const size_t nx = cp_shape_input_elems(&s), nw = cp_shape_weight_elems(&s),
                 ny = cp_shape_output_elems(&s);
    if (nx > MAX_ELEMS || nw > MAX_ELEMS || ny > MAX_ELEMS || cp_shape_flops(&s) > MAX_FLOPS)
        return 0;
    const uint8_t pick = nl[1];
    const cp_algo *a = cp_algo_at((size_t)(pick & 0x7f) % cp_algo_count());
    const cp_flip flip = (pick & 0x80) ? CP_CONV : CP_XCORR;
    const uint8_t *payload = nl + 2;
    const size_t plen = size - (size_t)(payload - data);
    /* Split where the input tensor would end; a short payload is a wrong size. */
    const size_t xbytes = nx * sizeof(float) <= plen ? nx * sizeof(float) : plen;
    float *x = NULL, *w = NULL, *y = NULL;
    cp_plan *plan = NULL;
    if (cph_f32_from_bytes(payload, xbytes, "x.f32", "input", nx, &x, msg, sizeof msg) != CP_OK ||
        cph_f32_from_bytes(payload + xbytes, plen - xbytes, "w.f32", "weights", nw, &w, msg,
                           sizeof msg) != CP_OK) {
        cpf_require(msg[0] != '\0', "a wrong size has a message");
        goto out;
    }
    const cph_nonfinite bad = cph_count_nonfinite(x, nx);
    cpf_require(bad.nan + bad.inf <= nx, "non-finite count bounded");
    if (!a->supports(&s, flip, NULL, 0)) goto out;
    const cp_cache_sizes caches = cp_cache_sizes_fallback();
    cp_params dp;
    cp_algo_defaults(a, &s, &caches, &dp);
    if ((a->workspace_size && a->workspace_size(&s, flip, &dp, 1) > MAX_PLAN_BYTES) ||
        (a->prepared_size && a->prepared_size(&s, flip, &dp) > MAX_PLAN_BYTES))
        goto out;
    if (cp_plan_create(a, &s, flip, NULL, &caches, 1, w, &plan, msg, sizeof msg) != CP_OK) goto out;
    y = malloc(ny * sizeof *y);
    if (!y) goto out;
    cpf_require(cp_plan_run(plan, x, NULL, y, NULL) == CP_OK, "plan runs");
    (void)cph_count_nonfinite(y, ny);
out:
    cp_plan_destroy(plan);
    free(x);
    free(w);
    free(y);
    return 0;
}
