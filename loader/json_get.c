/* The JSON getters (json_get.h): one message format for every reader. */
#include "loader/json_get.h"

#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

cp_status cpl_jfail(const cpl_jctx *c, cp_status st, const char *fmt, ...) {
    if (c->msg && c->cap) {
        const int n = snprintf(c->msg, c->cap, "%s: ", c->file);
        if (n >= 0 && (size_t)n < c->cap) {
            va_list ap;
            va_start(ap, fmt);
            vsnprintf(c->msg + n, c->cap - (size_t)n, fmt, ap);
            va_end(ap);
        }
    }
    return st;
}

const char *cpl_json_type_name(const json_t *v) {
    if (!v) return "nothing";
    switch (json_typeof(v)) {
    case JSON_OBJECT: return "an object";
    case JSON_ARRAY: return "an array";
    case JSON_STRING: return "a string";
    case JSON_INTEGER: return "an integer";
    case JSON_REAL: return "a real number";
    case JSON_TRUE:
    case JSON_FALSE: return "a boolean";
    case JSON_NULL: return "null";
    }
    return "something else";
}

const char *cpl_jpath(char *buf, size_t cap, const char *where, const char *key) {
    snprintf(buf, cap, "%s%s%s", where, where[0] ? "." : "", key);
    return buf;
}

cp_status cpl_jfield(const cpl_jctx *c, const json_t *obj, const char *where, const char *key,
                     json_type kind, int nullable, json_t **out) {
    static const char *const want[] = {
        [JSON_OBJECT] = "object", [JSON_ARRAY] = "array",   [JSON_STRING] = "string",
        [JSON_INTEGER] = "integer", [JSON_REAL] = "number", [JSON_TRUE] = "boolean",
    };
    json_t *v = json_object_get(obj, key);
    const char *dot = where[0] ? "." : "";
    if (!v) return cpl_jfail(c, CP_EFORMAT, "%s%s%s: missing (expected %s)", where, dot, key, want[kind]);
    int ok;
    switch (kind) {
    case JSON_REAL: ok = json_is_number(v); break;
    case JSON_TRUE: ok = json_is_boolean(v); break;
    default: ok = json_typeof(v) == kind; break;
    }
    if (!ok && !(nullable && json_is_null(v)))
        return cpl_jfail(c, CP_EFORMAT, "%s%s%s: expected %s%s, found %s", where, dot, key,
                         want[kind], nullable ? " or null" : "", cpl_json_type_name(v));
    *out = v;
    return CP_OK;
}

cp_status cpl_jint(const cpl_jctx *c, const json_t *obj, const char *where, const char *key,
                   long long lo, long long hi, long long *out) {
    json_t *v = NULL;
    cp_status st = cpl_jfield(c, obj, where, key, JSON_INTEGER, 0, &v);
    if (st != CP_OK) return st;
    const long long x = (long long)json_integer_value(v);
    if (x < lo || x > hi)
        return cpl_jfail(c, CP_EFORMAT, "%s%s%s: %lld is outside [%lld, %lld]", where,
                         where[0] ? "." : "", key, x, lo, hi);
    *out = x;
    return CP_OK;
}

cp_status cpl_jreal(const cpl_jctx *c, const json_t *obj, const char *where, const char *key,
                    double *out) {
    json_t *v = NULL;
    cp_status st = cpl_jfield(c, obj, where, key, JSON_REAL, 0, &v);
    if (st != CP_OK) return st;
    *out = json_number_value(v);
    if (!isfinite(*out) || *out < 0)
        return cpl_jfail(c, CP_EFORMAT, "%s%s%s: expected a finite number >= 0", where,
                         where[0] ? "." : "", key);
    return CP_OK;
}

cp_status cpl_jstr(const cpl_jctx *c, const json_t *obj, const char *where, const char *key,
                   const char **out) {
    json_t *v = NULL;
    cp_status st = cpl_jfield(c, obj, where, key, JSON_STRING, 0, &v);
    if (st == CP_OK) *out = json_string_value(v);
    return st;
}

cp_status cpl_jtext(const cpl_jctx *c, const json_t *obj, const char *where, const char *key,
                    char *out, size_t cap) {
    const char *s;
    cp_status st = cpl_jstr(c, obj, where, key, &s);
    if (st != CP_OK) return st;
    if (strlen(s) >= cap)
        return cpl_jfail(c, CP_EFORMAT, "%s%s%s: longer than %zu bytes", where,
                         where[0] ? "." : "", key, cap - 1);
    memcpy(out, s, strlen(s) + 1);
    return CP_OK;
}

cp_status cpl_jbool(const cpl_jctx *c, const json_t *obj, const char *where, const char *key,
                    int *out) {
    json_t *v = NULL;
    cp_status st = cpl_jfield(c, obj, where, key, JSON_TRUE, 0, &v);
    if (st == CP_OK) *out = json_is_true(v);
    return st;
}

cp_status cpl_jsamples(const cpl_jctx *c, const json_t *arr, const char *where, double **out,
                       size_t *n) {
    *out = NULL;
    *n = 0;
    if (!json_is_array(arr))
        return cpl_jfail(c, CP_EFORMAT, "%s: expected array, found %s", where,
                         cpl_json_type_name(arr));
    const size_t len = json_array_size(arr);
    if (!len) return CP_OK;
    double *v = malloc(len * sizeof *v);
    if (!v) return cpl_jfail(c, CP_ENOMEM, "%s: out of memory", where);
    for (size_t i = 0; i < len; i++) {
        const json_t *x = json_array_get(arr, i);
        const double t = json_is_number(x) ? json_number_value(x) : -1.0;
        if (!(t >= 0.0) || !isfinite(t)) {
            free(v);
            return cpl_jfail(c, CP_EFORMAT, "%s[%zu]: expected a number >= 0 (seconds), found %s",
                             where, i,
                             json_is_number(x) ? "a negative or non-finite number"
                                               : cpl_json_type_name(x));
        }
        v[i] = t;
    }
    *out = v;
    *n = len;
    return CP_OK;
}
