/* The shape and flipped fields (codec.h). */
#include <limits.h>
#include <stdio.h>
#include <string.h>

#include "loader/codec.h"

const char *const cpl_shape_keys[CPL_SHAPE_NKEYS] = {
    "n",      "c",       "h",        "w",          "k",         "r",          "s",          "stride_h",
    "stride_w", "pad_top", "pad_left", "pad_bottom", "pad_right", "dilation_h", "dilation_w", "groups",
};

void cpl_shape_fields(cp_shape *s, int64_t *out[CPL_SHAPE_NKEYS]) {
    int64_t *f[CPL_SHAPE_NKEYS] = {&s->n,        &s->c,        &s->h,        &s->w,
                                   &s->k,        &s->r,        &s->s,        &s->stride_h,
                                   &s->stride_w, &s->pad_top,  &s->pad_left, &s->pad_bottom,
                                   &s->pad_right, &s->dil_h,   &s->dil_w,    &s->groups};
    memcpy(out, f, sizeof f);
}

cp_status cpl_decode_shape(const cpl_jctx *c, const json_t *obj, const char *where, cp_shape *out) {
    json_t *sh = NULL;
    cp_status st = cpl_jfield(c, obj, where, "shape", JSON_OBJECT, 0, &sh);
    if (st != CP_OK) return st;
    char sub[160];
    cpl_jpath(sub, sizeof sub, where, "shape");
    *out = cp_shape_init();
    int64_t *dst[CPL_SHAPE_NKEYS];
    cpl_shape_fields(out, dst);
    for (size_t i = 0; i < CPL_SHAPE_NKEYS; i++) {
        long long x;
        if ((st = cpl_jint(c, sh, sub, cpl_shape_keys[i], LLONG_MIN, LLONG_MAX, &x)) != CP_OK)
            return st;
        *dst[i] = (int64_t)x;
    }
    const char *layout;
    if ((st = cpl_jstr(c, sh, sub, "layout", &layout)) != CP_OK) return st;
    if (strcmp(layout, CPL_LAYOUT) != 0)
        return cpl_jfail(c, CP_EFORMAT, "%s.layout: '%s' is not a layout this build has (%s)",
                         sub, layout, CPL_LAYOUT);
    char why[200];
    if (cp_shape_validate(out, why, sizeof why) != CP_SHAPE_OK)
        return cpl_jfail(c, CP_EFORMAT, "%s: invalid shape: %s", sub, why);
    return CP_OK;
}

cp_status cpl_decode_flipped(const cpl_jctx *c, const json_t *obj, const char *where,
                             cp_flip *out) {
    int flipped = 0;
    cp_status st = cpl_jbool(c, obj, where, "flipped", &flipped);
    if (st == CP_OK) *out = flipped ? CP_CONV : CP_XCORR;
    return st;
}
