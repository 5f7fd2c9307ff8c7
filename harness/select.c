/* PLACEHOLDER: the real shape selection (select.h) replaces this file before
 * landing.  Only cph_parse_shape, numbers only (no pad modes), so that
 * `convpick lookup` links and can be tested meanwhile. */
#define _POSIX_C_SOURCE 200809L
#include "select.h"

#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

cp_status cph_parse_shape(const char *spec, const char *ctx, cp_shape *out, char *msg, size_t cap) {
    cp_shape s = cp_shape_init();
    int have_s = 0;
    char buf[512];
    snprintf(buf, sizeof buf, "%s", spec);
    const char *pre = ctx ? ctx : "", *sep = ctx ? ": " : "";
    for (char *save = NULL, *kv = strtok_r(buf, ",", &save); kv; kv = strtok_r(NULL, ",", &save)) {
        char *eq = strchr(kv, '=');
        if (!eq) {
            snprintf(msg, cap, "%s%sshape: '%s' is not key=value", pre, sep, kv);
            return CP_EINVAL;
        }
        *eq = '\0';
        char *end;
        errno = 0;
        long long v = strtoll(eq + 1, &end, 10);
        if (errno || *end || end == eq + 1) {
            snprintf(msg, cap, "%s%sshape: %s: '%s' is not an integer", pre, sep, kv, eq + 1);
            return CP_EINVAL;
        }
        struct { const char *k; int64_t *a, *b, *c, *d; } keys[] = {
            {"n", &s.n, 0, 0, 0}, {"c", &s.c, 0, 0, 0}, {"h", &s.h, 0, 0, 0}, {"w", &s.w, 0, 0, 0},
            {"k", &s.k, 0, 0, 0}, {"r", &s.r, 0, 0, 0}, {"s", &s.s, 0, 0, 0},
            {"stride", &s.stride_h, &s.stride_w, 0, 0}, {"stride_h", &s.stride_h, 0, 0, 0},
            {"stride_w", &s.stride_w, 0, 0, 0},
            {"pad", &s.pad_top, &s.pad_left, &s.pad_bottom, &s.pad_right},
            {"pad_top", &s.pad_top, 0, 0, 0}, {"pad_left", &s.pad_left, 0, 0, 0},
            {"pad_bottom", &s.pad_bottom, 0, 0, 0}, {"pad_right", &s.pad_right, 0, 0, 0},
            {"dilation", &s.dil_h, &s.dil_w, 0, 0}, {"dilation_h", &s.dil_h, 0, 0, 0},
            {"dilation_w", &s.dil_w, 0, 0, 0}, {"groups", &s.groups, 0, 0, 0},
        };
        size_t i = 0;
        for (; i < sizeof keys / sizeof keys[0]; i++)
            if (strcmp(keys[i].k, kv) == 0) break;
        if (i == sizeof keys / sizeof keys[0]) {
            snprintf(msg, cap, "%s%sshape: unknown key '%s'", pre, sep, kv);
            return CP_EINVAL;
        }
        *keys[i].a = v;
        if (keys[i].b) *keys[i].b = v;
        if (keys[i].c) *keys[i].c = v;
        if (keys[i].d) *keys[i].d = v;
        if (strcmp(kv, "s") == 0) have_s = 1;
    }
    if (!have_s) s.s = s.r;
    char why[200];
    if (cp_shape_validate(&s, why, sizeof why) != CP_SHAPE_OK) {
        snprintf(msg, cap, "%s%sshape: %s", pre, sep, why);
        return CP_EINVAL;
    }
    *out = s;
    return CP_OK;
}
