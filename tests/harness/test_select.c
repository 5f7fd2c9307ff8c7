/* Shape selection: the spec parser, shape files, the built-in suites and the
 * shared selection options.  Suite checks compare against the papers' own
 * tables (layer counts, output sizes, totals of multiply-adds / parameters). */
#define _POSIX_C_SOURCE 200809L /* getpid, unlink */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <cmocka.h>

#include "harness/cli/options.h"
#include "harness/select/layers.h"
#include "harness/select/selection.h"
#include "harness/select/shape_spec.h"
#include "harness/select/shapefile.h"
#include "harness/select/suites.h"

/* --- helpers -------------------------------------------------------------- */

static cp_shape parse_ok(const char *spec) {
    cp_shape s;
    char msg[512] = "";
    cp_status st = cph_parse_shape(spec, NULL, &s, msg, sizeof msg);
    if (st != CP_OK) fail_msg("'%s' should parse, got: %s", spec, msg);
    return s;
}

/* The spec must fail and its message must contain every given fragment. */
static void parse_err(const char *spec, const char *ctx, ...) {
    cp_shape s;
    char msg[512] = "";
    cp_status st = cph_parse_shape(spec, ctx, &s, msg, sizeof msg);
    if (st == CP_OK) fail_msg("'%s' should be refused", spec);
    assert_int_equal(st, CP_EINVAL);
    va_list ap;
    va_start(ap, ctx);
    for (const char *frag = va_arg(ap, const char *); frag; frag = va_arg(ap, const char *))
        if (!strstr(msg, frag)) fail_msg("'%s': message '%s' lacks '%s'", spec, msg, frag);
    va_end(ap);
}

static char tmp_path[256];

static const char *write_tmp(const char *name, const char *text) {
    snprintf(tmp_path, sizeof tmp_path, "/tmp/convpick_test_select_%ld_%s", (long)getpid(), name);
    FILE *f = fopen(tmp_path, "w");
    assert_non_null(f);
    fputs(text, f);
    fclose(f);
    return tmp_path;
}

static const cph_layer *find_layer(const cph_layer_list *l, const char *name) {
    for (size_t i = 0; i < l->n; i++)
        if (strcmp(l->v[i].name, name) == 0) return &l->v[i];
    fail_msg("no layer named %s", name);
    return NULL;
}

static int total_count(const cph_layer_list *l) {
    int c = 0;
    for (size_t i = 0; i < l->n; i++) c += l->v[i].count;
    return c;
}

/* --- the spec parser ------------------------------------------------------ */

static void test_spec_full(void **state) {
    (void)state;
    /* The example of shape_spec.h. */
    cp_shape s = parse_ok("n=1,c=64,h=56,w=56,k=64,r=3,s=3,stride=1,pad=1");
    assert_int_equal(s.n, 1);
    assert_int_equal(s.c, 64);
    assert_int_equal(s.h, 56);
    assert_int_equal(s.w, 56);
    assert_int_equal(s.k, 64);
    assert_int_equal(s.r, 3);
    assert_int_equal(s.s, 3);
    assert_int_equal(s.stride_h, 1);
    assert_int_equal(s.stride_w, 1);
    assert_int_equal(s.pad_top, 1);
    assert_int_equal(s.pad_left, 1);
    assert_int_equal(s.pad_bottom, 1);
    assert_int_equal(s.pad_right, 1);
    assert_int_equal(s.dil_h, 1);
    assert_int_equal(s.groups, 1);
    assert_int_equal(cp_shape_out_h(&s), 56);
}

static void test_spec_defaults_and_keys(void **state) {
    (void)state;
    cp_shape s = parse_ok("c=3,h=10,w=12,k=4,r=5");
    assert_int_equal(s.n, 1);
    assert_int_equal(s.s, 5); /* s defaults to r */
    assert_int_equal(s.stride_h, 1);
    assert_int_equal(s.pad_top + s.pad_left + s.pad_bottom + s.pad_right, 0);
    assert_int_equal(s.dil_w, 1);
    assert_int_equal(s.groups, 1);

    s = parse_ok(" n = 2 , c=8,h=9,w=11,k=4,r=3,s=2,stride_h=2,stride_w=3,pad_h=1,pad_w=1,"
                 "dilation_h=2,dilation_w=1,groups=4");
    assert_int_equal(s.n, 2);
    assert_int_equal(s.s, 2);
    assert_int_equal(s.stride_h, 2);
    assert_int_equal(s.stride_w, 3);
    assert_int_equal(s.pad_top, 1);
    assert_int_equal(s.pad_bottom, 1);
    assert_int_equal(s.pad_left, 1);
    assert_int_equal(s.pad_right, 1);
    assert_int_equal(s.dil_h, 2);
    assert_int_equal(s.dil_w, 1);
    assert_int_equal(s.groups, 4);

    s = parse_ok("c=2,h=9,w=9,k=2,r=3,pad_top=0,pad_left=1,pad_bottom=2,pad_right=1,dilation=1");
    assert_int_equal(s.pad_top, 0);
    assert_int_equal(s.pad_left, 1);
    assert_int_equal(s.pad_bottom, 2);
    assert_int_equal(s.pad_right, 1);

    /* Depthwise: groups == c == k. */
    s = parse_ok("c=32,h=112,w=112,k=32,r=3,pad=1,groups=32");
    assert_int_equal(s.groups, 32);
    assert_int_equal(cp_shape_weight_elems(&s), 32 * 9);
}

static void test_spec_round_trip(void **state) {
    (void)state;
    const char *specs[] = {
        "n=3,c=6,h=17,w=13,k=9,r=3,s=5,stride_h=2,stride_w=1,pad_top=1,pad_left=2,"
        "pad_bottom=0,pad_right=3,dilation_h=1,dilation_w=2,groups=3",
        "c=64,h=56,w=56,k=64,r=3,pad=1",
        "c=4,h=9,w=9,k=4,r=3,stride=2,dilation=2,groups=4",
    };
    for (size_t i = 0; i < sizeof specs / sizeof specs[0]; i++) {
        cp_shape a = parse_ok(specs[i]);
        char buf[512];
        assert_true(cp_shape_format(&a, buf, sizeof buf) < (int)sizeof buf);
        cp_shape b = parse_ok(buf);
        assert_true(cp_shape_equal(&a, &b));
        assert_true(cph_shape_format_short(&a, buf, sizeof buf) < (int)sizeof buf);
        b = parse_ok(buf);
        assert_true(cp_shape_equal(&a, &b));
    }
}

static void test_spec_pad_modes(void **state) {
    (void)state;
    cp_shape s = parse_ok("c=1,h=8,w=8,k=1,r=3,pad=valid");
    assert_int_equal(s.pad_top + s.pad_left + s.pad_bottom + s.pad_right, 0);
    assert_int_equal(cp_shape_out_h(&s), 6);

    /* full: pad = dil*(kernel-1) each side (definition in shape.h); output
     * H + dil*(R-1): 8 + 2*2 = 12, 8 + 2*1 = 10. */
    s = parse_ok("c=1,h=8,w=8,k=1,r=3,s=2,dilation=2,pad=full");
    assert_int_equal(s.pad_top, 4);
    assert_int_equal(s.pad_bottom, 4);
    assert_int_equal(s.pad_left, 2);
    assert_int_equal(s.pad_right, 2);
    assert_int_equal(cp_shape_out_h(&s), 12);
    assert_int_equal(cp_shape_out_w(&s), 10);

    /* same: P = ceil(H / stride) (shape.h).  224 / 2 with a 7x7 kernel needs
     * a total of (112-1)*2 + 7 - 224 = 5 rows: 2 on top, 3 at the bottom. */
    s = parse_ok("pad=same,c=3,h=224,w=224,k=64,r=7,stride=2");
    assert_int_equal(s.pad_top, 2);
    assert_int_equal(s.pad_bottom, 3);
    assert_int_equal(cp_shape_out_h(&s), 112);
    assert_int_equal(cp_shape_out_w(&s), 112);
    /* The mode applies after all keys whatever the order. */
    cp_shape t = parse_ok("c=3,h=224,w=224,k=64,r=7,stride=2,pad=same");
    assert_true(cp_shape_equal(&s, &t));
    s = parse_ok("c=2,h=13,w=10,k=2,r=3,s=4,stride_h=3,stride_w=2,pad=same");
    assert_int_equal(cp_shape_out_h(&s), 5); /* ceil(13/3) */
    assert_int_equal(cp_shape_out_w(&s), 5); /* ceil(10/2) */
}

static void test_spec_syntax_errors(void **state) {
    (void)state;
    parse_err("c=3,h=8,w=8,k=4,r=3,q=1", NULL, "unknown key 'q'", NULL);
    parse_err("c=3,h=8,w=8,k=4,r3", NULL, "r3", "missing '='", NULL);
    parse_err("c=abc,h=8,w=8,k=4,r=3", NULL, "c=abc", "not a number", NULL);
    parse_err("c=3,h=8,w=8x,k=4,r=3", NULL, "w=8x", "trailing characters 'x'", NULL);
    parse_err("c=3,h=8,w=8,k=4,r=3,h=9", NULL, "h:", "given twice", NULL);
    parse_err("c=3,h=8,w=8,k=4,r=3,stride=2,stride_w=1", NULL, "stride_w", "conflicts", "stride",
              NULL);
    parse_err("c=3,h=8,w=8,k=4,r=3,pad=1,pad_left=0", NULL, "pad_left", "conflicts", NULL);
    parse_err("c=3,h=8,w=2147483648,k=4,r=3", NULL, "w=2147483648", "out of range", NULL);
    parse_err("c=3,h=8,w=8,k=-2147483649,r=3", NULL, "k=", "out of range", NULL);
    parse_err("c=3,h=8,w=8,k=4", NULL, "missing required key 'r'", NULL);
    parse_err("h=8,w=8,k=4,r=3", NULL, "missing required key 'c'", NULL);
    parse_err("c=3,h=8,w=8,k=4,r=3,pad=wide", NULL, "pad=wide", "valid|same|full", NULL);
    parse_err("c=3,h=8,w=,k=4,r=3", NULL, "w", "empty value", NULL);
    parse_err("c=3,,h=8,w=8,k=4,r=3", NULL, "empty", NULL);
    parse_err("", NULL, "empty shape spec", NULL);
    /* The context prefixes the message. */
    parse_err("c=3,h=8,w=8,k=4,r=3,z=1", "shapes.txt:12", "shapes.txt:12: ", "'z'", NULL);
}

/* Each invalid class of cp_shape_validate comes back with its own message
 * (texts of algos/core/shape.c), naming the field at fault. */
static void test_spec_invalid_classes(void **state) {
    (void)state;
    parse_err("c=0,h=8,w=8,k=4,r=3", NULL, "c=0", "at least 1", NULL);
    parse_err("c=3,h=8,w=8,k=4,r=3,stride=0", NULL, "stride_h=0", "at least 1", NULL);
    parse_err("c=3,h=8,w=8,k=4,r=3,pad_left=-1", NULL, "pad_left=-1", "negative", NULL);
    parse_err("c=3,h=8,w=8,k=4,r=3,groups=2", NULL, "c=3", "divisible by groups=2", NULL);
    parse_err("c=4,h=8,w=8,k=6,r=3,groups=4", NULL, "k=6", "divisible by groups=4", NULL);
    parse_err("c=3,h=2,w=8,k=4,r=5", NULL, "output height", NULL);
    parse_err("c=3,h=8,w=3,k=4,r=1,s=3,dilation_w=2", NULL, "output width", NULL);
    parse_err("c=3,h=8,w=8,k=4,r=3,pad_bottom=3", NULL, "pad_bottom=3", "only padding", NULL);
    parse_err("n=2147483647,c=2147483647,h=2147483647,w=2147483647,k=1,r=1", NULL, "overflow",
              NULL);
}

/* --- layer lists and shape files ------------------------------------------ */

static void test_layers_add_counts(void **state) {
    (void)state;
    cph_layer_list l = {0};
    cp_shape a = parse_ok("c=3,h=8,w=8,k=4,r=3"), b = parse_ok("c=3,h=8,w=8,k=4,r=3,pad=1");
    assert_int_equal(cph_layers_add(&l, "a", &a, 1), CP_OK);
    assert_int_equal(cph_layers_add(&l, "b", &b, 1), CP_OK);
    assert_int_equal(cph_layers_add(&l, "a2", &a, 2), CP_OK);
    assert_int_equal(cph_layers_add(&l, NULL, &a, 0), CP_EINVAL);
    assert_int_equal(l.n, 2);
    assert_string_equal(l.v[0].name, "a");
    assert_int_equal(l.v[0].count, 3);
    assert_int_equal(l.v[1].count, 1);
    cph_layers_free(&l);
    assert_int_equal(l.n, 0);
}

static void test_shape_file(void **state) {
    (void)state;
    const char *path = write_tmp("ok.txt",
                                 "# a comment line\n"
                                 "\n"
                                 "stem: c=3,h=32,w=32,k=8,r=3,pad=1   # trailing comment\n"
                                 "   c=8,h=32,w=32,k=8,r=1\n"
                                 "again: c=3,h=32,w=32,k=8,r=3,pad=1\n"
                                 "dw.3x3: c=8,h=32,w=32,k=8,r=3,pad=1,groups=8");
    cph_layer_list l = {0};
    char msg[512] = "";
    cp_status st = cph_load_shape_file(path, &l, msg, sizeof msg);
    unlink(path);
    if (st != CP_OK) fail_msg("%s", msg);
    assert_int_equal(l.n, 3);
    assert_string_equal(l.v[0].name, "stem");
    assert_int_equal(l.v[0].count, 2); /* "again" has the same shape */
    assert_string_equal(l.v[1].name, "layer2");
    assert_int_equal(l.v[1].shape.r, 1);
    assert_string_equal(l.v[2].name, "dw.3x3");
    assert_int_equal(l.v[2].shape.groups, 8);
    cph_layers_free(&l);
}

static void shape_file_err(const char *text, const char *frag1, const char *frag2) {
    const char *path = write_tmp("bad.txt", text);
    char where[300];
    snprintf(where, sizeof where, "%s%s", path, frag1);
    cph_layer_list l = {0};
    char msg[512] = "";
    cp_status st = cph_load_shape_file(path, &l, msg, sizeof msg);
    unlink(path);
    cph_layers_free(&l);
    if (st == CP_OK) fail_msg("file '%s' should be refused", text);
    if (!strstr(msg, where)) fail_msg("message '%s' lacks '%s'", msg, where);
    if (frag2 && !strstr(msg, frag2)) fail_msg("message '%s' lacks '%s'", msg, frag2);
}

static void test_shape_file_errors(void **state) {
    (void)state;
    shape_file_err("# ok\nc=3,h=8,w=8,k=4,r=3\nx: c=3,h=8,w=8,k=4,r=3,strid=2\n", ":3:",
                   "unknown key 'strid'");
    shape_file_err("\n\nc=3,h=8,w=8,k=4,r=3,groups=2\n", ":3:", "groups=2");
    shape_file_err("c=3,h=8,w=8,k=4\n", ":1:", "missing required key 'r'");
    shape_file_err("bad name: c=3,h=8,w=8,k=4,r=3\n", ":1:", "layer name");
    shape_file_err(": c=3,h=8,w=8,k=4,r=3\n", ":1:", "empty layer name");
    shape_file_err("# only comments\n\n", ": no layers", NULL);
    /* A line far over the limit is an error, not a crash or a split line. */
    size_t big = 100000;
    char *text = malloc(big + 64);
    assert_non_null(text);
    strcpy(text, "c=3,h=8,w=8,k=4,r=3\nc=3,h=8,w=8,k=4,r=3,n=1");
    size_t len = strlen(text);
    memset(text + len, ' ', big);
    text[len + big] = '\0';
    shape_file_err(text, ":2:", "longer than");
    free(text);

    cph_layer_list l = {0};
    char msg[256];
    assert_int_equal(cph_load_shape_file("/nonexistent/dir/shapes.txt", &l, msg, sizeof msg),
                     CP_EIO);
    assert_non_null(strstr(msg, "/nonexistent/dir/shapes.txt"));
}

/* --- suites --------------------------------------------------------------- */

static void load_suite(const char *name, cph_layer_list *l) {
    char msg[256] = "";
    cp_status st = cph_suite_load(name, l, msg, sizeof msg);
    if (st != CP_OK) fail_msg("suite %s: %s", name, msg);
    for (size_t i = 0; i < l->n; i++) {
        char why[256];
        if (cp_shape_validate(&l->v[i].shape, why, sizeof why) != CP_SHAPE_OK)
            fail_msg("%s %s: %s", name, l->v[i].name, why);
        assert_true(l->v[i].count >= 1);
    }
}

static double macs(const cph_layer_list *l) {
    double m = 0;
    for (size_t i = 0; i < l->n; i++) m += l->v[i].count * cp_shape_flops(&l->v[i].shape) / 2.0;
    return m;
}

static double weights(const cph_layer_list *l) {
    double w = 0;
    for (size_t i = 0; i < l->n; i++)
        w += l->v[i].count * (double)cp_shape_weight_elems(&l->v[i].shape);
    return w;
}

static void test_suite_list(void **state) {
    (void)state;
    assert_int_equal(cph_suite_count(), 4);
    for (size_t i = 0; i < cph_suite_count(); i++) {
        assert_non_null(cph_suite_name(i));
        assert_non_null(cph_suite_source(cph_suite_name(i)));
    }
    assert_null(cph_suite_name(cph_suite_count()));
    cph_layer_list l = {0};
    char msg[256];
    assert_int_equal(cph_suite_load("alexnet", &l, msg, sizeof msg), CP_ENOTFOUND);
    assert_non_null(strstr(msg, "resnet50"));
    assert_int_equal(l.n, 0);
}

/* He et al., CVPR 2016, Table 1, 50-layer column. */
static void test_suite_resnet50(void **state) {
    (void)state;
    cph_layer_list l = {0};
    load_suite("resnet50", &l);
    /* 1 + 3*(3+4+6+3) = 49 weighted layers + 4 projection shortcuts. */
    assert_int_equal(total_count(&l), 53);
    /* Table 1, "output size" column: conv1 112x112, conv2_x 56, conv3_x 28,
     * conv4_x 14, conv5_x 7. */
    const struct { const char *name; int64_t out, k; } t[] = {
        {"conv1.7x7", 112, 64},         {"conv2_x.b.3x3", 56, 64},
        {"conv2_x.c.1x1", 56, 256},     {"conv3_1.a.1x1", 28, 128},
        {"conv3_x.b.3x3", 28, 128},     {"conv4_x.b.3x3", 14, 256},
        {"conv4_x.c.1x1", 14, 1024},    {"conv5_x.b.3x3", 7, 512},
        {"conv5_x.c.1x1", 7, 2048},     {"conv5_1.proj.1x1", 7, 2048},
    };
    for (size_t i = 0; i < sizeof t / sizeof t[0]; i++) {
        const cph_layer *L = find_layer(&l, t[i].name);
        assert_int_equal(cp_shape_out_h(&L->shape), t[i].out);
        assert_int_equal(cp_shape_out_w(&L->shape), t[i].out);
        assert_int_equal(L->shape.k, t[i].k);
    }
    /* Block counts 3, 4, 6, 3 (Table 1) show in the 3x3 layers' counts. */
    assert_int_equal(find_layer(&l, "conv2_x.b.3x3")->count, 3);
    assert_int_equal(find_layer(&l, "conv3_x.b.3x3")->count, 4);
    assert_int_equal(find_layer(&l, "conv4_x.b.3x3")->count, 6);
    assert_int_equal(find_layer(&l, "conv5_x.b.3x3")->count, 3);
    /* The paper's stride placement: stride 2 on the first 1x1. */
    assert_int_equal(find_layer(&l, "conv3_1.a.1x1")->shape.stride_h, 2);
    assert_int_equal(find_layer(&l, "conv3_x.b.3x3")->shape.stride_h, 1);
    /* Table 1, last row: 3.8 x 10^9 FLOPs (multiply-adds) for ResNet-50.  The
     * convs plus the 2048x1000 fc must round to that; moving the stride onto
     * the 3x3 would run the three first 1x1 layers of conv3_1, conv4_1, conv5_1 at
     * 4x the pixels, 0.23e9 more (4.09e9).  Our total is 3.86e9. */
    const double total = macs(&l) + 2048.0 * 1000.0;
    assert_true(total > 3.75e9 && total < 3.9e9);
    cph_layers_free(&l);
}

/* Simonyan & Zisserman, ICLR 2015, Table 1 configuration D. */
static void test_suite_vgg16(void **state) {
    (void)state;
    cph_layer_list l = {0};
    load_suite("vgg16", &l);
    assert_int_equal(total_count(&l), 13);
    for (size_t i = 0; i < l.n; i++) {
        assert_int_equal(l.v[i].shape.r, 3);
        assert_int_equal(cp_shape_out_h(&l.v[i].shape), l.v[i].shape.h); /* pad 1 keeps size */
    }
    assert_int_equal(find_layer(&l, "conv1_1")->shape.h, 224);
    assert_int_equal(find_layer(&l, "conv5_1")->shape.h, 14); /* after four 2x2 pools */
    assert_int_equal(find_layer(&l, "conv3_2")->count, 2);    /* conv3_2 = conv3_3 */
    assert_int_equal(find_layer(&l, "conv5_1")->count, 3);
    /* Table 2: 138 million parameters for D.  Conv weights + biases + the
     * three fc layers of Table 1 (7*7*512 -> 4096 -> 4096 -> 1000). */
    double bias = 0;
    for (size_t i = 0; i < l.n; i++) bias += l.v[i].count * (double)l.v[i].shape.k;
    const double fc = 25088.0 * 4096 + 4096 + 4096.0 * 4096 + 4096 + 4096.0 * 1000 + 1000;
    const double params = weights(&l) + bias + fc;
    assert_true(params > 137.5e6 && params < 138.5e6);
    cph_layers_free(&l);
}

/* Howard et al., arXiv 2017, Table 1. */
static void test_suite_mobilenet_v1(void **state) {
    (void)state;
    cph_layer_list l = {0};
    load_suite("mobilenet_v1", &l);
    int full = 0, dw = 0, pw = 0;
    for (size_t i = 0; i < l.n; i++) {
        const cp_shape *s = &l.v[i].shape;
        if (s->groups == s->c && s->groups > 1) {
            assert_int_equal(s->r, 3);
            assert_int_equal(s->pad_top, 1);
            dw += l.v[i].count;
        } else if (s->r == 1)
            pw += l.v[i].count;
        else
            full += l.v[i].count;
    }
    assert_int_equal(full, 1);
    assert_int_equal(dw, 13);
    assert_int_equal(pw, 13);
    assert_int_equal(total_count(&l), 27);
    /* Table 1 input sizes: first conv 224 -> 112; the five 512-channel
     * pairs at 14x14; the last pointwise layer takes 7x7x1024. */
    assert_int_equal(cp_shape_out_h(&find_layer(&l, "conv1.3x3")->shape), 112);
    const cph_layer *d = find_layer(&l, "conv8.dw.3x3");
    assert_int_equal(d->shape.h, 14);
    assert_int_equal(d->count, 5);
    const cph_layer *last = find_layer(&l, "conv14.pw.1x1");
    assert_int_equal(last->shape.h, 7);
    assert_int_equal(last->shape.c, 1024);
    assert_int_equal(last->shape.k, 1024);
    assert_int_equal(cp_shape_out_h(&last->shape), 7);
    /* The paper's model comparison gives 569 million mult-adds and 4.2 million
     * parameters for 1.0 MobileNet-224 (from memory); add the 1024x1000 fc. */
    const double m = macs(&l) + 1024.0 * 1000;
    assert_true(m > 568.5e6 && m < 569.5e6);
    const double p = weights(&l) + 1024.0 * 1000 + 1000;
    assert_true(p > 4.15e6 && p < 4.25e6);
    cph_layers_free(&l);
}

/* The invented demo network: 8 conv layers, one pair identical. */
static void test_suite_demo(void **state) {
    (void)state;
    cph_layer_list l = {0};
    load_suite("demo", &l);
    assert_int_equal(total_count(&l), 8);
    assert_int_equal(l.n, 7);
    assert_int_equal(find_layer(&l, "block3.a.3x3")->count, 2);
    const cph_layer *stem = find_layer(&l, "stem.5x5s2");
    assert_int_equal(stem->shape.r, 5);
    assert_int_equal(cp_shape_out_h(&stem->shape), 48);
    assert_int_equal(find_layer(&l, "block2.dw3x3")->shape.groups, 32);
    cph_layers_free(&l);
}

/* --- selection options ---------------------------------------------------- */

/* Runs cph_opt_selection with stderr sent to a file; returns its result and
 * leaves the one error line (without the newline) in line. */
static int opt_sel(cph_selection *sel, int opt, const char *arg, char *line, size_t cap) {
    fflush(stderr);
    FILE *tmp = tmpfile();
    assert_non_null(tmp);
    const int saved = dup(fileno(stderr));
    assert_true(saved >= 0);
    assert_true(dup2(fileno(tmp), fileno(stderr)) >= 0);
    const int rc = cph_opt_selection("test", sel, opt, arg);
    fflush(stderr);
    assert_true(dup2(saved, fileno(stderr)) >= 0);
    close(saved);
    rewind(tmp);
    line[0] = '\0';
    if (fgets(line, (int)cap, tmp)) line[strcspn(line, "\n")] = '\0';
    char extra[64];
    /* common practice, no source: one line per error, never two */
    assert_null(fgets(extra, sizeof extra, tmp));
    fclose(tmp);
    return rc;
}

static void test_selection(void **state) {
    (void)state;
    cph_selection sel;
    char msg[512];
    cph_selection_init(&sel);
    assert_int_equal(sel.seed, 1);
    static const cp_flip both[] = {CP_XCORR, CP_CONV};
    /* Nothing selected: an error. */
    assert_int_equal(cph_selection_finish(&sel, both, 2, msg, sizeof msg), CP_EINVAL);
    assert_int_equal(opt_sel(&sel, CPH_OPT_SHAPE, "c=3,h=8,w=8,k=4,r=3", msg, sizeof msg), 0);
    assert_int_equal(opt_sel(&sel, CPH_OPT_SHAPE, "c=3,h=8,w=8,k=4,r=3", msg, sizeof msg), 0);
    assert_int_equal(sel.layers.n, 1);
    assert_int_equal(sel.layers.v[0].count, 2);
    assert_int_equal(opt_sel(&sel, CPH_OPT_SHAPE, "c=3,h=8", msg, sizeof msg), 2);
    assert_non_null(strstr(msg, "convpick test: --shape: 'c=3,h=8': missing required key 'w'"));
    assert_int_equal(opt_sel(&sel, CPH_OPT_SUITE, "demo", msg, sizeof msg), 0);
    assert_int_equal(sel.layers.n, 8);
    assert_int_equal(opt_sel(&sel, CPH_OPT_ALGO, "direct,nosuch", msg, sizeof msg), 2);
    assert_non_null(strstr(msg, "convpick test: --algo: unknown algorithm 'nosuch'"));
    sel.nalgos = 0;
    assert_int_equal(opt_sel(&sel, CPH_OPT_ALGO, "direct,direct", msg, sizeof msg), 0);
    assert_int_equal(sel.nalgos, 1);
    assert_int_equal(opt_sel(&sel, CPH_OPT_FLIP, "conv", msg, sizeof msg), 2);
    assert_string_equal(msg, "convpick test: --flip: 'conv' is not no, yes or both");
    assert_int_equal(opt_sel(&sel, CPH_OPT_FLIP, "yes", msg, sizeof msg), 0);
    assert_int_equal(opt_sel(&sel, CPH_OPT_SEED, "-1", msg, sizeof msg), 2);
    assert_int_equal(opt_sel(&sel, CPH_OPT_SEED, "12x", msg, sizeof msg), 2);
    assert_string_equal(msg, "convpick test: --seed: '12x' is not an integer in [0, 2^64)");
    assert_int_equal(opt_sel(&sel, CPH_OPT_SEED, "18446744073709551615", msg, sizeof msg), 0);
    assert_true(sel.seed == UINT64_MAX);
    assert_int_equal(cph_selection_finish(&sel, both, 2, msg, sizeof msg), CP_OK);
    assert_int_equal(sel.nflips, 1);
    assert_int_equal(sel.flips[0], CP_CONV);
    assert_int_equal(sel.nalgos, 1);
    cph_selection_free(&sel);

    /* Defaults: every registered algorithm, the command's flips. */
    cph_selection_init(&sel);
    assert_int_equal(opt_sel(&sel, CPH_OPT_SUITE, "demo", msg, sizeof msg), 0);
    assert_int_equal(opt_sel(&sel, CPH_OPT_FLIP, "both", msg, sizeof msg), 0);
    assert_int_equal(sel.nflips, 2);
    sel.nflips = 0;
    assert_int_equal(cph_selection_finish(&sel, both, 2, msg, sizeof msg), CP_OK);
    assert_int_equal(sel.nalgos, cp_algo_count());
    assert_int_equal(sel.nflips, 2);
    /* The words human output prints for the orientations. */
    assert_string_equal(cph_flip_word(CP_XCORR), "no");
    assert_string_equal(cph_flip_word(CP_CONV), "yes");
    cph_selection_free(&sel);
}

int main(void) {
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_spec_full),
        cmocka_unit_test(test_spec_defaults_and_keys),
        cmocka_unit_test(test_spec_round_trip),
        cmocka_unit_test(test_spec_pad_modes),
        cmocka_unit_test(test_spec_syntax_errors),
        cmocka_unit_test(test_spec_invalid_classes),
        cmocka_unit_test(test_layers_add_counts),
        cmocka_unit_test(test_shape_file),
        cmocka_unit_test(test_shape_file_errors),
        cmocka_unit_test(test_suite_list),
        cmocka_unit_test(test_suite_resnet50),
        cmocka_unit_test(test_suite_vgg16),
        cmocka_unit_test(test_suite_mobilenet_v1),
        cmocka_unit_test(test_suite_demo),
        cmocka_unit_test(test_selection),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
