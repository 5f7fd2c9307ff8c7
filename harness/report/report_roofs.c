/* The roofs a probe or bench file recorded (report.h), read leniently: the
 * machine/ code adds roofs (vector widths, thread counts) over time, and any
 * number named *gflops or *gbs is one, wherever it sits in the object: in
 * nested objects (names joined with '.') and in arrays of objects (named by
 * the element's "isa", "name" or "width" when it has one, else its index).
 * A value already read under another name at the same thread count (the
 * peak and the widest width's peak) is kept once, under its first name. */
#include <jansson.h>
#include <stdio.h>
#include <string.h>

#include "harness/report/report.h"

static int ends_with(const char *s, const char *tail) {
    const size_t n = strlen(s), t = strlen(tail);
    return n >= t && strcmp(s + n - t, tail) == 0;
}

static void walk(const json_t *o, const char *prefix, int threads, cph_rep_source *s);

/* An array's object elements, each named for people. */
static void walk_array(const json_t *a, const char *prefix, int threads, cph_rep_source *s) {
    for (size_t i = 0; i < json_array_size(a); i++) {
        const json_t *e = json_array_get(a, i);
        if (!json_is_object(e)) continue;
        char name[64];
        const json_t *id = json_object_get(e, "isa");
        if (!json_is_string(id)) id = json_object_get(e, "name");
        int n;
        if (json_is_string(id))
            n = snprintf(name, sizeof name, "%s.%s", prefix, json_string_value(id));
        else if (json_is_integer(json_object_get(e, "width")))
            n = snprintf(name, sizeof name, "%s.%lld-bit", prefix,
                         (long long)json_integer_value(json_object_get(e, "width")));
        else
            n = snprintf(name, sizeof name, "%s[%zu]", prefix, i);
        if (n > 0) walk(e, name, threads, s); /* a longer name is cut, still shown */
    }
}

static void walk(const json_t *o, const char *prefix, int threads, cph_rep_source *s) {
    const json_t *cu = json_object_get(o, "cores_used");
    const json_t *th = json_object_get(o, "threads");
    if (json_is_integer(th) && json_integer_value(th) > 0) threads = (int)json_integer_value(th);
    const int all = json_is_integer(cu) && json_integer_value(cu) > 0
                        ? (int)json_integer_value(cu) : threads;
    const int own = json_is_integer(th) && json_integer_value(th) > 0;
    const char *key;
    const json_t *v;
    json_object_foreach((json_t *)o, key, v) {
        char name[64];
        snprintf(name, sizeof name, "%s%s%s", prefix, prefix[0] ? "." : "", key);
        if (json_is_object(v)) {
            walk(v, name, all, s);
            continue;
        }
        if (json_is_array(v)) {
            walk_array(v, name, all, s);
            continue;
        }
        const int compute = ends_with(key, "gflops");
        const int bw = ends_with(key, "gbs");
        if ((!compute && !bw) || !json_is_number(v) || !(json_number_value(v) > 0) ||
            s->nroofs >= CPH_REP_MAX_ROOFS)
            continue;
        int dup = 0; /* the same roof under two names (the peak and its width's) */
        for (int k = 0; k < s->nroofs; k++)
            dup |= s->roofs[k].compute == compute && s->roofs[k].value == json_number_value(v) &&
                   s->roofs[k].threads == (own ? threads : strstr(name, "1core") ? 1 : all);
        if (dup) continue;
        cph_rep_roof *r = &s->roofs[s->nroofs++];
        snprintf(r->name, sizeof r->name, "%s", name);
        r->compute = compute;
        r->threads = own ? threads : strstr(name, "1core") ? 1 : all;
        r->value = json_number_value(v);
    }
}

void cph_rep_roofs_read(const struct json_t *roofs, int cores, cph_rep_source *s) {
    if (json_is_object(roofs)) walk(roofs, "", cores, s);
}
