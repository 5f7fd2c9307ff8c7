/* Helpers every algorithm may use: messages, parameters, the weight flip and
 * the pre-flip prepare. */
#include <ctype.h>
#include <stdarg.h>
#include <stdio.h>
#include <string.h>

#include "algos/core/cpa.h"

cp_cache_sizes cp_cache_sizes_fallback(void) {
    cp_cache_sizes c = {32u * 1024u, 512u * 1024u, 8u * 1024u * 1024u, 64u};
    return c;
}

void cpa_vmessage(char *msg, size_t cap, const char *fmt, va_list ap) {
    if (msg && cap) vsnprintf(msg, cap, fmt, ap);
}

int cpa_refuse(char *why, size_t cap, const char *fmt, ...) {
    va_list ap;
    va_start(ap, fmt);
    cpa_vmessage(why, cap, fmt, ap);
    va_end(ap);
    return 0;
}

cp_status cpa_fail(cp_status st, char *msg, size_t cap, const char *fmt, ...) {
    va_list ap;
    va_start(ap, fmt);
    cpa_vmessage(msg, cap, fmt, ap);
    va_end(ap);
    return st;
}

size_t cpa_preflip_size(const cp_shape *s, cp_flip flip, int skip_1x1) {
    if (flip != CP_CONV || (skip_1x1 && s->r == 1 && s->s == 1)) return 0;
    return cp_shape_weight_elems(s) * sizeof(float);
}

cp_status cpa_preflip_prepare(const cp_shape *s, cp_flip flip, const cp_params *p,
                              const float *w, void *out) {
    (void)p;
    if (flip == CP_CONV)
        cp_weights_flip(s, w, out);
    else
        memcpy(out, w, cp_shape_weight_elems(s) * sizeof(float));
    return CP_OK;
}

void cp_algo_defaults(const cp_algo *a, const cp_shape *s, const cp_cache_sizes *caches,
                      cp_params *p) {
    memset(p, 0, sizeof *p);
    cp_cache_sizes fb = cp_cache_sizes_fallback();
    if (a->defaults) a->defaults(s, caches ? caches : &fb, p);
}

cp_status cp_params_check(const cp_algo *a, const cp_params *p, char *msg, size_t cap) {
    for (int i = 0; i < a->nparams; i++) {
        const cp_param_desc *d = &a->params[i];
        if (p->v[i] < d->min || p->v[i] > d->max)
            return cpa_fail(CP_EINVAL, msg, cap, "%s: parameter %s=%lld is outside [%lld, %lld]",
                            a->name, d->name, (long long)p->v[i], (long long)d->min,
                            (long long)d->max);
    }
    return CP_OK;
}

int cp_algo_param_index(const cp_algo *a, const char *name) {
    for (int i = 0; i < a->nparams; i++)
        if (strcmp(a->params[i].name, name) == 0) return i;
    return -1;
}

int cp_params_format(const cp_algo *a, const cp_params *p, char *buf, size_t cap) {
    int len = 0;
    if (cap) buf[0] = '\0';
    for (int i = 0; i < a->nparams; i++) {
        size_t off = (size_t)len < cap ? (size_t)len : cap;
        int n = snprintf(buf + off, cap - off, "%s%s=%lld", i ? "," : "", a->params[i].name,
                         (long long)p->v[i]);
        if (n < 0) return n;
        len += n;
    }
    return len;
}

void cp_weights_flip(const cp_shape *s, const float *w, float *wf) {
    const int64_t R = s->r, S = s->s;
    const int64_t planes = s->k * (s->c / s->groups);
    for (int64_t kc = 0; kc < planes; kc++) {
        const float *src = w + kc * R * S;
        float *dst = wf + kc * R * S;
        for (int64_t r = 0; r < R; r++)
            for (int64_t q = 0; q < S; q++) dst[r * S + q] = src[(R - 1 - r) * S + (S - 1 - q)];
    }
}

char *cpa_trim(char *s) {
    while (*s && isspace((unsigned char)*s)) s++;
    size_t len = strlen(s);
    while (len && isspace((unsigned char)s[len - 1])) s[--len] = '\0';
    return s;
}
