/* What the report computes (harness/report/report_model.c, report_roofs.c)
 * and the text buffer's escaping (harness/io/textbuf.c), on invented inputs
 * with results worked by hand. */
#include <jansson.h>
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <string.h>

#include <cmocka.h>

#include "harness/io/textbuf.h"
#include "harness/report/report.h"

static cp_shape conv3x3(void) {
    cp_shape s = cp_shape_init();
    s.n = 1, s.c = 64, s.h = 56, s.w = 56, s.k = 64, s.r = 3, s.s = 3;
    s.pad_top = s.pad_left = s.pad_bottom = s.pad_right = 1;
    return s;
}

/* Worked by hand: FLOPs = 2 * 64 * 64 * 9 * 56 * 56 = 231 211 008; bytes =
 * 4 * (64*56*56 + 64*64*9 + 64*56*56) = 4 * 438 272 = 1 753 088;
 * intensity = 131.89... FLOP/byte; at 1 ms, 231.21 GFLOP/s. */
static void test_intensity_worked_example(void **state) {
    (void)state;
    const cp_shape s = conv3x3();
    assert_true(fabs(cph_rep_intensity(&s) - 231211008.0 / 1753088.0) < 1e-9);
    assert_true(fabs(cph_rep_gflops(&s, 1e-3) - 231.211008) < 1e-9);
}

/* Roofs at any depth, by suffix; threads from "threads", "1core" or cores_used. */
static void test_roofs_lenient(void **state) {
    (void)state;
    json_t *r = json_loads("{\"peak_1core_gflops\": 100, \"bw_all_gbs\": 20, \"cores_used\": 4,"
                           " \"note\": \"x\", \"negative_gflops\": -1,"
                           " \"v\": [{\"isa\": \"w512\", \"threads\": 2, \"gflops\": 300}]}",
                           0, NULL);
    assert_non_null(r);
    cph_rep_source s;
    memset(&s, 0, sizeof s);
    cph_rep_roofs_read(r, 8, &s);
    json_decref(r);
    assert_int_equal(s.nroofs, 3);
    assert_string_equal(s.roofs[0].name, "peak_1core_gflops");
    assert_true(s.roofs[0].compute && s.roofs[0].threads == 1 && s.roofs[0].value == 100);
    assert_string_equal(s.roofs[1].name, "bw_all_gbs");
    assert_true(!s.roofs[1].compute && s.roofs[1].threads == 4);
    assert_string_equal(s.roofs[2].name, "v.w512.gflops");
    assert_true(s.roofs[2].compute && s.roofs[2].threads == 2 && s.roofs[2].value == 300);
}

/* Two layers (counts 3 and 1), two algorithms, one of them unmeasured on
 * the second layer: totals worked by hand. */
static void test_totals(void **state) {
    (void)state;
    cph_rep_cand c1[3] = {{"fast", "", 1.0, 0, 0, 0, NAN}, {"slow", "", 4.0, 0, 0, 0, NAN},
                          {"fast", "x=2", 0.5, 0, 0, 0, NAN}};
    cph_rep_cand c2[1] = {{"fast", "", 2.0, 0, 0, 0, NAN}};
    cph_rep_entry e[2];
    memset(e, 0, sizeof e);
    e[0].threads = e[1].threads = 1;
    e[0].count = 3, e[0].cands = c1, e[0].ncands = 3, e[0].choice = 0;
    e[1].count = 1, e[1].cands = c2, e[1].ncands = 1, e[1].choice = 0;
    cph_rep_source s;
    memset(&s, 0, sizeof s);
    s.entries = e, s.nentries = 2;
    const cph_rep_total ch = cph_rep_total_choice(&s, 1);
    assert_true(fabs(ch.seconds - (3 * 1.0 + 2.0)) < 1e-12 && ch.layers == 2);
    const cph_rep_total fast = cph_rep_total_algo(&s, 1, "fast"); /* its best: 0.5 */
    assert_true(fabs(fast.seconds - (3 * 0.5 + 2.0)) < 1e-12 && fast.missing == 0);
    const cph_rep_total slow = cph_rep_total_algo(&s, 1, "slow");
    assert_true(fabs(slow.seconds - 12.0) < 1e-12 && slow.layers == 1 && slow.missing == 1);
    assert_true(cph_rep_total_choice(&s, 2).layers == 0);
}

/* The five XML special characters (XML 1.0, section 2.4 and 4.6). */
static void test_escaping(void **state) {
    (void)state;
    cph_textbuf b = {NULL, 0, 0, 0};
    cph_tb_escaped(&b, "<a & 'b' \"c\">");
    assert_false(b.failed);
    assert_string_equal(b.buf, "&lt;a &amp; &#39;b&#39; &quot;c&quot;&gt;");
    cph_tb_free(&b);
}

int main(void) {
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_intensity_worked_example),
        cmocka_unit_test(test_roofs_lenient),
        cmocka_unit_test(test_totals),
        cmocka_unit_test(test_escaping),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
