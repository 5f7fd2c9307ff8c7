/* Conv nodes and the window arithmetic Conv and pooling share (onnx_impl.h).
 *
 * Output size per spatial axis (ONNX Conv / MaxPool, opsets 11-17):
 *   NOTSET/explicit pads: out = floor-or-ceil((in + pb + pe - ((k-1)*d + 1)) / s) + 1
 *   VALID:                pads 0, same formula
 *   SAME_UPPER/LOWER:     out = ceil(in / s); total pad = max(0, (out-1)*s + (k-1)*d + 1 - in),
 *                         the odd unit at the end (UPPER) or at the beginning (LOWER). */
#include "harness/model/onnx_impl.h"
#include "algos/core/cpa.h"

#include <stdio.h>
#include <string.h>

cp_status cph_onnx_window(const cph_onnx_ctx *c, const cph_onnx_node *nd, const int64_t in[2],
                          const int64_t kernel[2], const int64_t stride[2], const int64_t dil[2],
                          int64_t pads[4], int ceil_mode, int64_t outhw[2]) {
    const Cponnx__AttributeProto *ap = cph_onnx_attr(nd, "auto_pad");
    char mode[16] = "NOTSET";
    if (ap && ap->has_s) {
        if (ap->s.len >= sizeof mode)
            return cph_onnx_node_fail(c, nd, "auto_pad is not NOTSET, VALID, SAME_UPPER or SAME_LOWER");
        memcpy(mode, ap->s.data, ap->s.len);
        mode[ap->s.len] = '\0';
    }
    const int same_upper = strcmp(mode, "SAME_UPPER") == 0, same_lower = strcmp(mode, "SAME_LOWER") == 0;
    if (!same_upper && !same_lower && strcmp(mode, "VALID") != 0 && strcmp(mode, "NOTSET") != 0)
        return cph_onnx_node_fail(c, nd,
                                  "auto_pad '%s' is not NOTSET, VALID, SAME_UPPER or SAME_LOWER", mode);
    for (int a = 0; a < 2; a++) {
        if (kernel[a] < 1 || stride[a] < 1 || dil[a] < 1 || kernel[a] > CPH_ONNX_MAX_DIM ||
            stride[a] > CPH_ONNX_MAX_DIM || dil[a] > CPH_ONNX_MAX_DIM)
            return cph_onnx_node_fail(c, nd, "kernel %lld, stride %lld, dilation %lld: each must be in 1..2^31",
                                      (long long)kernel[a], (long long)stride[a], (long long)dil[a]);
        const int64_t span = (kernel[a] - 1) * dil[a] + 1;
        if (same_upper || same_lower) {
            const int64_t out = (in[a] + stride[a] - 1) / stride[a];
            int64_t total = (out - 1) * stride[a] + span - in[a];
            if (total < 0) total = 0;
            pads[a] = same_upper ? total / 2 : total - total / 2;
            pads[a + 2] = total - pads[a];
        } else if (mode[0] == 'V') {
            pads[a] = pads[a + 2] = 0;
        }
        if (pads[a] < 0 || pads[a + 2] < 0 || pads[a] > CPH_ONNX_MAX_DIM || pads[a + 2] > CPH_ONNX_MAX_DIM)
            return cph_onnx_node_fail(c, nd, "pads %lld, %lld: each must be in 0..2^31",
                                      (long long)pads[a], (long long)pads[a + 2]);
        const int64_t room = in[a] + pads[a] + pads[a + 2] - span;
        if (room < 0)
            return cph_onnx_node_fail(c, nd, "the window (%lld wide dilated) does not fit the "
                                      "padded input (%lld)", (long long)span,
                                      (long long)(in[a] + pads[a] + pads[a + 2]));
        outhw[a] = (same_upper || same_lower) ? (in[a] + stride[a] - 1) / stride[a]
                   : ceil_mode ? (room + stride[a] - 1) / stride[a] + 1
                               : room / stride[a] + 1;
    }
    return CP_OK;
}

/* A name of our shape-file form ([A-Za-z0-9_.-/], <= 63 characters; the
 * end is kept, where exporters put what tells layers apart). */
static void layer_name(const cph_onnx_node *nd, int index, char *buf, size_t cap) {
    const char *src = nd->name && nd->name[0] ? nd->name
                      : nd->n_output && nd->output[0] && nd->output[0][0] ? nd->output[0] : NULL;
    if (!src) {
        snprintf(buf, cap, "conv%d", index);
        return;
    }
    size_t len = strlen(src);
    if (len > cap - 1) src += len - (cap - 1);
    size_t k = 0;
    for (; src[k] && k < cap - 1; k++) {
        const char ch = src[k];
        buf[k] = (ch >= 'a' && ch <= 'z') || (ch >= 'A' && ch <= 'Z') || (ch >= '0' && ch <= '9') ||
                         ch == '_' || ch == '.' || ch == '-' || ch == '/' ? ch : '_';
    }
    buf[k] = '\0';
}

cp_status cph_onnx_conv(cph_onnx_ctx *c, const cph_onnx_node *nd) {
    const cph_onnx_tensor *x, *w;
    cp_status st = cph_onnx_input(c, nd, 0, &x);
    if (st == CP_OK) st = cph_onnx_input(c, nd, 1, &w);
    if (st != CP_OK) return st;
    if (x->shape.rank != 4 || w->shape.rank != 4)
        return cph_onnx_node_fail(c, nd, "input rank %d, weight rank %d: only 2-D convolutions "
                                  "(rank 4, NCHW) are supported", x->shape.rank, w->shape.rank);
    int64_t group = 1, kernel[2] = {w->shape.d[2], w->shape.d[3]}, stride[2] = {1, 1},
            dil[2] = {1, 1}, pads[4] = {0, 0, 0, 0}, ks[2];
    int given = 0;
    if ((st = cph_onnx_attr_int(c, nd, "group", 1, &group)) != CP_OK) return st;
    if ((st = cph_onnx_attr_ints(c, nd, "kernel_shape", 2, ks, &given)) != CP_OK) return st;
    if (given && (ks[0] != kernel[0] || ks[1] != kernel[1]))
        return cph_onnx_node_fail(c, nd, "kernel_shape %lldx%lld contradicts the weights' %lldx%lld",
                                  (long long)ks[0], (long long)ks[1], (long long)kernel[0],
                                  (long long)kernel[1]);
    if ((st = cph_onnx_attr_ints(c, nd, "strides", 2, stride, &given)) != CP_OK) return st;
    if ((st = cph_onnx_attr_ints(c, nd, "dilations", 2, dil, &given)) != CP_OK) return st;
    if ((st = cph_onnx_attr_ints(c, nd, "pads", 4, pads, &given)) != CP_OK) return st;
    const int64_t cin = x->shape.d[1], k = w->shape.d[0];
    if (group < 1 || group > cin || cin % group || k % group || w->shape.d[1] * group != cin)
        return cph_onnx_node_fail(c, nd, "group %lld, input channels %lld and weights %lldx%lldx%lldx%lld "
                                  "contradict each other (need C = group x weight dim 1, K %% group = 0)",
                                  (long long)group, (long long)cin, (long long)w->shape.d[0],
                                  (long long)w->shape.d[1], (long long)w->shape.d[2],
                                  (long long)w->shape.d[3]);
    if (nd->n_input > 2 && nd->input[2] && nd->input[2][0]) {
        const cph_onnx_tensor *b;
        if ((st = cph_onnx_input(c, nd, 2, &b)) != CP_OK) return st;
        if (b->shape.rank != 1 || b->shape.d[0] != k)
            return cph_onnx_node_fail(c, nd, "bias of %d dims (first %lld) contradicts K = %lld",
                                      b->shape.rank, (long long)(b->shape.rank ? b->shape.d[0] : 0),
                                      (long long)k);
    }
    int64_t out[2];
    const int64_t in[2] = {x->shape.d[2], x->shape.d[3]};
    if ((st = cph_onnx_window(c, nd, in, kernel, stride, dil, pads, 0, out)) != CP_OK) return st;
    cp_shape s = cp_shape_init();
    s.n = c->o && c->o->batch > 0 ? c->o->batch : x->shape.d[0];
    s.c = cin;
    s.h = in[0];
    s.w = in[1];
    s.k = k;
    s.r = kernel[0];
    s.s = kernel[1];
    s.stride_h = stride[0];
    s.stride_w = stride[1];
    s.pad_top = pads[0];
    s.pad_left = pads[1];
    s.pad_bottom = pads[2];
    s.pad_right = pads[3];
    s.dil_h = dil[0];
    s.dil_w = dil[1];
    s.groups = group;
    char why[256];
    if (cp_shape_validate(&s, why, sizeof why) != CP_SHAPE_OK)
        return cph_onnx_node_fail(c, nd, "not a layer convpick can run: %s", why);
    char name[64];
    layer_name(nd, c->nconv + 1, name, sizeof name);
    c->nconv++;
    if (cph_layers_add(c->out, name, &s, 1) != CP_OK)
        return cpa_fail(CP_ENOMEM, c->msg, c->cap, "%s: out of memory", c->file);
    const cph_onnx_shape y = {4, {x->shape.d[0], k, out[0], out[1]}};
    return cph_onnx_output(c, nd, 0, &y);
}
