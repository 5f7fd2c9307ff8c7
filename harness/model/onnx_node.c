/* The importer's helpers for one node: its attributes, inputs and outputs,
 * its error line, and constant tensors (onnx_impl.h). */
#include "harness/model/onnx_impl.h"
#include "algos/core/cpa.h"

#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <string.h>

static const char *str(const char *s) { return s ? s : ""; }

cp_status cph_onnx_node_fail(const cph_onnx_ctx *c, const cph_onnx_node *nd, const char *fmt, ...) {
    char what[512];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(what, sizeof what, fmt, ap);
    va_end(ap);
    const char *name = str(nd->name)[0] ? nd->name : (nd->n_output ? str(nd->output[0]) : "");
    return cpa_fail(CP_EFORMAT, c->msg, c->cap, "%s: node '%.100s' (%.40s): %s", c->file, name,
                    str(nd->op_type), what);
}

const Cponnx__AttributeProto *cph_onnx_attr(const cph_onnx_node *nd, const char *name) {
    for (size_t i = 0; i < nd->n_attribute; i++)
        if (strcmp(str(nd->attribute[i]->name), name) == 0) return nd->attribute[i];
    return NULL;
}

cp_status cph_onnx_attr_int(const cph_onnx_ctx *c, const cph_onnx_node *nd, const char *name,
                            int64_t def, int64_t *out) {
    const Cponnx__AttributeProto *a = cph_onnx_attr(nd, name);
    *out = def;
    if (!a) return CP_OK;
    if (!a->has_i || (a->has_type && a->type != CPONNX__ATTRIBUTE_PROTO__ATTRIBUTE_TYPE__INT))
        return cph_onnx_node_fail(c, nd, "attribute '%s' is not an integer", name);
    *out = a->i;
    return CP_OK;
}

cp_status cph_onnx_attr_ints(const cph_onnx_ctx *c, const cph_onnx_node *nd, const char *name,
                             size_t n, int64_t *out, int *given) {
    const Cponnx__AttributeProto *a = cph_onnx_attr(nd, name);
    *given = 0;
    if (!a) return CP_OK;
    if (a->has_type && a->type != CPONNX__ATTRIBUTE_PROTO__ATTRIBUTE_TYPE__INTS)
        return cph_onnx_node_fail(c, nd, "attribute '%s' is not a list of integers", name);
    if (a->n_ints != n)
        return cph_onnx_node_fail(c, nd, "attribute '%s' has %zu values (expected %zu)", name,
                                  a->n_ints, n);
    for (size_t i = 0; i < n; i++) out[i] = a->ints[i];
    *given = 1;
    return CP_OK;
}

cp_status cph_onnx_input(const cph_onnx_ctx *c, const cph_onnx_node *nd, size_t i,
                         const cph_onnx_tensor **out) {
    *out = NULL;
    if (i >= nd->n_input || !str(nd->input[i])[0])
        return cph_onnx_node_fail(c, nd, "input %zu is missing", i);
    const cph_onnx_tensor *e = cph_onnx_find(c->t, nd->input[i]);
    if (!e)
        return cph_onnx_node_fail(c, nd,
                                  "input '%.100s' has no known shape (no graph input, initializer "
                                  "or earlier node makes it)",
                                  nd->input[i]);
    *out = e;
    return CP_OK;
}

cp_status cph_onnx_output(const cph_onnx_ctx *c, const cph_onnx_node *nd, size_t i,
                          const cph_onnx_shape *s) {
    if (i >= nd->n_output || !str(nd->output[i])[0]) return CP_OK; /* an unused optional output */
    for (int k = 0; k < s->rank; k++)
        if (s->d[k] < 0 || s->d[k] > CPH_ONNX_MAX_DIM)
            return cph_onnx_node_fail(c, nd, "output dimension %d would be %lld (outside 0..2^31)",
                                      k, (long long)s->d[k]);
    if (!cph_onnx_put(c->t, nd->output[i], s))
        return cpa_fail(CP_ENOMEM, c->msg, c->cap, "%s: out of memory", c->file);
    return CP_OK;
}

/* Bytes per element of an ONNX data type (TensorProto.DataType), 0 when
 * variable (STRING) or unknown. */
static size_t elem_size(int32_t t) {
    switch (t) {
    case 2: case 3: case 9: return 1;           /* UINT8 INT8 BOOL */
    case 4: case 5: case 10: case 16: return 2; /* UINT16 INT16 FLOAT16 BFLOAT16 */
    case 1: case 6: case 12: return 4;          /* FLOAT INT32 UINT32 */
    case 7: case 11: case 13: case 14: return 8; /* INT64 DOUBLE UINT64 COMPLEX64 */
    case 15: return 16;                          /* COMPLEX128 */
    default: return 0;
    }
}

/* The values the typed fields hold for data type t (how many, and the
 * k-th as a double). */
static size_t typed_count(const Cponnx__TensorProto *tp, int32_t t) {
    switch (t) {
    case 1: return tp->n_float_data;
    case 14: return tp->n_float_data / 2;
    case 7: return tp->n_int64_data;
    case 11: return tp->n_double_data;
    case 15: return tp->n_double_data / 2;
    case 12: case 13: return tp->n_uint64_data;
    case 8: return tp->n_string_data;
    default: return tp->n_int32_data;
    }
}

static double typed_value(const Cponnx__TensorProto *tp, int32_t t, size_t k) {
    switch (t) {
    case 1: return tp->float_data[k];
    case 7: return (double)tp->int64_data[k];
    case 11: return tp->double_data[k];
    case 12: case 13: return (double)tp->uint64_data[k];
    default: return (double)tp->int32_data[k];
    }
}

static double raw_value(const uint8_t *p, int32_t t) {
    /* Little-endian, as the standard stores raw_data. */
    uint64_t u = 0;
    const size_t n = elem_size(t);
    for (size_t i = 0; i < n && i < 8; i++) u |= (uint64_t)p[i] << (8 * i);
    switch (t) {
    case 1: { float f; uint32_t v = (uint32_t)u; memcpy(&f, &v, 4); return f; }
    case 11: { double d; memcpy(&d, &u, 8); return d; }
    case 7: return (double)(int64_t)u;
    case 6: return (double)(int32_t)(uint32_t)u;
    case 3: return (double)(int8_t)(uint8_t)u;
    case 5: return (double)(int16_t)(uint16_t)u;
    default: return (double)u;
    }
}

cp_status cph_onnx_tensor_from_proto(const cph_onnx_ctx *c, const Cponnx__TensorProto *tp,
                                     const char *what, cph_onnx_tensor *e) {
    if (tp->n_dims > CPH_ONNX_MAX_RANK)
        return cpa_fail(CP_EFORMAT, c->msg, c->cap, "%s: %s has rank %zu (at most %d supported)",
                        c->file, what, tp->n_dims, CPH_ONNX_MAX_RANK);
    e->shape.rank = (int)tp->n_dims;
    uint64_t count = 1;
    for (size_t i = 0; i < tp->n_dims; i++) {
        if (tp->dims[i] < 0 || tp->dims[i] > CPH_ONNX_MAX_DIM)
            return cpa_fail(CP_EFORMAT, c->msg, c->cap,
                            "%s: %s: dimension %zu is %lld (outside 0..2^31)", c->file, what, i,
                            (long long)tp->dims[i]);
        e->shape.d[i] = tp->dims[i];
        if (__builtin_mul_overflow(count, (uint64_t)tp->dims[i], &count) || count > ((uint64_t)1 << 40))
            return cpa_fail(CP_EFORMAT, c->msg, c->cap,
                            "%s: %s: its dims give more than 2^40 elements", c->file, what);
    }
    const int32_t t = tp->has_data_type ? tp->data_type : 0;
    const size_t es = elem_size(t);
    e->nval = 0;
    if (tp->has_data_location && tp->data_location == 1) return CP_OK; /* EXTERNAL: not read */
    if (tp->has_raw_data) {
        if (es && tp->raw_data.len != count * es)
            return cpa_fail(CP_EFORMAT, c->msg, c->cap,
                            "%s: %s: raw_data holds %zu bytes, its dims and type need %llu", c->file,
                            what, tp->raw_data.len, (unsigned long long)(count * es));
        for (size_t k = 0; es && k < count && k < CPH_ONNX_MAX_VALUES; k++)
            e->val[e->nval++] = raw_value(tp->raw_data.data + k * es, t);
        return CP_OK;
    }
    const size_t have = typed_count(tp, t);
    if (have != count)
        return cpa_fail(CP_EFORMAT, c->msg, c->cap,
                        "%s: %s: holds %zu values, its dims say %llu", c->file, what, have,
                        (unsigned long long)count);
    if (t != 8 && t != 14 && t != 15)
        for (size_t k = 0; k < count && k < CPH_ONNX_MAX_VALUES; k++)
            e->val[e->nval++] = typed_value(tp, t, k);
    for (int k = 0; k < e->nval; k++)
        if (!isfinite(e->val[k])) e->nval = 0;
    return CP_OK;
}
