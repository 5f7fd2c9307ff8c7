/* The layer list: shapes with their names and a count (layers.h). */
#define _POSIX_C_SOURCE 200809L /* strdup */
#include "harness/select/layers.h"

#include <limits.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* 1 when name is one of the comma-separated items of list. */
static int has_name(const char *list, const char *name) {
    const size_t n = strlen(name);
    for (const char *p = list; p; p = strchr(p, ',') ? strchr(p, ',') + 1 : NULL)
        if (strncmp(p, name, n) == 0 && (p[n] == ',' || p[n] == '\0')) return 1;
    return 0;
}

static cp_status join_name(cph_layer *e, const char *name) {
    if (!name || !*name || has_name(e->names ? e->names : e->name, name)) return CP_OK;
    const char *old = e->names ? e->names : e->name;
    const size_t len = strlen(old) + 1 + strlen(name) + 1;
    char *nv = malloc(len);
    if (!nv) return CP_ENOMEM;
    snprintf(nv, len, "%s,%s", old, name);
    free(e->names);
    e->names = nv;
    return CP_OK;
}

cp_status cph_layers_add(cph_layer_list *l, const char *name, const cp_shape *s, int count) {
    if (count < 1) return CP_EINVAL;
    for (size_t i = 0; i < l->n; i++)
        if (cp_shape_equal(&l->v[i].shape, s)) {
            if (l->v[i].count > INT_MAX - count) return CP_EINVAL;
            cp_status st = join_name(&l->v[i], name);
            if (st != CP_OK) return st;
            l->v[i].count += count;
            return CP_OK;
        }
    if (l->n == l->cap) {
        size_t ncap = l->cap ? 2 * l->cap : 16;
        cph_layer *nv = realloc(l->v, ncap * sizeof *nv);
        if (!nv) return CP_ENOMEM;
        l->v = nv;
        l->cap = ncap;
    }
    cph_layer *e = &l->v[l->n++];
    memset(e, 0, sizeof *e);
    snprintf(e->name, sizeof e->name, "%s", name ? name : "");
    if (!e->name[0]) snprintf(e->name, sizeof e->name, "layer%zu", l->n);
    if (name && strlen(name) >= sizeof e->name && !(e->names = strdup(name))) {
        l->n--;
        return CP_ENOMEM;
    }
    e->shape = *s;
    e->count = count;
    return CP_OK;
}

cp_status cph_layers_add_names(cph_layer_list *l, const char *names, const cp_shape *s, int count) {
    const char *comma = strchr(names, ',');
    char *first = strndup(names, comma ? (size_t)(comma - names) : strlen(names));
    if (!first) return CP_ENOMEM;
    cp_status st = cph_layers_add(l, first, s, count);
    free(first);
    for (size_t i = 0; i < l->n && st == CP_OK && comma; i++)
        if (cp_shape_equal(&l->v[i].shape, s)) {
            /* The other names join the layer that now holds the shape. */
            for (const char *p = comma + 1; p && st == CP_OK;) {
                const char *e = strchr(p, ',');
                char *one = strndup(p, e ? (size_t)(e - p) : strlen(p));
                st = one ? join_name(&l->v[i], one) : CP_ENOMEM;
                free(one);
                p = e ? e + 1 : NULL;
            }
            break;
        }
    return st;
}

const char *cph_layer_names(const cph_layer *L) { return L->names ? L->names : L->name; }

long long cph_layers_total(const cph_layer_list *l) {
    long long t = 0;
    for (size_t i = 0; i < l->n; i++) t += l->v[i].count;
    return t;
}

void cph_layers_free(cph_layer_list *l) {
    for (size_t i = 0; i < l->n; i++) free(l->v[i].names);
    free(l->v);
    l->v = NULL;
    l->n = l->cap = 0;
}
