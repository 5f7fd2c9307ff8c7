/* The roofs a probe or bench file recorded (report.h), read leniently: the
 * machine/ code adds roofs (vector widths, thread counts) over time, and any
 * number named *_gflops or *_gbs is one, wherever it sits in the object. */
#include <jansson.h>
#include <stdio.h>
#include <string.h>

#include "harness/report/report.h"

static void walk(const json_t *o, const char *prefix, int threads, cph_rep_source *s) {
    const json_t *cu = json_object_get(o, "cores_used");
    const json_t *th = json_object_get(o, "threads");
    if (json_is_integer(th) && json_integer_value(th) > 0) threads = (int)json_integer_value(th);
    const int all = json_is_integer(cu) && json_integer_value(cu) > 0
                        ? (int)json_integer_value(cu) : threads;
    const char *key;
    const json_t *v;
    json_object_foreach((json_t *)o, key, v) {
        char name[64];
        snprintf(name, sizeof name, "%s%s%s", prefix, prefix[0] ? "." : "", key);
        if (json_is_object(v)) {
            walk(v, name, all, s);
            continue;
        }
        const size_t n = strlen(key);
        const int compute = n > 7 && strcmp(key + n - 7, "_gflops") == 0;
        const int bw = n > 4 && strcmp(key + n - 4, "_gbs") == 0;
        if ((!compute && !bw) || !json_is_number(v) || !(json_number_value(v) > 0) ||
            s->nroofs >= CPH_REP_MAX_ROOFS)
            continue;
        cph_rep_roof *r = &s->roofs[s->nroofs++];
        snprintf(r->name, sizeof r->name, "%s", name);
        r->compute = compute;
        r->threads = strstr(name, "1core") ? 1 : all;
        r->value = json_number_value(v);
    }
}

void cph_rep_roofs_read(const struct json_t *roofs, int cores, cph_rep_source *s) {
    if (json_is_object(roofs)) walk(roofs, "", cores, s);
}
