/* Shape propagation through the operators between convolutions
 * (onnx_impl.h).  Semantics as the ONNX operator documents define them for
 * the default domain, opsets 7-17; where an input moved between opsets (Pad's
 * pads, Resize's scales, Clip's bounds) both forms are read.  Anything else is
 * refused with the node's name and op type: a guess would silently tune the
 * wrong layers. */
#include "harness/model/onnx_impl.h"
#include "algos/core/cpa.h"

#include <math.h>
#include <string.h>

typedef cp_status (*op_fn)(cph_onnx_ctx *c, const cph_onnx_node *nd);

/* Output 0 (and any other output) = input 0: element-wise operators. */
static cp_status op_same(cph_onnx_ctx *c, const cph_onnx_node *nd) {
    const cph_onnx_tensor *x = NULL;
    cp_status st = cph_onnx_input(c, nd, 0, &x);
    if (st != CP_OK) return st;
    const cph_onnx_shape s = x->shape; /* a copy: outputs may move the table */
    for (size_t i = 0; st == CP_OK && i < nd->n_output; i++) st = cph_onnx_output(c, nd, i, &s);
    return st;
}

/* Numpy-style broadcasting of every input. */
static cp_status op_broadcast(cph_onnx_ctx *c, const cph_onnx_node *nd) {
    cph_onnx_shape y = {0, {0}};
    for (size_t i = 0; i < nd->n_input; i++) {
        const cph_onnx_tensor *x;
        cp_status st = cph_onnx_input(c, nd, i, &x);
        if (st != CP_OK) return st;
        const cph_onnx_shape *a = &x->shape;
        cph_onnx_shape r = {a->rank > y.rank ? a->rank : y.rank, {0}};
        for (int k = 0; k < r.rank; k++) {
            const int ia = k - (r.rank - a->rank), iy = k - (r.rank - y.rank);
            const int64_t da = ia >= 0 ? a->d[ia] : 1, dy = iy >= 0 ? y.d[iy] : 1;
            if (da != dy && da != 1 && dy != 1)
                return cph_onnx_node_fail(c, nd, "input %zu: dimension %lld does not broadcast "
                                          "with %lld", i, (long long)da, (long long)dy);
            r.d[k] = da == 1 ? dy : da;
        }
        y = r;
    }
    return cph_onnx_output(c, nd, 0, &y);
}

static cp_status need_rank4(cph_onnx_ctx *c, const cph_onnx_node *nd, const cph_onnx_tensor **x) {
    cp_status st = cph_onnx_input(c, nd, 0, x);
    if (st == CP_OK && (*x)->shape.rank != 4)
        return cph_onnx_node_fail(c, nd, "input of rank %d (only rank 4, NCHW, is supported)",
                                  (*x)->shape.rank);
    return st;
}

static cp_status op_pool(cph_onnx_ctx *c, const cph_onnx_node *nd) {
    const cph_onnx_tensor *x;
    cp_status st = need_rank4(c, nd, &x);
    if (st != CP_OK) return st;
    int64_t kernel[2], stride[2] = {1, 1}, dil[2] = {1, 1}, pads[4] = {0, 0, 0, 0}, ceil_mode = 0;
    int given = 0;
    if ((st = cph_onnx_attr_ints(c, nd, "kernel_shape", 2, kernel, &given)) != CP_OK) return st;
    if (!given) return cph_onnx_node_fail(c, nd, "attribute 'kernel_shape' is missing");
    if ((st = cph_onnx_attr_ints(c, nd, "strides", 2, stride, &given)) != CP_OK) return st;
    if ((st = cph_onnx_attr_ints(c, nd, "dilations", 2, dil, &given)) != CP_OK) return st;
    if ((st = cph_onnx_attr_ints(c, nd, "pads", 4, pads, &given)) != CP_OK) return st;
    if ((st = cph_onnx_attr_int(c, nd, "ceil_mode", 0, &ceil_mode)) != CP_OK) return st;
    const int64_t in[2] = {x->shape.d[2], x->shape.d[3]};
    int64_t out[2];
    if ((st = cph_onnx_window(c, nd, in, kernel, stride, dil, pads, ceil_mode != 0, out)) != CP_OK)
        return st;
    const cph_onnx_shape y = {4, {x->shape.d[0], x->shape.d[1], out[0], out[1]}};
    st = cph_onnx_output(c, nd, 0, &y);
    if (st == CP_OK) st = cph_onnx_output(c, nd, 1, &y); /* MaxPool's indices */
    return st;
}

static cp_status op_global_pool(cph_onnx_ctx *c, const cph_onnx_node *nd) {
    const cph_onnx_tensor *x;
    cp_status st = need_rank4(c, nd, &x);
    if (st != CP_OK) return st;
    const cph_onnx_shape y = {4, {x->shape.d[0], x->shape.d[1], 1, 1}};
    return cph_onnx_output(c, nd, 0, &y);
}

static int axis_of(int64_t axis, int rank, int *out) {
    if (axis < -rank || axis >= rank) return -1;
    *out = (int)(axis < 0 ? axis + rank : axis);
    return 0;
}

static cp_status op_concat(cph_onnx_ctx *c, const cph_onnx_node *nd) {
    const cph_onnx_tensor *x;
    cp_status st = cph_onnx_input(c, nd, 0, &x);
    if (st != CP_OK) return st;
    int64_t axis = 0;
    int ax = 0;
    if ((st = cph_onnx_attr_int(c, nd, "axis", 1, &axis)) != CP_OK) return st;
    if (axis_of(axis, x->shape.rank, &ax))
        return cph_onnx_node_fail(c, nd, "axis %lld outside the rank %d", (long long)axis, x->shape.rank);
    cph_onnx_shape y = x->shape;
    for (size_t i = 1; i < nd->n_input; i++) {
        const cph_onnx_tensor *z;
        if ((st = cph_onnx_input(c, nd, i, &z)) != CP_OK) return st;
        int same = z->shape.rank == y.rank;
        for (int k = 0; same && k < y.rank; k++) same = k == ax || z->shape.d[k] == y.d[k];
        if (!same) return cph_onnx_node_fail(c, nd, "input %zu does not match input 0 outside the axis", i);
        y.d[ax] += z->shape.d[ax];
    }
    return cph_onnx_output(c, nd, 0, &y);
}

/* The values of a constant input (all of them), or -1. */
static int const_values(const cph_onnx_ctx *c, const cph_onnx_node *nd, size_t i, const double **v) {
    if (i >= nd->n_input || !nd->input[i] || !nd->input[i][0]) return -1;
    const cph_onnx_tensor *e = cph_onnx_find(c->t, nd->input[i]);
    if (!e || !e->is_const) return -1;
    int64_t count = 1;
    for (int k = 0; k < e->shape.rank && count <= CPH_ONNX_MAX_VALUES; k++) count *= e->shape.d[k];
    if (count != e->nval) return -1;
    *v = e->val;
    return e->nval;
}

/* A constant value as a size or offset within +-2^31, or -1. */
static int int_value(double v, int64_t *out) {
    if (v != floor(v) || fabs(v) > (double)CPH_ONNX_MAX_DIM) return -1;
    *out = (int64_t)v;
    return 0;
}

static cp_status op_pad(cph_onnx_ctx *c, const cph_onnx_node *nd) {
    const cph_onnx_tensor *x;
    cp_status st = cph_onnx_input(c, nd, 0, &x);
    if (st != CP_OK) return st;
    const int r = x->shape.rank;
    int64_t pads[2 * CPH_ONNX_MAX_RANK];
    int given = 0;
    const double *v = NULL;
    if (nd->n_input > 1) { /* opset >= 11: pads is input 1 */
        if (const_values(c, nd, 1, &v) != 2 * r)
            return cph_onnx_node_fail(c, nd, "input 'pads' is not a constant of %d values", 2 * r);
        for (int k = 0; k < 2 * r; k++)
            if (int_value(v[k], &pads[k]))
                return cph_onnx_node_fail(c, nd, "pad %g is not an integer within 2^31", v[k]);
    } else if ((st = cph_onnx_attr_ints(c, nd, "pads", (size_t)(2 * r), pads, &given)) != CP_OK ||
               !given) {
        return st != CP_OK ? st : cph_onnx_node_fail(c, nd, "no pads given");
    }
    cph_onnx_shape y = x->shape;
    for (int k = 0; k < r; k++) y.d[k] += pads[k] + pads[k + r];
    return cph_onnx_output(c, nd, 0, &y);
}

static cp_status op_flatten(cph_onnx_ctx *c, const cph_onnx_node *nd) {
    const cph_onnx_tensor *x;
    cp_status st = cph_onnx_input(c, nd, 0, &x);
    if (st != CP_OK) return st;
    int64_t axis = 1;
    if ((st = cph_onnx_attr_int(c, nd, "axis", 1, &axis)) != CP_OK) return st;
    const int r = x->shape.rank;
    if (axis < -r || axis > r) return cph_onnx_node_fail(c, nd, "axis %lld outside the rank %d", (long long)axis, r);
    const int ax = (int)(axis < 0 ? axis + r : axis);
    cph_onnx_shape y = {2, {1, 1}};
    for (int k = 0; k < r; k++)
        if (__builtin_mul_overflow(y.d[k >= ax], x->shape.d[k], &y.d[k >= ax]))
            return cph_onnx_node_fail(c, nd, "size overflows");
    return cph_onnx_output(c, nd, 0, &y);
}

static cp_status op_reshape(cph_onnx_ctx *c, const cph_onnx_node *nd) {
    const cph_onnx_tensor *x;
    cp_status st = cph_onnx_input(c, nd, 0, &x);
    if (st != CP_OK) return st;
    const double *v = NULL;
    const int n = const_values(c, nd, 1, &v);
    if (n < 0 || n > CPH_ONNX_MAX_RANK)
        return cph_onnx_node_fail(c, nd, "input 'shape' is not a constant of at most %d values", CPH_ONNX_MAX_RANK);
    int64_t total = 1, known = 1;
    for (int k = 0; k < x->shape.rank; k++)
        if (__builtin_mul_overflow(total, x->shape.d[k], &total))
            return cph_onnx_node_fail(c, nd, "size overflows");
    cph_onnx_shape y = {n, {0}};
    int infer = -1;
    for (int k = 0; k < n; k++) {
        if (v[k] != floor(v[k]) || v[k] < -1 || v[k] > (double)CPH_ONNX_MAX_DIM)
            return cph_onnx_node_fail(c, nd, "shape value %g is not a dimension", v[k]);
        y.d[k] = (int64_t)v[k];
        if (y.d[k] == 0) { /* allowzero = 0: copy the input's dimension */
            if (k >= x->shape.rank) return cph_onnx_node_fail(c, nd, "shape value 0 at %d past the input's rank", k);
            y.d[k] = x->shape.d[k];
        }
        if (y.d[k] == -1) {
            if (infer >= 0) return cph_onnx_node_fail(c, nd, "more than one -1 in the shape");
            infer = k;
        } else if (__builtin_mul_overflow(known, y.d[k], &known)) {
            return cph_onnx_node_fail(c, nd, "size overflows");
        }
    }
    if (infer >= 0) {
        if (known == 0 || total % known)
            return cph_onnx_node_fail(c, nd, "%lld elements do not reshape with -1", (long long)total);
        y.d[infer] = total / known;
    } else if (known != total) {
        return cph_onnx_node_fail(c, nd, "%lld elements do not reshape into %lld", (long long)total, (long long)known);
    }
    return cph_onnx_output(c, nd, 0, &y);
}

/* Inputs 0 and 1 (the two operands of Gemm and MatMul). */
static cp_status two_inputs(cph_onnx_ctx *c, const cph_onnx_node *nd, const cph_onnx_tensor **a,
                            const cph_onnx_tensor **b) {
    cp_status st = cph_onnx_input(c, nd, 0, a);
    return st == CP_OK ? cph_onnx_input(c, nd, 1, b) : st;
}

static cp_status op_gemm(cph_onnx_ctx *c, const cph_onnx_node *nd) {
    const cph_onnx_tensor *a, *b;
    cp_status st = two_inputs(c, nd, &a, &b);
    if (st != CP_OK) return st;
    if (a->shape.rank != 2 || b->shape.rank != 2)
        return cph_onnx_node_fail(c, nd, "inputs of rank %d and %d (Gemm needs 2 and 2)", a->shape.rank, b->shape.rank);
    int64_t ta = 0, tb = 0;
    if ((st = cph_onnx_attr_int(c, nd, "transA", 0, &ta)) != CP_OK) return st;
    if ((st = cph_onnx_attr_int(c, nd, "transB", 0, &tb)) != CP_OK) return st;
    const int64_t m = a->shape.d[ta ? 1 : 0], ka = a->shape.d[ta ? 0 : 1];
    const int64_t kb = b->shape.d[tb ? 1 : 0], n = b->shape.d[tb ? 0 : 1];
    if (ka != kb) return cph_onnx_node_fail(c, nd, "inner sizes %lld and %lld differ", (long long)ka, (long long)kb);
    const cph_onnx_shape y = {2, {m, n}};
    return cph_onnx_output(c, nd, 0, &y);
}

static cp_status op_matmul(cph_onnx_ctx *c, const cph_onnx_node *nd) {
    const cph_onnx_tensor *ta, *tb;
    const cp_status st = two_inputs(c, nd, &ta, &tb);
    if (st != CP_OK) return st;
    cph_onnx_shape a = ta->shape, b = tb->shape;
    if (a.rank < 1 || b.rank < 1) return cph_onnx_node_fail(c, nd, "a scalar input");
    const int a1 = a.rank == 1, b1 = b.rank == 1;
    if (a1) a = (cph_onnx_shape){2, {1, a.d[0]}};
    if (b1) b = (cph_onnx_shape){2, {b.d[0], 1}};
    if (a.d[a.rank - 1] != b.d[b.rank - 2])
        return cph_onnx_node_fail(c, nd, "inner sizes %lld and %lld differ", (long long)a.d[a.rank - 1],
                                  (long long)b.d[b.rank - 2]);
    const int ra = a.rank - 2, rb = b.rank - 2, r = ra > rb ? ra : rb;
    cph_onnx_shape y = {0, {0}};
    for (int k = 0; k < r; k++) {
        const int ia = k - (r - ra), ib = k - (r - rb);
        const int64_t da = ia >= 0 ? a.d[ia] : 1, db = ib >= 0 ? b.d[ib] : 1;
        if (da != db && da != 1 && db != 1)
            return cph_onnx_node_fail(c, nd, "batch dimensions %lld and %lld do not broadcast", (long long)da, (long long)db);
        y.d[y.rank++] = da == 1 ? db : da;
    }
    if (!a1) y.d[y.rank++] = a.d[a.rank - 2];
    if (!b1) y.d[y.rank++] = b.d[b.rank - 1];
    return cph_onnx_output(c, nd, 0, &y);
}

static cp_status op_resize(cph_onnx_ctx *c, const cph_onnx_node *nd) {
    const cph_onnx_tensor *x;
    cp_status st = cph_onnx_input(c, nd, 0, &x);
    if (st != CP_OK) return st;
    const int r = x->shape.rank;
    const double *v = NULL;
    cph_onnx_shape y = x->shape;
    /* Opset 10 (and Upsample): X, scales.  Opset 11+: X, roi, scales, sizes. */
    const size_t si = nd->n_input == 2 ? 1 : 2;
    if (const_values(c, nd, si, &v) == r) {
        for (int k = 0; k < r; k++) {
            if (!(v[k] > 0) || v[k] * (double)x->shape.d[k] > (double)CPH_ONNX_MAX_DIM)
                return cph_onnx_node_fail(c, nd, "scale %g is not a positive size factor", v[k]);
            y.d[k] = (int64_t)floor((double)x->shape.d[k] * v[k]);
        }
    } else if (const_values(c, nd, 3, &v) == r) {
        for (int k = 0; k < r; k++)
            if (int_value(v[k], &y.d[k]))
                return cph_onnx_node_fail(c, nd, "size %g is not an integer within 2^31", v[k]);
    } else {
        return cph_onnx_node_fail(c, nd, "neither constant scales nor constant sizes of %d values", r);
    }
    return cph_onnx_output(c, nd, 0, &y);
}

/* Constant: its value becomes a constant tensor. */
static cp_status op_constant(cph_onnx_ctx *c, const cph_onnx_node *nd) {
    const Cponnx__AttributeProto *a = cph_onnx_attr(nd, "value");
    cph_onnx_tensor e;
    memset(&e, 0, sizeof e);
    if (a && a->t) {
        char what[160];
        snprintf(what, sizeof what, "node '%.100s' (Constant): value", nd->name ? nd->name : "");
        cp_status st = cph_onnx_tensor_from_proto(c, a->t, what, &e);
        if (st != CP_OK) return st;
    } else if ((a = cph_onnx_attr(nd, "value_ints")) != NULL && a->n_ints <= CPH_ONNX_MAX_VALUES) {
        e.shape = (cph_onnx_shape){1, {(int64_t)a->n_ints}};
        for (size_t k = 0; k < a->n_ints; k++) e.val[e.nval++] = (double)a->ints[k];
    } else if ((a = cph_onnx_attr(nd, "value_floats")) != NULL && a->n_floats <= CPH_ONNX_MAX_VALUES) {
        e.shape = (cph_onnx_shape){1, {(int64_t)a->n_floats}};
        for (size_t k = 0; k < a->n_floats; k++) e.val[e.nval++] = a->floats[k];
    } else if (((a = cph_onnx_attr(nd, "value_int")) != NULL && a->has_i) ||
               ((a = cph_onnx_attr(nd, "value_float")) != NULL && a->has_f)) {
        e.val[e.nval++] = a->has_i ? (double)a->i : a->f;
    } else {
        return cph_onnx_node_fail(c, nd, "no value this importer reads (value, value_int[s], value_float[s])");
    }
    cp_status st = cph_onnx_output(c, nd, 0, &e.shape);
    if (st != CP_OK || !nd->n_output || !nd->output[0] || !nd->output[0][0]) return st;
    cph_onnx_tensor *o = cph_onnx_find(c->t, nd->output[0]);
    o->nval = e.nval;
    memcpy(o->val, e.val, sizeof e.val);
    o->is_const = 1;
    return CP_OK;
}

static const struct {
    const char *op;
    op_fn fn;
} ops[] = {
    {"Conv", cph_onnx_conv},
    {"Relu", op_same}, {"Clip", op_same}, {"Sigmoid", op_same}, {"HardSigmoid", op_same},
    {"HardSwish", op_same}, {"BatchNormalization", op_same}, {"Identity", op_same},
    {"Dropout", op_same}, {"LeakyRelu", op_same}, {"Tanh", op_same},
    {"Add", op_broadcast}, {"Mul", op_broadcast}, {"Sub", op_broadcast}, {"Div", op_broadcast},
    {"MaxPool", op_pool}, {"AveragePool", op_pool},
    {"GlobalAveragePool", op_global_pool}, {"GlobalMaxPool", op_global_pool},
    {"Concat", op_concat}, {"Pad", op_pad}, {"Flatten", op_flatten}, {"Reshape", op_reshape},
    {"Gemm", op_gemm}, {"MatMul", op_matmul}, {"Resize", op_resize}, {"Upsample", op_resize},
    {"Constant", op_constant},
};

cp_status cph_onnx_propagate(cph_onnx_ctx *c, const cph_onnx_node *nd) {
    const char *op = nd->op_type ? nd->op_type : "";
    const char *dom = nd->domain ? nd->domain : "";
    if (!dom[0] || strcmp(dom, "ai.onnx") == 0)
        for (size_t i = 0; i < sizeof ops / sizeof ops[0]; i++)
            if (strcmp(ops[i].op, op) == 0) return ops[i].fn(c, nd);
    cph_onnx_node_fail(c, nd, "operator %s%s%s cannot be propagated (see the supported list in "
                       "README.md, Shapes)", dom, dom[0] ? "." : "", op[0] ? op : "(no op_type)");
    return CP_EUNSUPPORTED;
}
