/* The importer's tensor table (onnx_tensors.h): a growable array with an
 * open-addressing hash index, so that a graph of many thousands of nodes (or
 * a fuzzer's input) is looked up in constant time, not in quadratic time. */
#define _POSIX_C_SOURCE 200809L /* strdup */
#include "harness/model/onnx_tensors.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static size_t hash(const char *s) {
    size_t h = 1469598103934665603u; /* FNV-1a */
    for (; *s; s++) h = (h ^ (unsigned char)*s) * 1099511628211u;
    return h;
}

cph_onnx_tensor *cph_onnx_find(const cph_onnx_tensors *t, const char *name) {
    if (!t->nslot) return NULL;
    for (size_t i = hash(name) & (t->nslot - 1);; i = (i + 1) & (t->nslot - 1)) {
        if (!t->slot[i]) return NULL;
        cph_onnx_tensor *e = &t->v[t->slot[i] - 1];
        if (strcmp(e->name, name) == 0) return e;
    }
}

static int rehash(cph_onnx_tensors *t, size_t nslot) {
    size_t *s = calloc(nslot, sizeof *s);
    if (!s) return -1;
    for (size_t k = 0; k < t->n; k++) {
        size_t i = hash(t->v[k].name) & (nslot - 1);
        while (s[i]) i = (i + 1) & (nslot - 1);
        s[i] = k + 1;
    }
    free(t->slot);
    t->slot = s;
    t->nslot = nslot;
    return 0;
}

cph_onnx_tensor *cph_onnx_put(cph_onnx_tensors *t, const char *name, const cph_onnx_shape *s) {
    cph_onnx_tensor *e = cph_onnx_find(t, name);
    if (e) {
        e->shape = *s;
        e->nval = 0;
        e->is_const = 0;
        return e;
    }
    if (t->n == t->cap) {
        const size_t ncap = t->cap ? 2 * t->cap : 64;
        cph_onnx_tensor *nv = realloc(t->v, ncap * sizeof *nv);
        if (!nv) return NULL;
        t->v = nv;
        t->cap = ncap;
    }
    if (2 * (t->n + 1) > t->nslot && rehash(t, t->nslot ? 2 * t->nslot : 128) != 0) return NULL;
    e = &t->v[t->n];
    memset(e, 0, sizeof *e);
    if (!(e->name = strdup(name))) return NULL;
    e->shape = *s;
    size_t i = hash(name) & (t->nslot - 1);
    while (t->slot[i]) i = (i + 1) & (t->nslot - 1);
    t->slot[i] = ++t->n;
    return e;
}

void cph_onnx_tensors_free(cph_onnx_tensors *t) {
    for (size_t i = 0; i < t->n; i++) free(t->v[i].name);
    free(t->v);
    free(t->slot);
    memset(t, 0, sizeof *t);
}

int cph_onnx_shape_format(const cph_onnx_shape *s, char *buf, size_t cap) {
    int n = snprintf(buf, cap, "%s", s->rank ? "" : "scalar");
    for (int i = 0; i < s->rank && n >= 0; i++)
        n += snprintf(buf + ((size_t)n < cap ? (size_t)n : cap), (size_t)n < cap ? cap - (size_t)n : 0,
                      "%s%lld", i ? "x" : "", (long long)s->d[i]);
    return n;
}
