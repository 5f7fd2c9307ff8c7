/* The shape spec: one layer as text, the form --shape and shape files use.
 *
 * Syntax (ours): comma-separated key=value pairs, e.g.
 *   n=1,c=64,h=56,w=56,k=64,r=3,s=3,stride=1,pad=1
 * keys: n c h w k r s; stride (both) stride_h stride_w; pad=NUMBER (all four)
 * or pad=valid|same|full; pad_h pad_w (top+bottom / left+right) pad_top
 * pad_left pad_bottom pad_right; dilation (both) dilation_h dilation_w; groups.
 * Missing n, stride, dilation and groups default to 1, pads to 0; c,h,w,k,r
 * are required, s defaults to r.  A pad mode is applied after all numbers are
 * read, whatever the order of keys. */
#ifndef CONVPICK_SHAPE_SPEC_H
#define CONVPICK_SHAPE_SPEC_H

#include <stddef.h>

#include "convpick/convpick.h"

/* Parses one spec.  On error returns CP_EINVAL with a message naming the key
 * (and, when ctx is not NULL, prefixed by ctx such as "file.txt:12"). */
cp_status cph_parse_shape(const char *spec, const char *ctx, cp_shape *out, char *msg, size_t cap);

/* A short spec that cph_parse_shape reads back to an equal shape: keys at
 * their defaults are left out and equal pairs merged ("stride=2,pad=3").
 * Returns the length the full text needs (like snprintf). */
int cph_shape_format_short(const cp_shape *s, char *buf, size_t cap);

#endif
