/* The ONNX importer's driver (onnx_import.h): decode, the graph's inputs and
 * initializers, then every node in order (the standard requires the nodes of
 * a graph to be sorted topologically). */
#include "harness/model/onnx_impl.h"
#include "algos/core/cpa.h"

#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

/* Protobuf messages are limited to 2 GiB; a model with its weights inside is
 * well below. */
#define CPH_ONNX_MAX_FILE ((size_t)2 << 30)

/* A graph input's shape; symbolic or missing dims from the options. */
static cp_status input_shape(cph_onnx_ctx *c, const Cponnx__ValueInfoProto *vi,
                             cph_onnx_shape *s) {
    const char *name = vi->name;
    const Cponnx__TypeProto *tp = vi->type;
    if (!tp || tp->value_case != CPONNX__TYPE_PROTO__VALUE_TENSOR_TYPE || !tp->tensor_type ||
        !tp->tensor_type->shape)
        return cpa_fail(CP_EFORMAT, c->msg, c->cap, "%s: graph input '%.100s' has no tensor shape",
                        c->file, name);
    const Cponnx__TensorShapeProto *sp = tp->tensor_type->shape;
    if (sp->n_dim > CPH_ONNX_MAX_RANK)
        return cpa_fail(CP_EFORMAT, c->msg, c->cap, "%s: graph input '%.100s' has rank %zu (at most %d)",
                        c->file, name, sp->n_dim, CPH_ONNX_MAX_RANK);
    s->rank = (int)sp->n_dim;
    for (size_t i = 0; i < sp->n_dim; i++) {
        const Cponnx__TensorShapeProto__Dimension *d = sp->dim[i];
        const int known = d->value_case == CPONNX__TENSOR_SHAPE_PROTO__DIMENSION__VALUE_DIM_VALUE;
        if (known) {
            if (d->dim_value < 0 || d->dim_value > CPH_ONNX_MAX_DIM)
                return cpa_fail(CP_EFORMAT, c->msg, c->cap,
                                "%s: graph input '%.100s': dimension %zu is %lld (outside 0..2^31)",
                                c->file, name, i, (long long)d->dim_value);
            s->d[i] = d->dim_value;
            continue;
        }
        const char *sym = d->value_case == CPONNX__TENSOR_SHAPE_PROTO__DIMENSION__VALUE_DIM_PARAM &&
                                  d->dim_param ? d->dim_param : "";
        const int64_t given = i == 0 ? c->o->batch : i == 2 ? c->o->h : i == 3 ? c->o->w : 0;
        if (given <= 0)
            return cpa_fail(CP_EFORMAT, c->msg, c->cap,
                            "%s: graph input '%.100s': dimension %zu is %s%.40s%s; give it with %s",
                            c->file, name, i, sym[0] ? "symbolic ('" : "missing", sym,
                            sym[0] ? "')" : "",
                            i == 0 ? "--batch N" : i == 2 || i == 3 ? "--input-size H,W"
                                                                   : "the model (only N, H and W can be given)");
        s->d[i] = given;
    }
    return CP_OK;
}

static cp_status import_graph(cph_onnx_ctx *c, const Cponnx__ModelProto *m) {
    const Cponnx__GraphProto *g = m->graph;
    for (size_t i = 0; i < g->n_initializer; i++) {
        const Cponnx__TensorProto *tp = g->initializer[i];
        char what[160];
        snprintf(what, sizeof what, "initializer '%.100s'", tp->name ? tp->name : "");
        if (!tp->name || !tp->name[0])
            return cpa_fail(CP_EFORMAT, c->msg, c->cap, "%s: initializer %zu has no name", c->file, i);
        cph_onnx_tensor e;
        memset(&e, 0, sizeof e);
        cp_status st = cph_onnx_tensor_from_proto(c, tp, what, &e);
        if (st != CP_OK) return st;
        cph_onnx_tensor *t = cph_onnx_put(c->t, tp->name, &e.shape);
        if (!t) return cpa_fail(CP_ENOMEM, c->msg, c->cap, "%s: out of memory", c->file);
        t->nval = e.nval;
        memcpy(t->val, e.val, sizeof e.val);
        t->is_const = 1;
    }
    for (size_t i = 0; i < g->n_input; i++) {
        const Cponnx__ValueInfoProto *vi = g->input[i];
        if (!vi->name || !vi->name[0])
            return cpa_fail(CP_EFORMAT, c->msg, c->cap, "%s: graph input %zu has no name", c->file, i);
        if (cph_onnx_find(c->t, vi->name)) continue; /* an initializer listed as input (IR < 4) */
        cph_onnx_shape s;
        cp_status st = input_shape(c, vi, &s);
        if (st != CP_OK) return st;
        if (!cph_onnx_put(c->t, vi->name, &s))
            return cpa_fail(CP_ENOMEM, c->msg, c->cap, "%s: out of memory", c->file);
    }
    for (size_t i = 0; i < g->n_node; i++) {
        cp_status st = cph_onnx_propagate(c, g->node[i]);
        if (st != CP_OK) return st;
    }
    if (c->nconv == 0)
        return cpa_fail(CP_EFORMAT, c->msg, c->cap, "%s: the model has no Conv node", c->file);
    return CP_OK;
}

cp_status cph_onnx_import_buffer(const uint8_t *data, size_t len, const char *name,
                                 const cph_onnx_opts *o, cph_layer_list *out,
                                 cph_onnx_tensors *tensors, char *msg, size_t cap) {
    static const cph_onnx_opts none = {0, 0, 0};
    cph_onnx_tensors local = {0};
    cph_onnx_ctx c = {name ? name : "(model)", o ? o : &none, tensors ? tensors : &local, out, 0,
                      msg, cap};
    if (len == 0) return cpa_fail(CP_EFORMAT, msg, cap, "%s: empty file (not an ONNX model)", c.file);
    Cponnx__ModelProto *m = cponnx__model_proto__unpack(NULL, len, data);
    if (!m)
        return cpa_fail(CP_EFORMAT, msg, cap,
                        "%s: not an ONNX model (it does not decode as one: truncated, not "
                        "protobuf, or another protobuf message)", c.file);
    cp_status st;
    if (!m->graph || !m->has_ir_version)
        st = cpa_fail(CP_EFORMAT, msg, cap, "%s: decodes as protobuf but is not an ONNX model (%s)",
                      c.file, !m->graph ? "no graph" : "no ir_version");
    else if (m->ir_version < 3 || m->ir_version > 9)
        st = cpa_fail(CP_EFORMAT, msg, cap, "%s: ONNX IR version %lld (this reader follows 3..9)",
                      c.file, (long long)m->ir_version);
    else
        st = import_graph(&c, m);
    cponnx__model_proto__free_unpacked(m, NULL);
    if (!tensors) cph_onnx_tensors_free(&local);
    /* Names in the model may hold any bytes: the message stays one line. */
    for (char *p = msg; st != CP_OK && p && cap && *p; p++)
        if ((unsigned char)*p < 0x20) *p = '?';
    return st;
}

cp_status cph_onnx_import(const char *path, const cph_onnx_opts *o, cph_layer_list *out,
                          cph_onnx_tensors *tensors, char *msg, size_t cap) {
    struct stat sb;
    if (stat(path, &sb) != 0) return cpa_fail(CP_EIO, msg, cap, "%s: cannot open: %s", path, strerror(errno));
    if (!S_ISREG(sb.st_mode)) return cpa_fail(CP_EIO, msg, cap, "%s: not a regular file", path);
    if ((uint64_t)sb.st_size > CPH_ONNX_MAX_FILE)
        return cpa_fail(CP_EFORMAT, msg, cap, "%s: %lld bytes, more than a protobuf message may hold (2 GiB)",
                        path, (long long)sb.st_size);
    FILE *f = fopen(path, "rb");
    if (!f) return cpa_fail(CP_EIO, msg, cap, "%s: cannot open: %s", path, strerror(errno));
    const size_t len = (size_t)sb.st_size;
    uint8_t *buf = malloc(len ? len : 1);
    if (!buf) {
        fclose(f);
        return cpa_fail(CP_ENOMEM, msg, cap, "%s: out of memory for %zu bytes", path, len);
    }
    const size_t got = fread(buf, 1, len, f);
    const int err = ferror(f);
    fclose(f);
    cp_status st = err || got != len
                       ? cpa_fail(CP_EIO, msg, cap, "%s: read error", path)
                       : cph_onnx_import_buffer(buf, len, path, o, out, tensors, msg, cap);
    free(buf);
    return st;
}
