/* The bounding roof bench prints under depthwise rows (harness/bench/bench_roof.h)
 * on an invented machine, so the result never depends on the test machine.
 *
 * Worked example (hand arithmetic, checked here): MobileNet v1's conv2.dw
 * (Howard et al. 2017, Table 1: 3x3 depthwise, 32 channels, 112x112, stride 1)
 * moves at least 4 (32*112*112 in + 32*112*112 out + 32*9 weights + 32 bias)
 * = 3 212 544 bytes and does 2 * 9 * 32*112*112 = 7 225 344 FLOPs.  With L2
 * 2 MiB per core it fits the L2s of two threads, not of one; at 30 GB/s (L3)
 * the bytes take 107.1 us and at 100 GFLOP/s the FLOPs 72.3 us: bound by L3. */
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <string.h>

#include <cmocka.h>

#include "harness/bench/bench_roof.h"

static cph_roofs invented(void) {
    cph_roofs r;
    memset(&r, 0, sizeof r);
    r.peak_1core_gflops = 100.0;
    r.peak_all_gflops = 190.0;
    r.bw_1core_gbs = 5.0;
    r.bw_all_gbs = 8.0;
    r.bw_l2_1core_gbs = 80.0;
    r.bw_l2_all_gbs = 150.0;
    r.bw_l3_1core_gbs = 30.0;
    r.bw_l3_all_gbs = 50.0;
    r.cores_used = 2;
    return r;
}

static cp_shape conv2_dw(void) {
    cp_shape s = cp_shape_init();
    s.n = 1; s.c = 32; s.h = 112; s.w = 112; s.k = 32; s.r = 3; s.s = 3;
    s.pad_top = s.pad_left = s.pad_bottom = s.pad_right = 1;
    s.groups = 32;
    return s;
}

static void test_worked_example(void **state) {
    (void)state;
    const cph_roofs r = invented();
    const cp_cache_sizes c = {48 << 10, 2 << 20, 256 << 20, 64};
    const cp_shape s = conv2_dw();
    cph_layer_roof lr;
    assert_int_equal(cph_layer_roof_of(&r, &c, &s, 1, &lr), 1);
    assert_true(lr.bytes == 3212544.0);
    assert_string_equal(lr.level, "L3");
    assert_true(fabs(lr.mem_s - 3212544.0 / 30e9) < 1e-12);
    assert_true(fabs(lr.fma_s - 7225344.0 / 100e9) < 1e-12);
    assert_string_equal(lr.bound, "memory");
    /* two threads: the L2s of both cores hold it, all-core L2 bandwidth */
    assert_int_equal(cph_layer_roof_of(&r, &c, &s, 2, &lr), 1);
    assert_string_equal(lr.level, "L2");
    assert_true(lr.gbs == 150.0 && lr.peak_gflops == 190.0);
    /* L2 at 150 GB/s: 21.4 us against 38.0 us of FMA time: the FMA peak bounds it */
    assert_string_equal(lr.bound, "FMA");
}

static void test_levels(void **state) {
    (void)state;
    cph_roofs r = invented();
    const cp_cache_sizes c = {48 << 10, 2 << 20, 4 << 20, 64}; /* a 4 MiB L3 */
    cp_shape s = conv2_dw();
    s.c = s.k = s.groups = 128; /* 12.8 MB: past L3, memory */
    cph_layer_roof lr;
    assert_int_equal(cph_layer_roof_of(&r, &c, &s, 1, &lr), 1);
    assert_string_equal(lr.level, "memory");
    assert_true(lr.gbs == 5.0);
    s.c = s.k = s.groups = 4; /* 0.4 MB: one core's L2 */
    assert_int_equal(cph_layer_roof_of(&r, &c, &s, 1, &lr), 1);
    assert_string_equal(lr.level, "L2");
    assert_true(lr.gbs == 80.0);
    r.peak_1core_gflops = 0; /* no roofs measured: nothing to say */
    assert_int_equal(cph_layer_roof_of(&r, &c, &s, 1, &lr), 0);
}

int main(void) {
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_worked_example),
        cmocka_unit_test(test_levels),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
