/* The fp64 oracle: the definition in convpick/shape.h, written as plainly as
 * possible and accumulated in double.  Deliberately shares no code with the
 * algorithms it judges (not even the weight flip). */
#include "convpick/oracle.h"

#include <math.h>

void cp_oracle_run(const cp_shape *s, cp_flip flip, const float *x, const float *w,
                   const float *bias, double *ref, double *mag) {
    const int64_t P = cp_shape_out_h(s), Q = cp_shape_out_w(s);
    const int64_t cg = s->c / s->groups, kg = s->k / s->groups;
    for (int64_t n = 0; n < s->n; n++)
        for (int64_t k = 0; k < s->k; k++) {
            const int64_t g = k / kg;
            for (int64_t p = 0; p < P; p++)
                for (int64_t q = 0; q < Q; q++) {
                    double acc = bias ? (double)bias[k] : 0.0;
                    double m = bias ? fabs((double)bias[k]) : 0.0;
                    for (int64_t c = 0; c < cg; c++)
                        for (int64_t r = 0; r < s->r; r++) {
                            const int64_t ih = p * s->stride_h - s->pad_top + r * s->dil_h;
                            if (ih < 0 || ih >= s->h) continue;
                            for (int64_t t = 0; t < s->s; t++) {
                                const int64_t iw = q * s->stride_w - s->pad_left + t * s->dil_w;
                                if (iw < 0 || iw >= s->w) continue;
                                const int64_t wr = flip == CP_CONV ? s->r - 1 - r : r;
                                const int64_t wt = flip == CP_CONV ? s->s - 1 - t : t;
                                const double xv =
                                    x[((n * s->c + g * cg + c) * s->h + ih) * s->w + iw];
                                const double wv = w[((k * cg + c) * s->r + wr) * s->s + wt];
                                acc += xv * wv;
                                m += fabs(xv * wv);
                            }
                        }
                    const int64_t o = ((n * s->k + k) * P + p) * Q + q;
                    ref[o] = acc;
                    if (mag) mag[o] = m;
                }
        }
}

cp_error cp_error_measure(const float *y, const double *ref, const double *mag, size_t count) {
    cp_error e = {0.0, 0.0, 0, 0};
    for (size_t i = 0; i < count; i++) {
        const double yi = (double)y[i];
        if (!isfinite(yi) && isfinite(ref[i])) {
            e.nonfinite++;
            e.abs_err = INFINITY;
            e.rel_err = INFINITY;
            e.worst = i;
            continue;
        }
        const double d = fabs(yi - ref[i]);
        if (d > e.abs_err) e.abs_err = d;
        double rel;
        if (mag && mag[i] > 0.0)
            rel = d / mag[i];
        else
            rel = d > 0.0 ? INFINITY : 0.0; /* exact zero expected: any error is total */
        if (rel > e.rel_err) {
            e.rel_err = rel;
            e.worst = i;
        }
    }
    return e;
}
