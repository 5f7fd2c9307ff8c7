/* The one set of JSON getters every reader of convpick's formats uses (the
 * table loader, the table writer when it reopens a table, the results reader).
 * Each fetches one field and, when it is missing or of the wrong kind, writes
 * one message naming the file and the field's path in the document:
 *   "t.json: entries[3].shape.k: expected integer, found a string".
 * "where" is the path of the object holding the field ("" at the top).
 * Part of libconvpick; not installed. */
#ifndef CONVPICK_JSON_GET_H
#define CONVPICK_JSON_GET_H

#include <jansson.h>
#include <stddef.h>

#include "convpick/status.h"

typedef struct cpl_jctx {
    const char *file; /* stands for the document in messages */
    char *msg;
    size_t cap;
} cpl_jctx;

/* Writes "file: " + the formatted text to c->msg and returns st. */
cp_status cpl_jfail(const cpl_jctx *c, cp_status st, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));

/* "an object", "an integer", ... ("nothing" for NULL). */
const char *cpl_json_type_name(const json_t *v);

/* obj[key] of the given kind, else a message naming where.key.  kind:
 * JSON_OBJECT, JSON_ARRAY, JSON_STRING, JSON_INTEGER, JSON_REAL (any number)
 * or JSON_TRUE (a boolean).  nullable: null is accepted (and returned). */
cp_status cpl_jfield(const cpl_jctx *c, const json_t *obj, const char *where, const char *key,
                     json_type kind, int nullable, json_t **out);
/* An integer in [lo, hi]. */
cp_status cpl_jint(const cpl_jctx *c, const json_t *obj, const char *where, const char *key,
                   long long lo, long long hi, long long *out);
/* A finite number >= 0. */
cp_status cpl_jreal(const cpl_jctx *c, const json_t *obj, const char *where, const char *key,
                    double *out);
/* A string (borrowed from obj). */
cp_status cpl_jstr(const cpl_jctx *c, const json_t *obj, const char *where, const char *key,
                   const char **out);
/* A string copied into out[cap]; longer is an error. */
cp_status cpl_jtext(const cpl_jctx *c, const json_t *obj, const char *where, const char *key,
                    char *out, size_t cap);
cp_status cpl_jbool(const cpl_jctx *c, const json_t *obj, const char *where, const char *key,
                    int *out);
/* An array of finite numbers >= 0 (seconds) -> a new malloc'ed copy (NULL
 * when empty); where names the array itself. */
cp_status cpl_jsamples(const cpl_jctx *c, const json_t *arr, const char *where, double **out,
                       size_t *n);

/* where + "." + key (or key alone at the top) into buf[cap]. */
const char *cpl_jpath(char *buf, size_t cap, const char *where, const char *key);

#endif
