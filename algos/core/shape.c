/* Shape arithmetic and validation (rules in convpick/shape.h). */
#include "convpick/shape.h"

#include <stdarg.h>
#include <stdio.h>
#include <string.h>

#include "algos/core/cpa.h"

cp_shape cp_shape_init(void) {
    cp_shape s;
    memset(&s, 0, sizeof s);
    s.n = 1;
    s.stride_h = s.stride_w = 1;
    s.dil_h = s.dil_w = 1;
    s.groups = 1;
    return s;
}

static int64_t out_dim(int64_t in, int64_t pa, int64_t pb, int64_t dil, int64_t ker, int64_t st) {
    int64_t span = in + pa + pb - dil * (ker - 1) - 1;
    if (st < 1) return 0;
    if (span < 0) return 0; /* floor of a negative number over a positive: no output */
    return span / st + 1;
}

int64_t cp_shape_out_h(const cp_shape *s) {
    return out_dim(s->h, s->pad_top, s->pad_bottom, s->dil_h, s->r, s->stride_h);
}

int64_t cp_shape_out_w(const cp_shape *s) {
    return out_dim(s->w, s->pad_left, s->pad_right, s->dil_w, s->s, s->stride_w);
}

double cp_shape_flops(const cp_shape *s) {
    if (s->groups < 1) return 0.0;
    return 2.0 * (double)s->n * (double)s->k * (double)(s->c / s->groups) * (double)s->r *
           (double)s->s * (double)cp_shape_out_h(s) * (double)cp_shape_out_w(s);
}

size_t cp_shape_input_elems(const cp_shape *s) {
    return (size_t)s->n * (size_t)s->c * (size_t)s->h * (size_t)s->w;
}

size_t cp_shape_weight_elems(const cp_shape *s) {
    return (size_t)s->k * (size_t)(s->c / s->groups) * (size_t)s->r * (size_t)s->s;
}

size_t cp_shape_output_elems(const cp_shape *s) {
    return (size_t)s->n * (size_t)s->k * (size_t)cp_shape_out_h(s) * (size_t)cp_shape_out_w(s);
}

static cp_shape_fault fault(cp_shape_fault f, char *msg, size_t cap, const char *fmt, ...)
    __attribute__((format(printf, 4, 5)));
/* cpa_fail with the shape's own return type (which fault class). */
static cp_shape_fault fault(cp_shape_fault f, char *msg, size_t cap, const char *fmt, ...) {
    va_list ap;
    va_start(ap, fmt);
    cpa_vmessage(msg, cap, fmt, ap);
    va_end(ap);
    return f;
}

/* Multiplies a running product of factors, each >= 1, failing on overflow of
 * size_t.  Byte sizes include the float size so that malloc sizes are safe. */
static int mul_ok(size_t *acc, int64_t f) {
    size_t uf = (size_t)f;
    if (uf != 0 && *acc > SIZE_MAX / uf) return 0;
    *acc *= uf;
    return 1;
}

static int product_fits(const int64_t *f, int nf) {
    size_t acc = sizeof(double); /* the oracle keeps doubles: the widest element */
    for (int i = 0; i < nf; i++)
        if (!mul_ok(&acc, f[i])) return 0;
    return 1;
}

cp_shape_fault cp_shape_validate(const cp_shape *s, char *msg, size_t cap) {
    if (msg && cap) msg[0] = '\0';
    const struct { const char *name; int64_t v; } pos[] = {
        {"n", s->n}, {"c", s->c}, {"h", s->h}, {"w", s->w}, {"k", s->k}, {"r", s->r},
        {"s", s->s}, {"stride_h", s->stride_h}, {"stride_w", s->stride_w},
        {"dilation_h", s->dil_h}, {"dilation_w", s->dil_w}, {"groups", s->groups},
    };
    for (size_t i = 0; i < sizeof pos / sizeof pos[0]; i++)
        if (pos[i].v < 1)
            return fault(CP_SHAPE_NONPOSITIVE, msg, cap, "%s=%lld: must be at least 1",
                         pos[i].name, (long long)pos[i].v);
    const struct { const char *name; int64_t v; } pads[] = {
        {"pad_top", s->pad_top}, {"pad_left", s->pad_left},
        {"pad_bottom", s->pad_bottom}, {"pad_right", s->pad_right},
    };
    for (size_t i = 0; i < 4; i++)
        if (pads[i].v < 0)
            return fault(CP_SHAPE_NONPOSITIVE, msg, cap, "%s=%lld: padding cannot be negative",
                         pads[i].name, (long long)pads[i].v);
    if (s->act_layout != CP_ACT_NCHW || s->wt_layout != CP_WT_KCRS)
        return fault(CP_SHAPE_LAYOUT, msg, cap,
                     "layout: only NCHW activations and KCRS weights are implemented");
    if (s->c % s->groups != 0)
        return fault(CP_SHAPE_GROUPS, msg, cap, "c=%lld is not divisible by groups=%lld",
                     (long long)s->c, (long long)s->groups);
    if (s->k % s->groups != 0)
        return fault(CP_SHAPE_GROUPS, msg, cap, "k=%lld is not divisible by groups=%lld",
                     (long long)s->k, (long long)s->groups);
    /* Guard the arithmetic below: every field must be small enough that sums
     * and products of two fields stay far from int64 overflow. */
    const int64_t big = (int64_t)1 << 31;
    const struct { const char *name; int64_t v; } all[] = {
        {"n", s->n}, {"c", s->c}, {"h", s->h}, {"w", s->w}, {"k", s->k}, {"r", s->r},
        {"s", s->s}, {"stride_h", s->stride_h}, {"stride_w", s->stride_w},
        {"dilation_h", s->dil_h}, {"dilation_w", s->dil_w}, {"groups", s->groups},
        {"pad_top", s->pad_top}, {"pad_left", s->pad_left}, {"pad_bottom", s->pad_bottom},
        {"pad_right", s->pad_right},
    };
    for (size_t i = 0; i < sizeof all / sizeof all[0]; i++)
        if (all[i].v >= big)
            return fault(CP_SHAPE_OVERFLOW, msg, cap, "%s=%lld: sizes must stay below 2^31",
                         all[i].name, (long long)all[i].v);
    const int64_t eh = s->dil_h * (s->r - 1), ew = s->dil_w * (s->s - 1);
    const struct { const char *name; int64_t v, lim; } big_pads[] = {
        {"pad_top", s->pad_top, eh}, {"pad_bottom", s->pad_bottom, eh},
        {"pad_left", s->pad_left, ew}, {"pad_right", s->pad_right, ew},
    };
    for (size_t i = 0; i < 4; i++)
        if (big_pads[i].v > big_pads[i].lim)
            return fault(CP_SHAPE_PAD_TOO_BIG, msg, cap,
                         "%s=%lld is larger than dilation*(kernel-1)=%lld: some outputs "
                         "would see only padding",
                         big_pads[i].name, (long long)big_pads[i].v, (long long)big_pads[i].lim);
    const int64_t p = cp_shape_out_h(s), q = cp_shape_out_w(s);
    if (p < 1)
        return fault(CP_SHAPE_NO_OUTPUT, msg, cap,
                     "output height is %lld: h=%lld + pads %lld+%lld is smaller than the "
                     "dilated kernel height %lld",
                     (long long)(p < 0 ? 0 : p), (long long)s->h, (long long)s->pad_top,
                     (long long)s->pad_bottom, (long long)(eh + 1));
    if (q < 1)
        return fault(CP_SHAPE_NO_OUTPUT, msg, cap,
                     "output width is %lld: w=%lld + pads %lld+%lld is smaller than the "
                     "dilated kernel width %lld",
                     (long long)(q < 0 ? 0 : q), (long long)s->w, (long long)s->pad_left,
                     (long long)s->pad_right, (long long)(ew + 1));
    const int64_t in[] = {s->n, s->c, s->h, s->w};
    const int64_t wt[] = {s->k, s->c / s->groups, s->r, s->s};
    const int64_t out[] = {s->n, s->k, p, q};
    /* im2col's column matrix: (C/g * R * S) x (P * Q) per group. */
    const int64_t col[] = {s->c, s->r, s->s, p, q};
    if (!product_fits(in, 4))
        return fault(CP_SHAPE_OVERFLOW, msg, cap, "input n*c*h*w overflows size_t");
    if (!product_fits(wt, 4))
        return fault(CP_SHAPE_OVERFLOW, msg, cap, "weights k*(c/groups)*r*s overflow size_t");
    if (!product_fits(out, 4))
        return fault(CP_SHAPE_OVERFLOW, msg, cap, "output n*k*p*q overflows size_t");
    if (!product_fits(col, 5))
        return fault(CP_SHAPE_OVERFLOW, msg, cap, "lowered matrix c*r*s*p*q overflows size_t");
    return CP_SHAPE_OK;
}

/* Fields outside [1, 2^31) make the padding formulas divide by zero or
 * overflow; such a shape gets zero pads here and is refused by
 * cp_shape_validate, which names the field. */
static int pad_args_ok(int64_t in, int64_t st, int64_t dil, int64_t ker) {
    const int64_t big = (int64_t)1 << 31;
    return in >= 1 && in < big && st >= 1 && st < big && dil >= 1 && dil < big && ker >= 1 &&
           ker < big;
}

static void same_axis(int64_t in, int64_t st, int64_t dil, int64_t ker, int64_t *a, int64_t *b) {
    if (!pad_args_ok(in, st, dil, ker)) {
        *a = *b = 0;
        return;
    }
    int64_t out = (in + st - 1) / st;
    int64_t total = (out - 1) * st + dil * (ker - 1) + 1 - in;
    if (total < 0) total = 0;
    *a = total / 2;
    *b = total - *a;
}

void cp_shape_set_padding(cp_shape *s, cp_pad_mode flip) {
    switch (flip) {
    case CP_PAD_VALID:
        s->pad_top = s->pad_left = s->pad_bottom = s->pad_right = 0;
        break;
    case CP_PAD_FULL:
        s->pad_top = s->pad_bottom = pad_args_ok(1, 1, s->dil_h, s->r) ? s->dil_h * (s->r - 1) : 0;
        s->pad_left = s->pad_right = pad_args_ok(1, 1, s->dil_w, s->s) ? s->dil_w * (s->s - 1) : 0;
        break;
    case CP_PAD_SAME:
        same_axis(s->h, s->stride_h, s->dil_h, s->r, &s->pad_top, &s->pad_bottom);
        same_axis(s->w, s->stride_w, s->dil_w, s->s, &s->pad_left, &s->pad_right);
        break;
    }
}

int cp_shape_format(const cp_shape *s, char *buf, size_t cap) {
    return snprintf(buf, cap,
                    "n=%lld,c=%lld,h=%lld,w=%lld,k=%lld,r=%lld,s=%lld,stride_h=%lld,stride_w=%lld,"
                    "pad_top=%lld,pad_left=%lld,pad_bottom=%lld,pad_right=%lld,"
                    "dilation_h=%lld,dilation_w=%lld,groups=%lld",
                    (long long)s->n, (long long)s->c, (long long)s->h, (long long)s->w,
                    (long long)s->k, (long long)s->r, (long long)s->s, (long long)s->stride_h,
                    (long long)s->stride_w, (long long)s->pad_top, (long long)s->pad_left,
                    (long long)s->pad_bottom, (long long)s->pad_right, (long long)s->dil_h,
                    (long long)s->dil_w, (long long)s->groups);
}

int cp_shape_equal(const cp_shape *a, const cp_shape *b) {
    return a->n == b->n && a->c == b->c && a->h == b->h && a->w == b->w && a->k == b->k &&
           a->r == b->r && a->s == b->s && a->stride_h == b->stride_h &&
           a->stride_w == b->stride_w && a->pad_top == b->pad_top &&
           a->pad_left == b->pad_left && a->pad_bottom == b->pad_bottom &&
           a->pad_right == b->pad_right && a->dil_h == b->dil_h && a->dil_w == b->dil_w &&
           a->groups == b->groups && a->act_layout == b->act_layout &&
           a->wt_layout == b->wt_layout;
}
