/* A layer as text: "name:", the shape spec and count= (layer_spec.h).
 *
 * count= is taken out of the spec here, so that the shape parser stays about
 * shapes only; the rest of the spec is handed to it unchanged. */
#define _POSIX_C_SOURCE 200809L /* strdup */
#include "harness/select/layer_spec.h"
#include "harness/select/shape_spec.h"
#include "algos/core/cpa.h"

#include <ctype.h>
#include <errno.h>
#include <limits.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#define CTX(ctx) (ctx) ? (ctx) : "", (ctx) ? ": " : ""

static int name_char(char c) {
    return isalnum((unsigned char)c) || c == '_' || c == '.' || c == '-' || c == '/';
}

/* Splits "name: spec" off in place. */
static cp_status split_name(char *text, const char *ctx, char *name, char **spec, char *msg,
                            size_t cap) {
    char *colon = strchr(text, ':');
    name[0] = '\0';
    *spec = text;
    if (!colon) return CP_OK;
    *colon = '\0';
    char *nm = cpa_trim(text);
    if (!*nm) return cpa_fail(CP_EFORMAT, msg, cap, "%s%sempty layer name before ':'", CTX(ctx));
    if (strlen(nm) > CPH_LAYER_NAME_MAX)
        return cpa_fail(CP_EFORMAT, msg, cap,
                        "%s%slayer name '%.20s...' is longer than %d characters", CTX(ctx), nm,
                        CPH_LAYER_NAME_MAX);
    for (const char *c = nm; *c; c++)
        if (!name_char(*c))
            return cpa_fail(CP_EFORMAT, msg, cap,
                            "%s%slayer name '%s' may hold only letters, digits, '_', '.', '-' "
                            "and '/'",
                            CTX(ctx), nm);
    memcpy(name, nm, strlen(nm) + 1);
    *spec = colon + 1;
    return CP_OK;
}

/* Removes the item "count=N" from the comma-separated spec in place. */
static cp_status take_count(char *spec, const char *ctx, int *count, char *msg, size_t cap) {
    *count = 1;
    int seen = 0;
    char *p = spec;
    while (p && *p) {
        char *comma = strchr(p, ',');
        char *item = p;
        while (isspace((unsigned char)*item)) item++;
        if (strncmp(item, "count", 5) == 0) {
            char *q = item + 5;
            while (isspace((unsigned char)*q)) q++;
            if (*q == '=') {
                if (seen) return cpa_fail(CP_EINVAL, msg, cap, "%s%scount: key given twice", CTX(ctx));
                seen = 1;
                char val[32];
                size_t vl = (size_t)((comma ? comma : q + strlen(q)) - (q + 1));
                snprintf(val, sizeof val, "%.*s", (int)(vl < sizeof val ? vl : sizeof val - 1), q + 1);
                char *v = cpa_trim(val), *end = NULL;
                errno = 0;
                long long n = isdigit((unsigned char)*v) ? strtoll(v, &end, 10) : 0;
                if (!end || *end || errno || n < 1 || n > 1000000)
                    return cpa_fail(CP_EINVAL, msg, cap,
                                    "%s%scount=%s: expected an integer in [1, 1000000]", CTX(ctx), v);
                *count = (int)n;
                /* Drop the item and its separator. */
                if (comma) {
                    memmove(p, comma + 1, strlen(comma + 1) + 1);
                    continue; /* p now holds the next item */
                }
                if (p > spec) p[-1] = '\0'; /* the last item: cut with its ',' */
                *p = '\0';
                break;
            }
        }
        p = comma ? comma + 1 : NULL;
    }
    return CP_OK;
}

cp_status cph_parse_layer(const char *text, const char *ctx, char *name, int *count,
                          cp_shape *out, char *msg, size_t cap) {
    char *buf = strdup(text ? text : "");
    if (!buf) return cpa_fail(CP_ENOMEM, msg, cap, "out of memory");
    char *spec = NULL;
    cp_status st = split_name(buf, ctx, name, &spec, msg, cap);
    if (st == CP_OK) st = take_count(spec, ctx, count, msg, cap);
    if (st == CP_OK) st = cph_parse_shape(spec, ctx, out, msg, cap);
    free(buf);
    return st;
}
