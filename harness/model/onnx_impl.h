/* Internals shared by the ONNX importer's files (onnx_import.c, onnx_ops.c,
 * onnx_consts.c).  Not for use outside harness/model/. */
#ifndef CONVPICK_ONNX_IMPL_H
#define CONVPICK_ONNX_IMPL_H

#include "onnx_subset.pb-c.h"

#include "harness/model/onnx_import.h"

typedef Cponnx__NodeProto cph_onnx_node;

/* One import in progress. */
typedef struct cph_onnx_ctx {
    const char *file;          /* the model's name in messages */
    const cph_onnx_opts *o;
    cph_onnx_tensors *t;
    cph_layer_list *out;
    int nconv;                 /* Conv nodes seen */
    char *msg;
    size_t cap;
} cph_onnx_ctx;

/* Node errors: "FILE: node 'NAME' (OP): ..." with CP_EFORMAT. */
cp_status cph_onnx_node_fail(const cph_onnx_ctx *c, const cph_onnx_node *nd, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));

/* Attributes: the named one, or NULL. */
const Cponnx__AttributeProto *cph_onnx_attr(const cph_onnx_node *nd, const char *name);
/* An INT attribute (def when absent); CP_EFORMAT when of another kind. */
cp_status cph_onnx_attr_int(const cph_onnx_ctx *c, const cph_onnx_node *nd, const char *name,
                            int64_t def, int64_t *out);
/* An INTS attribute of exactly n values (or absent: *given = 0). */
cp_status cph_onnx_attr_ints(const cph_onnx_ctx *c, const cph_onnx_node *nd, const char *name,
                             size_t n, int64_t *out, int *given);

/* The shape of input i (must be given and known).  The pointer stays valid
 * only until the next cph_onnx_output (the table may grow and move). */
cp_status cph_onnx_input(const cph_onnx_ctx *c, const cph_onnx_node *nd, size_t i,
                         const cph_onnx_tensor **out);
/* Sets output i's shape. */
cp_status cph_onnx_output(const cph_onnx_ctx *c, const cph_onnx_node *nd, size_t i,
                          const cph_onnx_shape *s);

/* A TensorProto as a tensor of the table: shape, size check against its
 * data, and its first values when small.  what names it in messages. */
cp_status cph_onnx_tensor_from_proto(const cph_onnx_ctx *c, const Cponnx__TensorProto *tp,
                                     const char *what, cph_onnx_tensor *e);

/* Propagates the node's output shapes (onnx_ops.c); Conv nodes also add
 * their layer.  CP_ENOTSUP with the one-line message for an operator that
 * cannot be propagated. */
cp_status cph_onnx_propagate(cph_onnx_ctx *c, const cph_onnx_node *nd);
/* The Conv node (onnx_conv.c). */
cp_status cph_onnx_conv(cph_onnx_ctx *c, const cph_onnx_node *nd);
/* Spatial output size of a window op (Conv, pooling): pads resolved from
 * auto_pad when it is not NOTSET; pads[0..2) begins, [2..4) ends. */
cp_status cph_onnx_window(const cph_onnx_ctx *c, const cph_onnx_node *nd, const int64_t in[2],
                          const int64_t kernel[2], const int64_t stride[2], const int64_t dil[2],
                          int64_t pads[4], int ceil_mode, int64_t outhw[2]);

#endif
