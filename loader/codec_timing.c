/* The timing object (codec.h): a measurement's statistics and samples. */
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>

#include "loader/codec.h"

cp_status cpl_decode_timing(const cpl_jctx *c, const json_t *t, const char *where, cp_timing *out,
                            double **samples, size_t *nsamples) {
    if (samples) *samples = NULL;
    if (nsamples) *nsamples = 0;
    if (!json_is_object(t))
        return cpl_jfail(c, CP_EFORMAT, "%s: expected object, found %s", where,
                         cpl_json_type_name(t));
    json_t *stats = NULL;
    cp_status st = cpl_jfield(c, t, where, "stats", JSON_OBJECT, 0, &stats);
    if (st != CP_OK) return st;
    char sub[200];
    cpl_jpath(sub, sizeof sub, where, "stats");
    long long n;
    if ((st = cpl_jreal(c, stats, sub, "median", &out->median)) != CP_OK ||
        (st = cpl_jreal(c, stats, sub, "ci_lo", &out->ci_lo)) != CP_OK ||
        (st = cpl_jreal(c, stats, sub, "ci_hi", &out->ci_hi)) != CP_OK ||
        (st = cpl_jint(c, stats, sub, "n", 0, UINT32_MAX, &n)) != CP_OK ||
        (st = cpl_jbool(c, stats, sub, "noisy", &out->noisy)) != CP_OK)
        return st;
    out->samples = (uint32_t)n;
    if (out->ci_lo > out->median || out->median > out->ci_hi)
        return cpl_jfail(c, CP_EFORMAT, "%s: expected ci_lo <= median <= ci_hi", sub);
    const json_t *sv = json_object_get(t, "samples");
    if (samples && sv) {
        cpl_jpath(sub, sizeof sub, where, "samples");
        return cpl_jsamples(c, sv, sub, samples, nsamples);
    }
    return CP_OK;
}
