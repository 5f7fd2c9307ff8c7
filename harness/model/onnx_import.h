/* Conv layers out of an ONNX model (the standard's protobuf format, read with
 * protobuf-c through our subset of its schema, proto/onnx_subset.proto: IR
 * version 8 and the default-domain operators of opsets 7 through 17).
 *
 * Every Conv node becomes a layer: the weights' shape from the initializer
 * (or the graph input) that feeds it, its attributes (group, strides, pads,
 * dilations, auto_pad, kernel_shape), and its input's N, C, H, W from shape
 * propagation from the graph inputs through the operators found between
 * convolutions in CNNs (onnx_ops.c lists them).  Layers take the node's name;
 * identical shapes keep every name and a count (layers.h). */
#ifndef CONVPICK_ONNX_IMPORT_H
#define CONVPICK_ONNX_IMPORT_H

#include <stddef.h>
#include <stdint.h>

#include "harness/model/onnx_tensors.h"
#include "harness/select/layers.h"

typedef struct cph_onnx_opts {
    int64_t batch;   /* > 0: the batch of every layer, and of a symbolic dim 0 */
    int64_t h, w;    /* > 0: the size of a graph input's symbolic dims 2 and 3 */
} cph_onnx_opts;

/* Reads the model in path (or data[0..len) named name) and appends its conv
 * layers to out.  On an error (one line in msg naming the file and, for a
 * node, its name and op type) out keeps the layers found before it: a caller
 * may list them.  tensors, when not NULL, receives every tensor shape the
 * propagation knew (the caller frees it with cph_onnx_tensors_free). */
cp_status cph_onnx_import(const char *path, const cph_onnx_opts *o, cph_layer_list *out,
                          cph_onnx_tensors *tensors, char *msg, size_t cap);
cp_status cph_onnx_import_buffer(const uint8_t *data, size_t len, const char *name,
                                 const cph_onnx_opts *o, cph_layer_list *out,
                                 cph_onnx_tensors *tensors, char *msg, size_t cap);

#endif
