/* The ONNX importer (harness/model/) against an outside reference: the
 * models of tests/data/onnx/ were built with python3-onnx's helper API and
 * every tensor shape in their .expect files comes from ONNX's own
 * onnx.shape_inference.infer_shapes (scripts/gen_onnx_fixtures.py; ONNX
 * 1.12, opset 17).  Each check names that source beside it. */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>

#include "harness/model/onnx_import.h"
#include "harness/select/suites.h"

#define DATA CP_TEST_DATA "/onnx/"

typedef struct imported {
    cph_layer_list l;
    cph_onnx_tensors t;
    cp_status st;
    char msg[1024];
} imported;

static void import(const char *name, int64_t batch, int64_t h, int64_t w, imported *r) {
    char path[512];
    snprintf(path, sizeof path, DATA "%s", name);
    memset(r, 0, sizeof *r);
    const cph_onnx_opts o = {batch, h, w};
    r->st = cph_onnx_import(path, &o, &r->l, &r->t, r->msg, sizeof r->msg);
}

static void release(imported *r) {
    cph_layers_free(&r->l);
    cph_onnx_tensors_free(&r->t);
}

/* The layer holding this name (one of its names). */
static const cph_layer *find(const cph_layer_list *l, const char *name) {
    for (size_t i = 0; i < l->n; i++) {
        const char *names = cph_layer_names(&l->v[i]);
        const size_t n = strlen(name);
        for (const char *p = names; p; p = strchr(p, ',') ? strchr(p, ',') + 1 : NULL)
            if (strncmp(p, name, n) == 0 && (p[n] == ',' || p[n] == '\0')) return &l->v[i];
    }
    return NULL;
}

/* Every line of model.expect against the import: tensors (all of the
 * intermediate shapes) and each Conv's input N C H W, weights K R S, group.
 * Returns the number of checks made. */
static int compare_expect(const char *model, const imported *r) {
    char path[512];
    snprintf(path, sizeof path, DATA "%s.expect", model);
    FILE *f = fopen(path, "r");
    assert_non_null(f);
    char line[512];
    int checks = 0;
    while (fgets(line, sizeof line, f)) {
        char name[256], dims[256];
        long long n, c, h, w, k, rr, s, g;
        if (sscanf(line, "tensor %255s %255s", name, dims) == 2) {
            /* Source: onnx.shape_inference.infer_shapes (the .expect file). */
            const cph_onnx_tensor *e = cph_onnx_find(&r->t, name);
            if (!e) fail_msg("%s: tensor %s not propagated", model, name);
            char ours[256];
            cph_onnx_shape_format(&e->shape, ours, sizeof ours);
            if (strcmp(ours, dims) != 0)
                fail_msg("%s: tensor %s is %s here, infer_shapes says %s", model, name, ours, dims);
            checks++;
        } else if (sscanf(line, "conv %255s %lld %lld %lld %lld %lld %lld %lld %lld", name, &n, &c,
                          &h, &w, &k, &rr, &s, &g) == 9) {
            /* Source: infer_shapes' input shape, the weights' dims, the node's group. */
            const cph_layer *L = find(&r->l, name);
            if (!L) fail_msg("%s: no layer named %s", model, name);
            const cp_shape *x = &L->shape;
            if (x->n != n || x->c != c || x->h != h || x->w != w || x->k != k || x->r != rr ||
                x->s != s || x->groups != g)
                fail_msg("%s: layer %s is n=%lld,c=%lld,h=%lld,w=%lld,k=%lld,r=%lld,s=%lld,g=%lld; "
                         "expected %lld %lld %lld %lld %lld %lld %lld %lld",
                         model, name, (long long)x->n, (long long)x->c, (long long)x->h,
                         (long long)x->w, (long long)x->k, (long long)x->r, (long long)x->s,
                         (long long)x->groups, n, c, h, w, k, rr, s, g);
            /* Our output size (from our pads) against infer_shapes' is in the tensor lines. */
            checks++;
        }
    }
    fclose(f);
    return checks;
}

static void check_model(const char *model, int64_t batch, int64_t h, int64_t w, int min_checks) {
    char file[128];
    snprintf(file, sizeof file, "%s.onnx", model);
    imported r;
    import(file, batch, h, w, &r);
    if (r.st != CP_OK) fail_msg("%s: %s", model, r.msg);
    const int checks = compare_expect(model, &r);
    if (checks < min_checks) fail_msg("%s: only %d checks (expected >= %d)", model, checks, min_checks);
    release(&r);
}

static void test_small_cnn(void **state) {
    (void)state;
    check_model("small_cnn", 0, 0, 0, 30);
    /* Identical shapes keep every name and a count (our rule, layers.h; the two
     * convs of block1 are built identical by the generator). */
    imported r;
    import("small_cnn.onnx", 0, 0, 0, &r);
    const cph_layer *L = find(&r.l, "block1.conv2");
    assert_non_null(L);
    assert_string_equal(cph_layer_names(L), "block1.conv1,block1.conv2");
    assert_int_equal(L->count, 2);
    assert_int_equal(r.l.n, 5);
    assert_int_equal(cph_layers_total(&r.l), 6);
    release(&r);
}

static void test_autopad(void **state) {
    (void)state;
    check_model("autopad", 0, 0, 0, 11);
    /* ONNX Conv operator document: SAME_* pads so that out = ceil(in / stride),
     * "the extra padding is added at the end for SAME_UPPER and at the
     * beginning for SAME_LOWER".  In 15x17, kernel 4, stride 2: out 8x9,
     * total pad (8-1)*2+4-15 = 3 and (9-1)*2+4-17 = 3. */
    imported r;
    import("autopad.onnx", 0, 0, 0, &r);
    const cph_layer *up = find(&r.l, "same_upper"), *lo = find(&r.l, "same_lower");
    assert_non_null(up);
    assert_non_null(lo);
    assert_int_equal(up->shape.pad_top, 1);
    assert_int_equal(up->shape.pad_bottom, 2);
    assert_int_equal(up->shape.pad_left, 1);
    assert_int_equal(up->shape.pad_right, 2);
    assert_int_equal(lo->shape.pad_top, 2);
    assert_int_equal(lo->shape.pad_bottom, 1);
    assert_int_equal(lo->shape.pad_left, 2);
    assert_int_equal(lo->shape.pad_right, 1);
    /* VALID: no padding (the same document). */
    const cph_layer *v = find(&r.l, "valid");
    assert_non_null(v);
    assert_int_equal(v->shape.pad_top + v->shape.pad_left + v->shape.pad_bottom + v->shape.pad_right, 0);
    release(&r);
}

static void test_groups_dilation(void **state) {
    (void)state;
    check_model("groups", 0, 0, 0, 10);
    imported r;
    import("groups.onnx", 0, 0, 0, &r);
    const cph_layer *d = find(&r.l, "dilated_lower");
    assert_non_null(d);
    /* Source: the node's dilations attribute as the generator wrote it. */
    assert_int_equal(d->shape.dil_h, 2);
    assert_int_equal(d->shape.dil_w, 3);
    release(&r);
}

static void test_symbolic(void **state) {
    (void)state;
    /* infer_shapes on the same graph with N=2, H=20, W=24 (the .expect file). */
    check_model("symbolic", 2, 20, 24, 6);
    imported r;
    import("symbolic.onnx", 0, 0, 0, &r);
    assert_int_equal(r.st, CP_EFORMAT);
    if (!strstr(r.msg, "symbolic ('N')") || !strstr(r.msg, "--batch"))
        fail_msg("message '%s' should name the symbolic dim and --batch", r.msg);
    release(&r);
    import("symbolic.onnx", 2, 0, 0, &r);
    if (r.st == CP_OK || !strstr(r.msg, "--input-size")) fail_msg("'%s' should ask for --input-size", r.msg);
    release(&r);
}

/* The published networks rebuilt as graphs by the generator (weights as graph
 * inputs): every tensor against infer_shapes, and the Conv layers equal to the
 * built-in suite, shape for shape with counts -- the suites come from the
 * papers' tables (harness/select/suites.c cites them), the model's sizes from
 * propagation, so the two share nothing but the papers. */
static void published(const char *name, long long nlayers) {
    check_model(name, 0, 0, 0, 20);
    char file[64];
    snprintf(file, sizeof file, "%s.onnx", name);
    imported r;
    import(file, 0, 0, 0, &r);
    assert_int_equal(r.st, CP_OK);
    cph_layer_list suite = {0};
    char msg[256];
    assert_int_equal(cph_suite_load(name, &suite, msg, sizeof msg), CP_OK);
    assert_int_equal(r.l.n, suite.n);
    assert_int_equal(cph_layers_total(&r.l), nlayers); /* the paper's conv count */
    assert_int_equal(cph_layers_total(&suite), nlayers);
    for (size_t i = 0; i < suite.n; i++) {
        size_t j = 0;
        while (j < r.l.n && !cp_shape_equal(&r.l.v[j].shape, &suite.v[i].shape)) j++;
        if (j == r.l.n) fail_msg("%s: the suite's %s is not in the model", name, suite.v[i].name);
        if (r.l.v[j].count != suite.v[i].count)
            fail_msg("%s: %s counts %d in the model, %d in the suite", name, suite.v[i].name,
                     r.l.v[j].count, suite.v[i].count);
    }
    cph_layers_free(&suite);
    release(&r);
}

static void test_published(void **state) {
    (void)state;
    published("resnet50", 53);     /* He et al. 2016, Table 1: 49 + 4 projections */
    published("vgg16", 13);        /* Simonyan & Zisserman 2015, Table 1 D */
    published("mobilenet_v1", 27); /* Howard et al. 2017, Table 1 */
}

/* Bad input: one line naming the file (and the node), the status, and (for an
 * operator that cannot be propagated) the layers found before it.  Common
 * practice, no source: the messages are ours. */
static void bad(const char *file, cp_status want, const char *frag1, const char *frag2) {
    imported r;
    import(file, 0, 0, 0, &r);
    if (r.st != want) fail_msg("%s: status %d (expected %d): %s", file, r.st, want, r.msg);
    if (!strstr(r.msg, file) || !strstr(r.msg, frag1) || (frag2 && !strstr(r.msg, frag2)))
        fail_msg("%s: message '%s' lacks '%s'/'%s'", file, r.msg, frag1, frag2 ? frag2 : "");
    if (strchr(r.msg, '\n')) fail_msg("%s: message '%s' is more than one line", file, r.msg);
    release(&r);
}

static void test_bad_input(void **state) {
    (void)state;
    bad("truncated.onnx", CP_EFORMAT, "not an ONNX model", NULL);
    bad("garbage.onnx", CP_EFORMAT, "not an ONNX model", NULL);
    bad("not_model.onnx", CP_EFORMAT, "not an ONNX model", "no graph");
    bad("no_conv.onnx", CP_EFORMAT, "no Conv node", NULL);
    bad("bad_init_size.onnx", CP_EFORMAT, "initializer 'w'", "100 bytes");
    bad("bad_kernel.onnx", CP_EFORMAT, "node 'c1' (Conv)", "kernel_shape 5x5");
    bad("bad_group.onnx", CP_EFORMAT, "node 'c1' (Conv)", "group 2");
    bad("huge_dims.onnx", CP_EFORMAT, "graph input 'x'", "1099511627776");
    bad("node_order.onnx", CP_EFORMAT, "node 'early' (Relu)", "'z'");
    bad("unsupported.onnx", CP_EUNSUPPORTED, "node 'norm1' (LRN)", "cannot be propagated");
    imported r;
    import("unsupported.onnx", 0, 0, 0, &r);
    assert_int_equal(r.l.n, 1); /* the layer before LRN stays listed */
    assert_string_equal(r.l.v[0].name, "first");
    release(&r);
    import("missing.onnx", 0, 0, 0, &r);
    assert_int_equal(r.st, CP_EIO);
    release(&r);
}

int main(void) {
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_small_cnn),       cmocka_unit_test(test_autopad),
        cmocka_unit_test(test_groups_dilation), cmocka_unit_test(test_symbolic),
        cmocka_unit_test(test_bad_input),       cmocka_unit_test(test_published),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
