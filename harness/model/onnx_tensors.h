/* The tensors of an ONNX graph as the importer knows them: a name, a shape
 * (every dimension known) and, for small constant tensors (initializers and
 * Constant outputs such as a Reshape's target shape, a Resize's scales or a
 * Pad's pads), their values. */
#ifndef CONVPICK_ONNX_TENSORS_H
#define CONVPICK_ONNX_TENSORS_H

#include <stddef.h>
#include <stdint.h>

#include "convpick/convpick.h"

#define CPH_ONNX_MAX_RANK 8
#define CPH_ONNX_MAX_VALUES 16 /* values kept of a constant tensor */
/* Largest size accepted for one dimension: far above any image or channel
 * count, low enough that products of a few dims stay exact in int64. */
#define CPH_ONNX_MAX_DIM ((int64_t)1 << 31)

typedef struct cph_onnx_shape {
    int rank;
    int64_t d[CPH_ONNX_MAX_RANK];
} cph_onnx_shape;

typedef struct cph_onnx_tensor {
    char *name;           /* heap */
    cph_onnx_shape shape;
    int nval;             /* values kept (0: none, or not a small constant) */
    double val[CPH_ONNX_MAX_VALUES];
    int is_const;         /* an initializer or a Constant's output */
} cph_onnx_tensor;

/* The table: tensors in the order they became known, with a hash index. */
typedef struct cph_onnx_tensors {
    cph_onnx_tensor *v;
    size_t n, cap;
    size_t *slot;         /* open addressing: index + 1, 0 = empty */
    size_t nslot;
} cph_onnx_tensors;

/* The tensor named name, or NULL. */
cph_onnx_tensor *cph_onnx_find(const cph_onnx_tensors *t, const char *name);
/* Adds (or, for a name already known, replaces) a tensor; returns it, or NULL
 * when memory runs out. */
cph_onnx_tensor *cph_onnx_put(cph_onnx_tensors *t, const char *name, const cph_onnx_shape *s);
void cph_onnx_tensors_free(cph_onnx_tensors *t);

/* "1x64x56x56" (like snprintf). */
int cph_onnx_shape_format(const cph_onnx_shape *s, char *buf, size_t cap);

#endif
