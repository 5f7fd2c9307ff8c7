#!/usr/bin/python3
"""Builds the small ONNX models of tests/data/onnx/ and, for each, the shapes
ONNX's own shape inference gives (the outside reference of tests/harness/
test_onnx.c).

Run with /usr/bin/python3 and Debian's python3-onnx (scripts/deps installs
it): models are built with onnx.helper, checked with onnx.checker, and every
tensor shape comes from onnx.shape_inference.infer_shapes (ONNX 1.12: IR
version 8, opset 17).  Weights are zeros (only their shapes matter) or graph
inputs, so that the committed files stay a few KB.

Output per model NAME: NAME.onnx and NAME.expect, whose lines are
  tensor TENSOR D0xD1x...   (infer_shapes: every input, value_info, output)
  conv NODE N C H W K R S GROUP   (infer_shapes' shape of the Conv's input,
                                   the weights' dims, the node's group)
Usage: scripts/gen_onnx_fixtures.py [OUTDIR]   (default tests/data/onnx)
"""
import os
import sys

import numpy as np
import onnx
from onnx import TensorProto, helper, numpy_helper, shape_inference

OPSET = 17


class G:
    """A graph under construction."""

    def __init__(self, name):
        self.name = name
        self.nodes, self.inits, self.inputs, self.n = [], [], [], 0

    def t(self, prefix):
        self.n += 1
        return f"{prefix}_{self.n}"

    def inp(self, name, dims):
        self.inputs.append(helper.make_tensor_value_info(name, TensorProto.FLOAT, dims))
        return name

    def const(self, name, arr):
        self.inits.append(numpy_helper.from_array(np.asarray(arr), name))
        return name

    def node(self, op, ins, name=None, nout=1, **attrs):
        outs = [self.t(op.lower()) for _ in range(nout)]
        self.nodes.append(helper.make_node(op, ins, outs, name=name or outs[0], **attrs))
        return outs[0] if nout == 1 else outs

    def conv(self, x, cin, k, r, name, weights_as_input=False, group=1, bias=False, **attrs):
        w = name + ".weight"
        dims = [k, cin // group, r, r]
        if weights_as_input:
            self.inp(w, dims)
        else:
            self.const(w, np.zeros(dims, np.float32))
        ins = [x, w]
        if bias:
            ins.append(self.const(name + ".bias", np.zeros([k], np.float32)))
        return self.node("Conv", ins, name=name, group=group, **attrs)

    def model(self, outputs):
        g = helper.make_graph(self.nodes, self.name, self.inputs, [], self.inits)
        m = helper.make_model(g, opset_imports=[helper.make_opsetid("", OPSET)],
                              producer_name="convpick fixtures")
        m.ir_version = 8
        # The outputs' types as shape inference gives them (the checker wants them).
        known = {vi.name: vi for vi in shape_inference.infer_shapes(m).graph.value_info}
        m.graph.output.extend([known[o] for o in outputs if o in known])
        onnx.checker.check_model(m)
        return m


def small_cnn():
    """A small CNN with every operator the importer propagates."""
    g = G("small_cnn")
    x = g.inp("image", [1, 3, 32, 32])
    y = g.conv(x, 3, 8, 3, "stem", pads=[1, 1, 1, 1], bias=True)
    bn = [g.const(f"bn.{p}", np.ones([8], np.float32)) for p in ("s", "b", "m", "v")]
    y = g.node("BatchNormalization", [y] + bn)
    y = g.node("Relu", [y])
    p = g.node("MaxPool", [y], kernel_shape=[3, 3], strides=[2, 2], pads=[1, 1, 1, 1])
    a = g.conv(p, 8, 8, 3, "block1.conv1", pads=[1, 1, 1, 1])
    a = g.node("Clip", [a, g.const("lo", np.float32(0)), g.const("hi", np.float32(6))])
    a = g.conv(a, 8, 8, 3, "block1.conv2", pads=[1, 1, 1, 1])
    a = g.node("Add", [a, p])
    s = g.conv(p, 8, 8, 1, "side")
    s = g.node("HardSwish", [s])
    s = g.node("Mul", [s, g.node("Sigmoid", [s])])
    c = g.node("Concat", [a, s], axis=1)
    c = g.node("HardSigmoid", [c])
    c = g.node("Pad", [c, g.const("pads", np.array([0, 0, 1, 2, 0, 0, 1, 0], np.int64))])
    c = g.conv(c, 16, 16, 3, "after_pad", strides=[2, 2])
    c = g.node("AveragePool", [c], kernel_shape=[3, 3], strides=[2, 2], ceil_mode=1)
    c = g.node("Resize", [c, "", g.const("scales", np.array([1, 1, 2, 2], np.float32))],
               mode="nearest")
    c = g.node("Identity", [c])
    c = g.node("Dropout", [c])
    c = g.conv(c, 16, 32, 3, "after_resize", pads=[1, 1, 1, 1])
    c = g.node("GlobalAveragePool", [c])
    f = g.node("Flatten", [c])
    f = g.node("Gemm", [f, g.const("fc.w", np.zeros([10, 32], np.float32))], transB=1)
    r = g.node("Reshape", [f, g.const("shape", np.array([0, 2, -1], np.int64))])
    m = g.node("MatMul", [r, g.const("mm.w", np.zeros([5, 4], np.float32))])
    return g.model([m])


def autopad():
    """One Conv per auto_pad mode, asymmetric explicit pads, odd sizes."""
    g = G("autopad")
    x = g.inp("x", [2, 4, 15, 17])
    outs = [
        g.conv(x, 4, 6, 3, "notset_asym", pads=[1, 0, 2, 1], strides=[2, 1]),
        g.conv(x, 4, 6, 3, "valid", auto_pad="VALID", strides=[2, 2]),
        g.conv(x, 4, 6, 4, "same_upper", auto_pad="SAME_UPPER", strides=[2, 2]),
        g.conv(x, 4, 6, 4, "same_lower", auto_pad="SAME_LOWER", strides=[2, 2]),
        g.conv(x, 4, 6, 3, "same_upper_s1", auto_pad="SAME_UPPER"),
    ]
    return g.model(outs)


def groups():
    """Grouped, depthwise and dilated convolutions; weights as graph inputs."""
    g = G("groups")
    x = g.inp("x", [1, 16, 20, 20])
    y = g.conv(x, 16, 32, 3, "grouped", group=4, pads=[1, 1, 1, 1])
    y = g.conv(y, 32, 32, 3, "depthwise", group=32, pads=[1, 1, 1, 1], strides=[2, 2],
               weights_as_input=True)
    y = g.conv(y, 32, 8, 3, "dilated", dilations=[2, 2], pads=[2, 2, 2, 2])
    y = g.conv(y, 8, 8, 3, "dilated_lower", dilations=[2, 3], auto_pad="SAME_LOWER",
               weights_as_input=True)
    return g.model([y])


def symbolic(concrete):
    """A symbolic batch, height and width (concrete: the sizes the test gives)."""
    g = G("symbolic")
    x = g.inp("x", [2, 3, 20, 24] if concrete else ["N", 3, "H", "W"])
    y = g.conv(x, 3, 8, 3, "c1", pads=[1, 1, 1, 1])
    y = g.node("Relu", [y])
    y = g.conv(y, 8, 8, 3, "c2", strides=[2, 2])
    return g.model([y])


def unsupported():
    """A Conv, an operator the importer does not propagate (LRN), a Conv."""
    g = G("unsupported")
    x = g.inp("x", [1, 3, 16, 16])
    y = g.conv(x, 3, 8, 3, "first")
    y = g.node("LRN", [y], name="norm1", size=3)
    y = g.conv(y, 8, 8, 3, "second")
    return g.model([y])


# --- the published networks of the built-in suites, rebuilt as graphs ------
# Weights are graph inputs (shapes only, no data), so the files stay small.
# The Conv layers must come out equal to --suite NAME, shape for shape with
# counts; every size between them is propagated from the 1x3x224x224 input
# (and compared with infer_shapes like every other model).

def bn_relu(g, y, c, relu=True):
    ps = [g.inp(f"{g.t('bn')}.{p}", [c]) for p in ("s", "b", "m", "v")]
    y = g.node("BatchNormalization", [y] + ps)
    return g.node("Relu", [y]) if relu else y


def head(g, y, c, classes=1000):
    y = g.node("GlobalAveragePool", [y])
    y = g.node("Flatten", [y])
    return g.node("Gemm", [y, g.inp("fc.weight", [classes, c])], transB=1)


def resnet50():
    """He et al., CVPR 2016, Table 1 (50-layer); stride 2 on the first 1x1 of a
    downsampling block, projection shortcuts on every stage's first block."""
    g = G("resnet50")
    y = g.conv(g.inp("image", [1, 3, 224, 224]), 3, 64, 7, "conv1", strides=[2, 2],
               pads=[3, 3, 3, 3], weights_as_input=True)
    y = bn_relu(g, y, 64)
    y = g.node("MaxPool", [y], kernel_shape=[3, 3], strides=[2, 2], pads=[1, 1, 1, 1])
    cin = 64
    for stage, blocks, width, stride in ((2, 3, 64, 1), (3, 4, 128, 2), (4, 6, 256, 2),
                                         (5, 3, 512, 2)):
        for blk in range(1, blocks + 1):
            s = stride if blk == 1 else 1
            nm = f"conv{stage}_{blk}"
            a = g.conv(y, cin, width, 1, nm + ".a", strides=[s, s], weights_as_input=True)
            a = bn_relu(g, a, width)
            a = g.conv(a, width, width, 3, nm + ".b", pads=[1, 1, 1, 1], weights_as_input=True)
            a = bn_relu(g, a, width)
            a = g.conv(a, width, 4 * width, 1, nm + ".c", weights_as_input=True)
            a = bn_relu(g, a, 4 * width, relu=False)
            sc = y
            if blk == 1:
                sc = g.conv(y, cin, 4 * width, 1, nm + ".proj", strides=[s, s],
                            weights_as_input=True)
                sc = bn_relu(g, sc, 4 * width, relu=False)
            y = g.node("Relu", [g.node("Add", [a, sc])])
            cin = 4 * width
    return g.model([head(g, y, cin)])


def vgg16():
    """Simonyan & Zisserman, ICLR 2015, Table 1 configuration D."""
    g = G("vgg16")
    y, cin = g.inp("image", [1, 3, 224, 224]), 3
    for blk, convs, width in ((1, 2, 64), (2, 2, 128), (3, 3, 256), (4, 3, 512), (5, 3, 512)):
        for j in range(1, convs + 1):
            y = g.conv(y, cin, width, 3, f"conv{blk}_{j}", pads=[1, 1, 1, 1], weights_as_input=True)
            y = g.node("Relu", [y])
            cin = width
        y = g.node("MaxPool", [y], kernel_shape=[2, 2], strides=[2, 2])
    y = g.node("Flatten", [y])
    for i, (n_in, n_out) in enumerate(((25088, 4096), (4096, 4096), (4096, 1000))):
        y = g.node("Gemm", [y, g.inp(f"fc{i + 6}.weight", [n_out, n_in])], transB=1)
        if i < 2:
            y = g.node("Dropout", [g.node("Relu", [y])])
    return g.model([y])


def mobilenet_v1():
    """Howard et al., arXiv:1704.04861, Table 1, width 1.0; the last depthwise
    layer at stride 1 (the table's sizes), as the built-in suite takes it."""
    g = G("mobilenet_v1")
    y = g.conv(g.inp("image", [1, 3, 224, 224]), 3, 32, 3, "conv1", strides=[2, 2],
               pads=[1, 1, 1, 1], weights_as_input=True)
    y = bn_relu(g, y, 32)
    pairs = ((32, 64, 1), (64, 128, 2), (128, 128, 1), (128, 256, 2), (256, 256, 1),
             (256, 512, 2), (512, 512, 1), (512, 512, 1), (512, 512, 1), (512, 512, 1),
             (512, 512, 1), (512, 1024, 2), (1024, 1024, 1))
    for i, (cin, cout, s) in enumerate(pairs):
        y = g.conv(y, cin, cin, 3, f"conv{i + 2}.dw", group=cin, strides=[s, s],
                   pads=[1, 1, 1, 1], weights_as_input=True)
        y = bn_relu(g, y, cin)
        y = g.conv(y, cin, cout, 1, f"conv{i + 2}.pw", weights_as_input=True)
        y = bn_relu(g, y, cout)
    return g.model([head(g, y, 1024)])


def unchecked(name, nodes, inputs, inits):
    """A model the checker would refuse: the bad inputs of the importer."""
    g = helper.make_graph(nodes, name, inputs, [], inits)
    m = helper.make_model(g, opset_imports=[helper.make_opsetid("", OPSET)])
    m.ir_version = 8
    return m


def bad_models(outdir):
    x = helper.make_tensor_value_info("x", TensorProto.FLOAT, [1, 3, 8, 8])
    w = numpy_helper.from_array(np.zeros([4, 3, 3, 3], np.float32), "w")
    conv = helper.make_node("Conv", ["x", "w"], ["y"], name="c1")
    short = onnx.TensorProto()
    short.CopyFrom(w)
    short.raw_data = short.raw_data[:100]  # 25 floats where dims say 108
    models = {
        "bad_init_size": unchecked("b", [conv], [x], [short]),
        "bad_kernel": unchecked("b", [helper.make_node("Conv", ["x", "w"], ["y"], name="c1",
                                                        kernel_shape=[5, 5])], [x], [w]),
        "bad_group": unchecked("b", [helper.make_node("Conv", ["x", "w"], ["y"], name="c1",
                                                       group=2)], [x], [w]),
        "huge_dims": unchecked("b", [conv], [helper.make_tensor_value_info(
            "x", TensorProto.FLOAT, [1, 3, 1 << 40, 8])], [w]),
        "no_conv": unchecked("b", [helper.make_node("Relu", ["x"], ["y"], name="r")], [x], []),
        "node_order": unchecked("b", [helper.make_node("Relu", ["z"], ["y2"], name="early"),
                                      conv], [x], [w]),
    }
    for name, m in models.items():
        with open(os.path.join(outdir, name + ".onnx"), "wb") as f:
            f.write(m.SerializeToString())
    # A protobuf message that is not a model (an AttributeProto whose fields a
    # ModelProto does not use: it decodes, with no graph).
    with open(os.path.join(outdir, "not_model.onnx"), "wb") as f:
        f.write(onnx.AttributeProto(i=5, type=onnx.AttributeProto.INT).SerializeToString())


def write(outdir, name, m, expect_from=None):
    path = os.path.join(outdir, name + ".onnx")
    onnx.save(m, path)
    inf = shape_inference.infer_shapes(expect_from or m, strict_mode=True)
    inits = {t.name: list(t.dims) for t in inf.graph.initializer}
    shapes = {}
    lines = [f"# {name}.onnx: tensor shapes from onnx.shape_inference.infer_shapes "
             f"(onnx {onnx.__version__}, opset {OPSET}); scripts/gen_onnx_fixtures.py"]
    for vi in list(inf.graph.input) + list(inf.graph.value_info) + list(inf.graph.output):
        dims = [d.dim_value for d in vi.type.tensor_type.shape.dim]
        shapes[vi.name] = dims
        if vi.name not in inits:
            lines.append(f"tensor {vi.name} {'x'.join(map(str, dims)) or 'scalar'}")
    for n in inf.graph.node:
        if n.op_type != "Conv":
            continue
        xs, ws = shapes.get(n.input[0]), inits.get(n.input[1]) or shapes.get(n.input[1])
        if xs is None or ws is None:
            continue  # after an unsupported operator: nothing to compare
        group = next((a.i for a in n.attribute if a.name == "group"), 1)
        lines.append(f"conv {n.name} {xs[0]} {xs[1]} {xs[2]} {xs[3]} {ws[0]} {ws[2]} {ws[3]} {group}")
    with open(os.path.join(outdir, name + ".expect"), "w") as f:
        f.write("\n".join(lines) + "\n")


def main():
    outdir = sys.argv[1] if len(sys.argv) > 1 else "tests/data/onnx"
    os.makedirs(outdir, exist_ok=True)
    write(outdir, "small_cnn", small_cnn())
    write(outdir, "autopad", autopad())
    write(outdir, "groups", groups())
    write(outdir, "symbolic", symbolic(False), expect_from=symbolic(True))
    write(outdir, "resnet50", resnet50())
    write(outdir, "vgg16", vgg16())
    write(outdir, "mobilenet_v1", mobilenet_v1())
    um = unsupported()
    write(outdir, "unsupported", um)
    data = small_cnn().SerializeToString()
    with open(os.path.join(outdir, "truncated.onnx"), "wb") as f:
        f.write(data[: len(data) // 2])
    bad_models(outdir)
    with open(os.path.join(outdir, "garbage.onnx"), "wb") as f:
        f.write(b"\xff\xfe this is not a protobuf message \x00\x01\x02\xff" * 3)


if __name__ == "__main__":
    main()
