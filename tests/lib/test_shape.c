/* The shape API: output size, FLOP count, validation faults and their
 * messages, padding modes, and the canonical text form. */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>

#include "convpick/shape.h"
#include "tests/support/conv.h"

/* One axis: input, pad before, pad after, dilation, kernel, stride -> output. */
typedef struct {
    int64_t in, pa, pb, dil, ker, st, out;
    const char *source;
} axis_case;

static const axis_case axis_cases[] = {
    /* Hand-computed from floor((in + pa + pb - dil*(ker-1) - 1) / st) + 1
     * (common practice, no source). */
    {5, 0, 0, 1, 3, 1, 3, "common practice, no source"},
    {5, 1, 1, 1, 3, 1, 5, "common practice, no source"},
    {7, 0, 0, 1, 3, 2, 3, "common practice, no source"},   /* stride 2 */
    {8, 1, 1, 1, 3, 2, 4, "common practice, no source"},   /* stride 2, floor of 7/2 */
    {10, 0, 0, 1, 3, 3, 3, "common practice, no source"},  /* stride 3 */
    {11, 1, 1, 1, 3, 3, 4, "common practice, no source"},  /* stride 3, floor of 10/3 */
    {7, 0, 0, 2, 3, 1, 3, "common practice, no source"},   /* dilation 2: extent 5 */
    {9, 2, 2, 2, 3, 1, 9, "common practice, no source"},   /* dilation 2, same-size */
    {6, 1, 0, 1, 3, 1, 5, "common practice, no source"},   /* asymmetric padding */
    {6, 0, 2, 1, 3, 2, 3, "common practice, no source"},   /* asymmetric, stride 2 */
    {1, 0, 0, 1, 1, 1, 1, "common practice, no source"},   /* 1x1 on 1x1 */
    {4, 3, 3, 1, 4, 1, 7, "common practice, no source"},   /* full, even kernel: in+ker-1 */
    /* ResNet-50: He et al., "Deep Residual Learning for Image Recognition",
     * CVPR 2016, Table 1 (output sizes 112, 56, 28, 14, 7).  The table gives
     * kernel, stride and output size; the pads (3 for the 7x7 stem, 1 for
     * 3x3) are from memory. */
    {224, 3, 3, 1, 7, 2, 112, "ResNet-50 Table 1 conv1 (pad from memory)"},
    {56, 1, 1, 1, 3, 1, 56, "ResNet-50 Table 1 conv2_x 3x3"},
    {56, 0, 0, 1, 1, 2, 28, "ResNet-50 Table 1 conv3_1, stride-2 1x1"},
    {56, 1, 1, 1, 3, 2, 28, "ResNet-50 Table 1 conv3_1, stride-2 3x3 (pad from memory)"},
    {28, 1, 1, 1, 3, 2, 14, "ResNet-50 Table 1 conv4_1 (pad from memory)"},
    {14, 1, 1, 1, 3, 2, 7, "ResNet-50 Table 1 conv5_1 (pad from memory)"},
};

static void test_output_size_table(void **state) {
    (void)state;
    const size_t nc = sizeof axis_cases / sizeof axis_cases[0];
    for (size_t i = 0; i < nc; i++) {
        /* Height from case i, width from another case, so that the two
         * axes are shown not to leak into each other. */
        const axis_case *a = &axis_cases[i], *b = &axis_cases[nc - 1 - i];
        cp_shape s = cpt_shape(1, 1, a->in, b->in, 1, a->ker, b->ker);
        s.pad_top = a->pa; s.pad_bottom = a->pb; s.dil_h = a->dil; s.stride_h = a->st;
        s.pad_left = b->pa; s.pad_right = b->pb; s.dil_w = b->dil; s.stride_w = b->st;
        char msg[256];
        if (cp_shape_validate(&s, msg, sizeof msg) != CP_SHAPE_OK)
            fail_msg("case %zu (%s) invalid: %s", i, a->source, msg);
        if (cp_shape_out_h(&s) != a->out || cp_shape_out_w(&s) != b->out)
            fail_msg("case %zu (%s): got %lldx%lld, want %lldx%lld", i, a->source,
                     (long long)cp_shape_out_h(&s), (long long)cp_shape_out_w(&s),
                     (long long)a->out, (long long)b->out);
    }
}

static void test_flops_and_sizes(void **state) {
    (void)state;
    /* 2*N*K*(C/g)*R*S*P*Q, one multiply-add = 2 FLOPs (common practice, no
     * source); values computed by hand. */
    cp_shape s = cpt_shape(2, 4, 5, 7, 6, 3, 3);
    s.groups = 2; /* P=3, Q=5 */
    assert_int_equal(cp_shape_validate(&s, NULL, 0), CP_SHAPE_OK);
    assert_true(cp_shape_flops(&s) == 2.0 * 2 * 6 * 2 * 9 * 15); /* 6480 */
    assert_int_equal(cp_shape_input_elems(&s), 2 * 4 * 5 * 7);
    assert_int_equal(cp_shape_weight_elems(&s), 6 * 2 * 3 * 3);
    assert_int_equal(cp_shape_output_elems(&s), 2 * 6 * 3 * 5);

    /* ResNet-50 conv1 (He et al. 2016, Table 1: 7x7, 64, stride 2 on
     * 224x224x3; pad 3 from memory): 2*64*3*49*112*112 = 236027904. */
    cp_shape r = cpt_shape(1, 3, 224, 224, 64, 7, 7);
    r.stride_h = r.stride_w = 2;
    r.pad_top = r.pad_left = r.pad_bottom = r.pad_right = 3;
    assert_true(cp_shape_flops(&r) == 236027904.0);

    /* Depthwise 3x3, 32 channels, 14x14, pad 1: 2*32*1*9*196 = 112896
     * (common practice, no source). */
    cp_shape d = cpt_shape(1, 32, 14, 14, 32, 3, 3);
    d.groups = 32;
    d.pad_top = d.pad_left = d.pad_bottom = d.pad_right = 1;
    assert_true(cp_shape_flops(&d) == 112896.0);
    assert_int_equal(cp_shape_weight_elems(&d), 32 * 9);
}

/* Validation: every fault class, each with a message naming the field. */
typedef struct {
    cp_shape s;
    cp_shape_fault want;
    const char *needle; /* must appear in the message */
} fault_case;

static fault_case fc(cp_shape s, cp_shape_fault want, const char *needle) {
    fault_case f = {s, want, needle};
    return f;
}

static void test_validate_faults(void **state) {
    (void)state;
    const cp_shape ok = cpt_shape(1, 4, 8, 8, 4, 3, 3);
    fault_case cases[40];
    size_t n = 0;
    cp_shape s;
    /* Rules from convpick/shape.h; the cases are ours (common practice, no source). */
    s = ok; s.c = 0;            cases[n++] = fc(s, CP_SHAPE_NONPOSITIVE, "c=0");
    s = ok; s.h = -3;           cases[n++] = fc(s, CP_SHAPE_NONPOSITIVE, "h=-3");
    s = ok; s.n = 0;            cases[n++] = fc(s, CP_SHAPE_NONPOSITIVE, "n=0");
    s = ok; s.k = -1;           cases[n++] = fc(s, CP_SHAPE_NONPOSITIVE, "k=-1");
    s = ok; s.s = 0;            cases[n++] = fc(s, CP_SHAPE_NONPOSITIVE, "s=0");
    s = ok; s.stride_w = 0;     cases[n++] = fc(s, CP_SHAPE_NONPOSITIVE, "stride_w=0");
    s = ok; s.dil_h = 0;        cases[n++] = fc(s, CP_SHAPE_NONPOSITIVE, "dilation_h=0");
    s = ok; s.groups = 0;       cases[n++] = fc(s, CP_SHAPE_NONPOSITIVE, "groups=0");
    s = ok; s.pad_left = -1;    cases[n++] = fc(s, CP_SHAPE_NONPOSITIVE, "pad_left=-1");
    s = ok; s.c = 6; s.groups = 4; cases[n++] = fc(s, CP_SHAPE_GROUPS, "c=6 is not divisible by groups=4");
    s = ok; s.k = 6; s.groups = 4; cases[n++] = fc(s, CP_SHAPE_GROUPS, "k=6 is not divisible by groups=4");
    s = ok; s.h = 2;            cases[n++] = fc(s, CP_SHAPE_NO_OUTPUT, "output height");
    s = ok; s.w = 1; s.s = 2; s.dil_w = 3; s.pad_left = s.pad_right = 1;
                                cases[n++] = fc(s, CP_SHAPE_NO_OUTPUT, "output width");
    s = ok; s.pad_top = 3;      cases[n++] = fc(s, CP_SHAPE_PAD_TOO_BIG, "pad_top=3");
    s = ok; s.s = 1; s.pad_right = 1; cases[n++] = fc(s, CP_SHAPE_PAD_TOO_BIG, "pad_right=1");
    s = ok; s.dil_h = 2; s.pad_bottom = 5; cases[n++] = fc(s, CP_SHAPE_PAD_TOO_BIG, "pad_bottom=5");
    s = ok; s.h = (int64_t)1 << 31; cases[n++] = fc(s, CP_SHAPE_OVERFLOW, "h=2147483648");
    s = cpt_shape(1 << 20, 1 << 20, 1 << 20, 1 << 20, 1, 1, 1);
                                cases[n++] = fc(s, CP_SHAPE_OVERFLOW, "input");
    s = cpt_shape(1, 1 << 30, 3, 3, 1 << 30, 3, 3);
                                cases[n++] = fc(s, CP_SHAPE_OVERFLOW, "weights");
    s = cpt_shape(1, 1, 1 << 16, 1 << 16, 1 << 30, 1, 1);
                                cases[n++] = fc(s, CP_SHAPE_OVERFLOW, "output");
    s = cpt_shape(1, 1, 1 << 20, 1 << 20, 1, 1 << 20, 1 << 20);
    cp_shape_set_padding(&s, CP_PAD_FULL);
                                cases[n++] = fc(s, CP_SHAPE_OVERFLOW, "lowered matrix");
    s = ok; s.act_layout = (cp_act_layout)1; cases[n++] = fc(s, CP_SHAPE_LAYOUT, "layout");

    char first_msg[CP_SHAPE_LAYOUT + 1][256];
    memset(first_msg, 0, sizeof first_msg);
    for (size_t i = 0; i < n; i++) {
        char msg[256];
        cp_shape_fault f = cp_shape_validate(&cases[i].s, msg, sizeof msg);
        if (f != cases[i].want)
            fail_msg("case %zu (%s): fault %d, want %d; message: %s", i, cases[i].needle,
                     (int)f, (int)cases[i].want, msg);
        if (!strstr(msg, cases[i].needle))
            fail_msg("case %zu: message \"%s\" does not contain \"%s\"", i, msg,
                     cases[i].needle);
        if (!first_msg[f][0]) snprintf(first_msg[f], sizeof first_msg[f], "%s", msg);
        /* A NULL message buffer is allowed. */
        assert_int_equal(cp_shape_validate(&cases[i].s, NULL, 0), cases[i].want);
    }
    /* Every class was exercised and the classes' messages differ. */
    for (int a = CP_SHAPE_NONPOSITIVE; a <= CP_SHAPE_LAYOUT; a++) {
        if (!first_msg[a][0]) fail_msg("fault class %d not exercised", a);
        for (int b = a + 1; b <= CP_SHAPE_LAYOUT; b++)
            assert_string_not_equal(first_msg[a], first_msg[b]);
    }
    char msg[64] = "stale";
    assert_int_equal(cp_shape_validate(&ok, msg, sizeof msg), CP_SHAPE_OK);
    assert_string_equal(msg, "");
}

static cp_shape padded(int64_t h, int64_t w, int64_t r, int64_t s, int64_t st, int64_t dil,
                       cp_pad_mode flip) {
    cp_shape sh = cpt_shape(1, 1, h, w, 1, r, s);
    sh.stride_h = sh.stride_w = st;
    sh.dil_h = sh.dil_w = dil;
    cp_shape_set_padding(&sh, flip);
    return sh;
}

#define ASSERT_PADS(sh, t, l, b, rt)                                                     \
    do {                                                                                 \
        assert_int_equal((sh).pad_top, (t));                                             \
        assert_int_equal((sh).pad_left, (l));                                            \
        assert_int_equal((sh).pad_bottom, (b));                                          \
        assert_int_equal((sh).pad_right, (rt));                                          \
    } while (0)

static void test_padding_modes(void **state) {
    (void)state;
    cp_shape s;
    /* Worked cases, hand-computed from the rules in convpick/shape.h
     * (common practice, no source). */
    s = padded(5, 7, 3, 3, 1, 1, CP_PAD_VALID);
    ASSERT_PADS(s, 0, 0, 0, 0);
    assert_int_equal(cp_shape_out_h(&s), 3);
    assert_int_equal(cp_shape_out_w(&s), 5);

    s = padded(5, 7, 3, 2, 1, 1, CP_PAD_FULL);
    ASSERT_PADS(s, 2, 1, 2, 1);
    assert_int_equal(cp_shape_out_h(&s), 7); /* H + R - 1 */
    assert_int_equal(cp_shape_out_w(&s), 8);
    s = padded(5, 7, 3, 3, 1, 2, CP_PAD_FULL); /* dilation 2: pad 4 */
    ASSERT_PADS(s, 4, 4, 4, 4);
    assert_int_equal(cp_shape_out_h(&s), 9);

    /* SAME, stride 1: odd kernel symmetric; even kernel puts the extra row at
     * the bottom and the extra column at the right. */
    s = padded(5, 7, 3, 3, 1, 1, CP_PAD_SAME);
    ASSERT_PADS(s, 1, 1, 1, 1);
    s = padded(5, 7, 2, 4, 1, 1, CP_PAD_SAME); /* totals 1 and 3 */
    ASSERT_PADS(s, 0, 1, 1, 2);
    assert_int_equal(cp_shape_out_h(&s), 5);
    assert_int_equal(cp_shape_out_w(&s), 7);
    s = padded(6, 6, 5, 5, 1, 2, CP_PAD_SAME); /* dilated extent 9: total 8 */
    ASSERT_PADS(s, 4, 4, 4, 4);

    /* SAME, stride > 1: P = ceil(H/stride), only the pad needed. */
    s = padded(224, 224, 7, 7, 2, 1, CP_PAD_SAME); /* total 111*2+7-224 = 5 */
    ASSERT_PADS(s, 2, 2, 3, 3);
    assert_int_equal(cp_shape_out_h(&s), 112);
    s = padded(7, 8, 3, 3, 2, 1, CP_PAD_SAME); /* 7: total 2; 8: total 1 */
    ASSERT_PADS(s, 1, 0, 1, 1);
    assert_int_equal(cp_shape_out_h(&s), 4);
    assert_int_equal(cp_shape_out_w(&s), 4);
    s = padded(10, 11, 3, 3, 3, 1, CP_PAD_SAME); /* 10: total 2; 11: total 1 */
    ASSERT_PADS(s, 1, 0, 1, 1);
    assert_int_equal(cp_shape_out_h(&s), 4);
    assert_int_equal(cp_shape_out_w(&s), 4);
    s = padded(5, 5, 1, 1, 2, 1, CP_PAD_SAME); /* 1x1 stride 2 needs none */
    ASSERT_PADS(s, 0, 0, 0, 0);
    assert_int_equal(cp_shape_out_h(&s), 3);

    /* Property over a range (common practice, no source): SAME always gives
     * ceil(H/stride), a valid shape, and bottom - top in {0, 1}; FULL gives
     * floor((H + dil*(R-1) - 1) / stride) + 1. */
    for (int64_t h = 1; h <= 20; h++)
        for (int64_t r = 1; r <= 5; r++)
            for (int64_t st = 1; st <= 3; st++)
                for (int64_t dil = 1; dil <= 2; dil++) {
                    s = padded(h, 3, r, 1, st, dil, CP_PAD_SAME);
                    char msg[256];
                    if (cp_shape_validate(&s, msg, sizeof msg) != CP_SHAPE_OK)
                        fail_msg("SAME h=%lld r=%lld st=%lld dil=%lld: %s", (long long)h,
                                 (long long)r, (long long)st, (long long)dil, msg);
                    assert_int_equal(cp_shape_out_h(&s), (h + st - 1) / st);
                    assert_in_range(s.pad_bottom - s.pad_top, 0, 1);
                    s = padded(h, 3, r, 1, st, dil, CP_PAD_FULL);
                    assert_int_equal(cp_shape_validate(&s, NULL, 0), CP_SHAPE_OK);
                    assert_int_equal(cp_shape_out_h(&s), (h + dil * (r - 1) - 1) / st + 1);
                }
}

/* Reads "key=value,..." back into a shape: a parser local to the test, so
 * that the round trip does not depend on the CLI's. */
static int parse_back(const char *text, cp_shape *out) {
    *out = cp_shape_init();
    struct { const char *key; int64_t *f; } keys[] = {
        {"n", &out->n}, {"c", &out->c}, {"h", &out->h}, {"w", &out->w}, {"k", &out->k},
        {"r", &out->r}, {"s", &out->s}, {"stride_h", &out->stride_h},
        {"stride_w", &out->stride_w}, {"pad_top", &out->pad_top},
        {"pad_left", &out->pad_left}, {"pad_bottom", &out->pad_bottom},
        {"pad_right", &out->pad_right}, {"dilation_h", &out->dil_h},
        {"dilation_w", &out->dil_w}, {"groups", &out->groups},
    };
    const size_t nk = sizeof keys / sizeof keys[0];
    int seen = 0;
    const char *p = text;
    while (*p) {
        const char *eq = strchr(p, '=');
        if (!eq) return -1;
        size_t len = (size_t)(eq - p);
        size_t i;
        for (i = 0; i < nk; i++)
            if (strlen(keys[i].key) == len && strncmp(keys[i].key, p, len) == 0) break;
        if (i == nk) return -1;
        char *end;
        *keys[i].f = strtoll(eq + 1, &end, 10);
        if (end == eq + 1 || (*end != ',' && *end != '\0')) return -1;
        seen++;
        p = *end ? end + 1 : end;
    }
    return seen == (int)nk ? 0 : -1;
}

static void test_format_round_trip(void **state) {
    (void)state;
    cp_shape shapes[4];
    shapes[0] = cpt_shape(1, 64, 56, 56, 64, 3, 3);
    cp_shape_set_padding(&shapes[0], CP_PAD_SAME);
    shapes[1] = cpt_shape(3, 6, 13, 17, 4, 2, 5);
    shapes[1].stride_h = 2; shapes[1].stride_w = 3; shapes[1].dil_h = 2;
    shapes[1].groups = 2; shapes[1].pad_top = 1; shapes[1].pad_right = 4;
    shapes[2] = cpt_shape(1, 1, 1, 1, 1, 1, 1);
    shapes[3] = cpt_shape(1, 32, 14, 14, 32, 3, 3);
    shapes[3].groups = 32;
    cp_shape_set_padding(&shapes[3], CP_PAD_FULL);
    for (size_t i = 0; i < 4; i++) {
        char buf[512];
        int len = cp_shape_format(&shapes[i], buf, sizeof buf);
        assert_int_equal(len, (int)strlen(buf));
        cp_shape back;
        if (parse_back(buf, &back) != 0) fail_msg("cannot read back \"%s\"", buf);
        assert_true(cp_shape_equal(&shapes[i], &back));
        /* Truncation reports the full length, like snprintf. */
        char small[8];
        assert_int_equal(cp_shape_format(&shapes[i], small, sizeof small), len);
        assert_int_equal(strlen(small), sizeof small - 1);
    }
    /* cp_shape_equal notices a change in any one field. */
    const cp_shape base = shapes[1];
    int64_t *fields[] = {&shapes[1].n, &shapes[1].c, &shapes[1].h, &shapes[1].w,
                         &shapes[1].k, &shapes[1].r, &shapes[1].s, &shapes[1].stride_h,
                         &shapes[1].stride_w, &shapes[1].pad_top, &shapes[1].pad_left,
                         &shapes[1].pad_bottom, &shapes[1].pad_right, &shapes[1].dil_h,
                         &shapes[1].dil_w, &shapes[1].groups};
    for (size_t i = 0; i < sizeof fields / sizeof fields[0]; i++) {
        shapes[1] = base;
        *fields[i] += 1;
        assert_false(cp_shape_equal(&base, &shapes[1]));
    }
    shapes[1] = base;
    assert_true(cp_shape_equal(&base, &shapes[1]));
}

int main(void) {
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_output_size_table),
        cmocka_unit_test(test_flops_and_sizes),
        cmocka_unit_test(test_validate_faults),
        cmocka_unit_test(test_padding_modes),
        cmocka_unit_test(test_format_round_trip),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
