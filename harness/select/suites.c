/* Built-in suites: the convolution layers of published networks (and one
 * invented demo network), batch 1, so that verify, bench and tune can be run
 * on realistic shapes without a shape file.
 *
 * Every network is generated from its architecture table (stages, widths,
 * strides) rather than typed out layer by layer, and each conv layer of the
 * network is added once through cph_layers_add: layers of identical shape are
 * listed once with a count, so the counts of a suite sum to the number of
 * convolution layers of the network. */
#include <stdio.h>
#include <string.h>

#include "harness/select/suites.h"

typedef struct {
    cph_layer_list *out;
    cp_status st;
} builder;

/* Adds one conv layer: square kernel, square input, symmetric padding. */
static void conv(builder *b, const char *name, int64_t c, int64_t hw, int64_t k, int64_t r,
                 int64_t stride, int64_t pad, int64_t groups) {
    if (b->st != CP_OK) return;
    cp_shape s = cp_shape_init();
    s.n = 1;
    s.c = c;
    s.h = s.w = hw;
    s.k = k;
    s.r = s.s = r;
    s.stride_h = s.stride_w = stride;
    s.pad_top = s.pad_left = s.pad_bottom = s.pad_right = pad;
    s.groups = groups;
    if (cp_shape_validate(&s, NULL, 0) != CP_SHAPE_OK)
        b->st = CP_EINVAL; /* a defect in the tables below; the test suite catches it */
    else
        b->st = cph_layers_add(b->out, name, &s, 1);
}

/* ResNet-50: K. He, X. Zhang, S. Ren, J. Sun, "Deep Residual Learning for
 * Image Recognition", CVPR 2016, Table 1 (50-layer column), 224x224 input.
 * conv1 is 7x7/64 stride 2 (pad 3: 112x112 out); after the 3x3 stride-2 max
 * pool, four stages of bottleneck blocks [1x1, 3x3, 1x1] with 3, 4, 6, 3
 * blocks.  Stride placement: the paper's.  Table 1 says downsampling is done
 * by conv3_1, conv4_1 and conv5_1 with a stride of 2; the authors' original
 * models put that stride on the first layer of the block (from memory), so
 * here stride 2 sits on the first 1x1 of each downsampling block, not on the
 * 3x3 as in the common later variant.  The first block of every
 * stage has a 1x1 projection shortcut (option B of section 3.3) with the
 * block's stride.  49 + 4 projections = 53 conv layers.  The projection of
 * conv2_1 has the same shape as the blocks' last 1x1 (64->256 at 56x56) and is
 * counted under conv2_x.c.1x1. */
static void build_resnet50(builder *b) {
    conv(b, "conv1.7x7", 3, 224, 64, 7, 2, 3, 1);
    static const struct { int stage, blocks; int64_t width, in_hw, stride; } st[] = {
        {2, 3, 64, 56, 1}, {3, 4, 128, 56, 2}, {4, 6, 256, 28, 2}, {5, 3, 512, 14, 2}};
    int64_t cin = 64;
    for (size_t i = 0; i < sizeof st / sizeof st[0]; i++) {
        const int64_t wd = st[i].width, out_c = 4 * wd;
        const int64_t out_hw = st[i].in_hw / st[i].stride;
        char nm[64];
        for (int blk = 1; blk <= st[i].blocks; blk++) {
            const int first = blk == 1;
            const int64_t in_c = first ? cin : out_c;
            const int64_t hw = first ? st[i].in_hw : out_hw;
            const int64_t stride = first ? st[i].stride : 1;
            if (first)
                snprintf(nm, sizeof nm, "conv%d_1.a.1x1", st[i].stage);
            else
                snprintf(nm, sizeof nm, "conv%d_x.a.1x1", st[i].stage);
            conv(b, nm, in_c, hw, wd, 1, stride, 0, 1);
            snprintf(nm, sizeof nm, "conv%d_x.b.3x3", st[i].stage);
            conv(b, nm, wd, out_hw, wd, 3, 1, 1, 1);
            snprintf(nm, sizeof nm, "conv%d_x.c.1x1", st[i].stage);
            conv(b, nm, wd, out_hw, out_c, 1, 1, 0, 1);
            if (first) {
                snprintf(nm, sizeof nm, "conv%d_1.proj.1x1", st[i].stage);
                conv(b, nm, in_c, st[i].in_hw, out_c, 1, st[i].stride, 0, 1);
            }
        }
        cin = out_c;
    }
}

/* VGG-16: K. Simonyan, A. Zisserman, "Very Deep Convolutional Networks for
 * Large-Scale Image Recognition", ICLR 2015, Table 1 configuration D: 13 conv
 * layers, all 3x3 stride 1 with 1 pixel of padding so that the resolution is
 * preserved (section 2.1), 224x224 input, a 2x2 stride-2 max pool after each of
 * the five blocks (so blocks run at 224, 112, 56, 28, 14). */
static void build_vgg16(builder *b) {
    static const struct { int blk, convs; int64_t width, hw; } st[] = {
        {1, 2, 64, 224}, {2, 2, 128, 112}, {3, 3, 256, 56}, {4, 3, 512, 28}, {5, 3, 512, 14}};
    int64_t cin = 3;
    for (size_t i = 0; i < sizeof st / sizeof st[0]; i++)
        for (int j = 1; j <= st[i].convs; j++) {
            char nm[64];
            snprintf(nm, sizeof nm, "conv%d_%d", st[i].blk, j);
            conv(b, nm, cin, st[i].hw, st[i].width, 3, 1, 1, 1);
            cin = st[i].width;
        }
}

/* MobileNet v1: A. G. Howard, M. Zhu, B. Chen, D. Kalenichenko, W. Wang,
 * T. Weyand, M. Andreetto, H. Adam, "MobileNets: Efficient Convolutional
 * Neural Networks for Mobile Vision Applications", arXiv:1704.04861, 2017,
 * Table 1: width multiplier 1.0, 224x224.  A full 3x3/32 stride-2 conv, then
 * 13 depthwise-separable pairs: depthwise 3x3 (groups = C, pad 1) and
 * pointwise 1x1.  27 conv layers.  The table lists the last depthwise layer as
 * "s2" but gives 7x7 as the input of the layer after it (and of the 7x7
 * average pool), so it is taken as stride 1 here, following the table's sizes. */
static void build_mobilenet_v1(builder *b) {
    conv(b, "conv1.3x3", 3, 224, 32, 3, 2, 1, 1);
    static const struct { int64_t cin, cout, stride; } dw[] = {
        {32, 64, 1},   {64, 128, 2},  {128, 128, 1}, {128, 256, 2}, {256, 256, 1},
        {256, 512, 2}, {512, 512, 1}, {512, 512, 1}, {512, 512, 1}, {512, 512, 1},
        {512, 512, 1}, {512, 1024, 2}, {1024, 1024, 1}};
    int64_t hw = 112;
    for (size_t i = 0; i < sizeof dw / sizeof dw[0]; i++) {
        char nm[64];
        const int64_t out_hw = hw / dw[i].stride;
        snprintf(nm, sizeof nm, "conv%zu.dw.3x3", i + 2);
        conv(b, nm, dw[i].cin, hw, dw[i].cin, 3, dw[i].stride, 1, dw[i].cin);
        snprintf(nm, sizeof nm, "conv%zu.pw.1x1", i + 2);
        conv(b, nm, dw[i].cin, out_hw, dw[i].cout, 1, 1, 0, 1);
        hw = out_hw;
    }
}

/* trailcam-tiny: INVENTED demo data, not a published network.  The scenario:
 * a battery-powered trail camera that flags frames with animals runs a small
 * classifier on a 96x96 RGB thumbnail (input 1x3x96x96).  Eight conv layers
 * mixing a 5x5 stride-2 stem, 3x3 layers, one depthwise 3x3, a 1x1 and a
 * stride-2 3x3; block3.a and block3.b have the same shape, to show counting. */
static void build_demo(builder *b) {
    conv(b, "stem.5x5s2", 3, 96, 16, 5, 2, 2, 1);        /* 96 -> 48 */
    conv(b, "block1.3x3", 16, 48, 32, 3, 1, 1, 1);
    conv(b, "down1.3x3s2", 32, 48, 32, 3, 2, 1, 1);      /* 48 -> 24 */
    conv(b, "block2.dw3x3", 32, 24, 32, 3, 1, 1, 32);
    conv(b, "block2.pw1x1", 32, 24, 64, 1, 1, 0, 1);
    conv(b, "block3.a.3x3", 64, 24, 64, 3, 1, 1, 1);
    conv(b, "block3.b.3x3", 64, 24, 64, 3, 1, 1, 1);     /* same shape as block3.a */
    conv(b, "down2.3x3s2", 64, 24, 96, 3, 2, 1, 1);      /* 24 -> 12 */
}

typedef struct {
    const char *name;
    const char *source;
    void (*build)(builder *b);
} suite;

static const suite suites[] = {
    {"resnet50",
     "ResNet-50: He, Zhang, Ren & Sun, \"Deep Residual Learning for Image Recognition\", CVPR "
     "2016, Table 1; 224x224, batch 1; stride 2 on the first 1x1 of downsampling blocks (as in "
     "the paper); 53 conv layers incl. 4 projection shortcuts",
     build_resnet50},
    {"vgg16",
     "VGG-16: Simonyan & Zisserman, \"Very Deep Convolutional Networks for Large-Scale Image "
     "Recognition\", ICLR 2015, Table 1 configuration D; 224x224, batch 1; 13 conv layers",
     build_vgg16},
    {"mobilenet_v1",
     "MobileNet v1: Howard et al., \"MobileNets: Efficient Convolutional Neural Networks for "
     "Mobile Vision Applications\", arXiv:1704.04861, 2017, Table 1; width 1.0, 224x224, batch 1; "
     "27 conv layers (1 full, 13 depthwise, 13 pointwise)",
     build_mobilenet_v1},
    {"demo",
     "trailcam-tiny: invented demo network (a battery-powered trail camera that flags frames "
     "with animals), input 1x3x96x96, 8 conv layers; not a published network",
     build_demo},
};
#define NSUITES (sizeof suites / sizeof suites[0])

size_t cph_suite_count(void) { return NSUITES; }

const char *cph_suite_name(size_t i) { return i < NSUITES ? suites[i].name : NULL; }

const char *cph_suite_source(const char *name) {
    for (size_t i = 0; i < NSUITES; i++)
        if (strcmp(suites[i].name, name) == 0) return suites[i].source;
    return NULL;
}

cp_status cph_suite_load(const char *name, cph_layer_list *out, char *msg, size_t cap) {
    for (size_t i = 0; i < NSUITES; i++)
        if (strcmp(suites[i].name, name) == 0) {
            builder b = {out, CP_OK};
            suites[i].build(&b);
            if (b.st != CP_OK && msg && cap)
                snprintf(msg, cap, "suite %s: %s", name,
                         b.st == CP_ENOMEM ? "out of memory" : "internal: invalid layer table");
            return b.st;
        }
    if (msg && cap) {
        int off = snprintf(msg, cap, "--suite: unknown suite '%s' (known:", name);
        for (size_t i = 0; i < NSUITES && off >= 0 && (size_t)off < cap; i++)
            off += snprintf(msg + off, cap - (size_t)off, " %s", suites[i].name);
        if (off >= 0 && (size_t)off < cap) snprintf(msg + off, cap - (size_t)off, ")");
    }
    return CP_ENOTFOUND;
}
