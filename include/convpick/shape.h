/* Layer shapes: the vocabulary every other part of convpick speaks.
 *
 * A shape describes one 2-D convolution layer:
 *   input  x: N x C x H x W          (activations, NCHW, float32)
 *   weight w: K x (C/groups) x R x S (KCRS, float32)
 *   output y: N x K x P x Q          (NCHW, float32)
 * with stride, asymmetric zero padding, dilation and groups.
 *
 * Output size (common practice, no source):
 *   P = floor((H + pad_top + pad_bottom - dil_h*(R-1) - 1) / stride_h) + 1
 *   Q = floor((W + pad_left + pad_right - dil_w*(S-1) - 1) / stride_w) + 1
 * FLOP count (direct-equivalent, one multiply-add = 2 FLOPs; common practice):
 *   2 * N * K * (C/groups) * R * S * P * Q
 *
 * Fields are signed so that a negative value given by a user can be caught by
 * cp_shape_validate() rather than wrapped into a huge unsigned size. */
#ifndef CONVPICK_SHAPE_H
#define CONVPICK_SHAPE_H

#include <stddef.h>
#include <stdint.h>

#include "convpick/status.h"

/* What is computed.  Both produce y[n,k,p,q] = sum over c,r,s of
 *   x[n, g*C/groups + c, p*stride_h - pad_top + r*dil_h, q*stride_w - pad_left + s*dil_w] * w'[k,c,r,s]
 * where w' = w for CP_XCORR and w' = w flipped along both spatial axes
 * (w'[k,c,r,s] = w[k,c,R-1-r,S-1-s]) for CP_CONV. */
typedef enum cp_flip {
    CP_XCORR = 0, /* cross-correlation: what network convolution layers compute */
    CP_CONV = 1   /* true convolution: the kernel flipped along both spatial axes */
} cp_flip;

/* Memory layouts.  Only the first of each is implemented today; the field
 * exists so that more layouts can be added without changing the shape type. */
typedef enum cp_act_layout { CP_ACT_NCHW = 0 } cp_act_layout;
typedef enum cp_wt_layout { CP_WT_KCRS = 0 } cp_wt_layout;

typedef struct cp_shape {
    int64_t n, c, h, w;           /* batch, input channels, input height, width */
    int64_t k, r, s;              /* output channels, kernel height, width */
    int64_t stride_h, stride_w;   /* >= 1 */
    int64_t pad_top, pad_left, pad_bottom, pad_right; /* >= 0, zero padding */
    int64_t dil_h, dil_w;         /* >= 1; 1 = no dilation */
    int64_t groups;               /* >= 1; divides c and k; groups == c is depthwise */
    cp_act_layout act_layout;     /* CP_ACT_NCHW (0) */
    cp_wt_layout wt_layout;       /* CP_WT_KCRS (0) */
} cp_shape;

/* Padding given as a mode instead of four numbers (see cp_shape_set_padding). */
typedef enum cp_pad_mode {
    CP_PAD_VALID = 0, /* no padding: only positions where the kernel fits */
    CP_PAD_SAME,      /* P = ceil(H / stride_h), Q = ceil(W / stride_w) */
    CP_PAD_FULL       /* every position where kernel and input overlap at all */
} cp_pad_mode;

/* The classes of invalid shape; each has its own message. */
typedef enum cp_shape_fault {
    CP_SHAPE_OK = 0,
    CP_SHAPE_NONPOSITIVE, /* a size, stride, dilation or groups is < 1, or a pad < 0 */
    CP_SHAPE_GROUPS,      /* c or k not divisible by groups */
    CP_SHAPE_NO_OUTPUT,   /* P or Q below 1: the dilated kernel does not fit */
    CP_SHAPE_PAD_TOO_BIG, /* a pad larger than dil*(kernel-1): some output would see only padding */
    CP_SHAPE_OVERFLOW,    /* an element count or byte size does not fit size_t */
    CP_SHAPE_LAYOUT       /* a layout this build does not implement */
} cp_shape_fault;

/* A shape with every field at its neutral value (stride 1, dilation 1,
 * groups 1, no padding, batch 1) and all sizes 0: fill in the sizes. */
cp_shape cp_shape_init(void);

/* Output height and width (formula above).  Meaningful only for a shape that
 * passes cp_shape_validate (otherwise may be <= 0). */
int64_t cp_shape_out_h(const cp_shape *s);
int64_t cp_shape_out_w(const cp_shape *s);

/* Direct-equivalent FLOP count, as a double so that it never overflows. */
double cp_shape_flops(const cp_shape *s);

/* Element counts of the three tensors (valid shapes only). */
size_t cp_shape_input_elems(const cp_shape *s);
size_t cp_shape_weight_elems(const cp_shape *s);
size_t cp_shape_output_elems(const cp_shape *s);

/* Checks every rule above.  Returns CP_SHAPE_OK, or the first fault found with
 * a one-line message naming the field(s) and value(s) in msg (may be NULL). */
cp_shape_fault cp_shape_validate(const cp_shape *s, char *msg, size_t cap);

/* Sets the four pads from a mode, given n,c,h,w,k,r,s,stride,dilation.
 *   valid: all pads 0.
 *   full:  pad = dil*(kernel-1) on every side.
 *   same:  the total pad along an axis is max((ceil(H/stride)-1)*stride + dil*(R-1) + 1 - H, 0),
 *          so that P = ceil(H / stride).  When the total is odd (an even kernel at
 *          stride 1, or many stride > 1 cases) the extra row goes to the bottom and the
 *          extra column to the right: top = total/2, bottom = total - top.  With
 *          stride > 1 the total may be smaller than dil*(R-1): only what is needed
 *          to reach ceil(H/stride) outputs is added.  (Common practice, no source.) */
void cp_shape_set_padding(cp_shape *s, cp_pad_mode flip);

/* Writes a canonical one-line key=value form of the shape ("n=1,c=64,...") that
 * the CLI's --shape parser reads back to an equal shape.  Returns the length
 * that the full text needs (like snprintf). */
int cp_shape_format(const cp_shape *s, char *buf, size_t cap);

/* 1 when every field of a and b is equal. */
int cp_shape_equal(const cp_shape *a, const cp_shape *b);

#endif
