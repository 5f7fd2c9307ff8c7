/* Roofs, for sanity only (never for speed): with a tiny budget every figure
 * is positive and finite and the ridge is peak over bandwidth; a synthetic
 * machine is refused; the device roof is the widest width; the AVX-512, AVX2
 * and portable peak kernels agree on their arithmetic (same recurrence, x <- x*a + b, to within float rounding). */
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>

#include <cmocka.h>

#include "tests/support/suite.h"

#include "loader/cpuid.h"
#include "harness/machine/machine.h"
#include "harness/machine/roofs.h"

static void test_roofs_sane(void **state) {
    (void)state;
    cph_machine m;
    char msg[256] = "";
    assert_int_equal(cph_machine_detect(&m, NULL, msg, sizeof msg), CP_OK);
    cph_roofs r;
    assert_int_equal(cph_roofs_measure(&m, 0.05, &r, msg, sizeof msg), CP_OK);
    const double v[] = {r.peak_1core_gflops, r.peak_all_gflops, r.bw_1core_gbs, r.bw_all_gbs,
                        r.ridge_1core, r.ridge_all};
    for (size_t i = 0; i < sizeof v / sizeof v[0]; i++) assert_true(isfinite(v[i]) && v[i] > 0.0);
    assert_true(fabs(r.ridge_1core - r.peak_1core_gflops / r.bw_1core_gbs) < 1e-9 * r.ridge_1core);
    assert_int_equal(r.cores_used, m.cores);
    /* The device roof is the widest width measured, and the widths are what
     * cpuid + xgetbv allow (issue: roofs at every vector width). */
    assert_true(r.nwidths >= 1 && r.nwidths <= CPH_ROOF_MAX_WIDTHS);
    assert_int_equal(r.roof_bits, r.widths[0].bits);
    assert_true(r.peak_1core_gflops == r.widths[0].peak_1core_gflops);
    assert_true(r.peak_all_gflops == r.widths[0].peak_all_gflops);
    cpl_cpu_id id;
    cpl_cpuid_read(&id);
    assert_int_equal(r.roof_bits, id.avx512f ? 512 : id.avx2 && id.fma ? 256 : 0);
    for (int i = 0; i < r.nwidths; i++)
        assert_true(isfinite(r.widths[i].peak_1core_gflops) && r.widths[i].peak_1core_gflops > 0);
    if (r.nwidths == 2)
        assert_true(fabs(r.ratio_512_256 -
                         r.widths[0].peak_1core_gflops / r.widths[1].peak_1core_gflops) < 1e-12);
    else
        assert_true(r.ratio_512_256 == 0.0);
    assert_true(r.triad_bytes >= 4 * cph_machine_llc_total(&m) || r.triad_bytes >= m.memory_bytes / 8 - 64);
    assert_int_equal(cph_roofs_measure(&m, 0.0, &r, msg, sizeof msg), CP_EINVAL);
    cph_machine_free(&m);

    assert_int_equal(cph_machine_detect(&m, "pack:1 core:2 pu:1", msg, sizeof msg), CP_OK);
    assert_int_equal(cph_roofs_measure(&m, 0.05, &r, msg, sizeof msg), CP_EINVAL);
    cph_machine_free(&m);
}

/* Both peak loops compute the same recurrence; their sums must agree, which
 * also shows the loops ran (a skipped loop returns the seeds' sum). */
static void test_peak_kernels_compute(void **state) {
    (void)state;
    cpl_cpu_id id;
    cpl_cpuid_read(&id);
    /* After 0 iterations: sum of the seeds. */
    float seeds = 0.0f;
    for (int j = 0; j < 16; j++) seeds += 1.0f + 0.1f * (float)j;
    assert_float_equal(cph_roof_fma_portable(0), seeds, 1e-4);
    /* Many iterations (20 time constants 1/(1-a)): every chain settles near
     * the fixed point b / (1 - a) = 0.1; float rounding of x*a + b (fused or
     * not) moves where it sticks by a few per cent. */
    assert_float_equal(cph_roof_fma_portable(20000000), 16 * 0.1f, 0.08f);
    if (!(id.avx2 && id.fma)) cpt_skip();
    assert_float_equal(cph_roof_fma_avx2(20000000), 96 * 0.1f, 0.48f);
    if (!id.avx512f) cpt_skip();
    /* 16 chains x 16 lanes, after 0 iterations: 16 x the seeds' sum. */
    assert_float_equal(cph_roof_fma_avx512(0), 16 * seeds, 1e-2);
    assert_float_equal(cph_roof_fma_avx512(20000000), 256 * 0.1f, 1.28f);
}

/* The JSON of invented roofs (no measurement): every width, widest first, the
 * device roof's bits, the ratio only when 512 and 256 both ran (issue: roofs
 * at every vector width; values invented, by hand). */
static void test_roofs_json_invented(void **state) {
    (void)state;
    cph_roofs r;
    memset(&r, 0, sizeof r);
    r.nwidths = 2;
    r.widths[0] = (cph_roof_width){512, "avx512f", 120.0, 240.0};
    r.widths[1] = (cph_roof_width){256, "avx2_fma", 100.0, 200.0};
    r.roof_bits = 512;
    r.peak_1core_gflops = 120.0;
    r.peak_all_gflops = 240.0;
    r.ratio_512_256 = 1.2; /* a part that splits 512-bit operations */
    json_t *o = cph_roofs_json(&r);
    assert_non_null(o);
    assert_int_equal(json_integer_value(json_object_get(o, "roof_bits")), 512);
    json_t *w = json_object_get(o, "widths");
    assert_int_equal(json_array_size(w), 2);
    assert_int_equal(json_integer_value(json_object_get(json_array_get(w, 1), "bits")), 256);
    assert_string_equal(json_string_value(json_object_get(json_array_get(w, 0), "isa")), "avx512f");
    assert_true(json_real_value(json_object_get(json_array_get(w, 1), "peak_all_gflops")) == 200.0);
    assert_true(json_real_value(json_object_get(o, "ratio_512_256")) == 1.2);
    assert_true(json_real_value(json_object_get(o, "peak_1core_gflops")) == 120.0);
    json_decref(o);
    /* No AVX-512: one width, the roof is 256 bits, no ratio. */
    r.nwidths = 1;
    r.widths[0] = r.widths[1];
    r.roof_bits = 256;
    r.ratio_512_256 = 0.0;
    o = cph_roofs_json(&r);
    assert_non_null(o);
    assert_int_equal(json_array_size(json_object_get(o, "widths")), 1);
    assert_int_equal(json_integer_value(json_object_get(o, "roof_bits")), 256);
    assert_true(json_is_null(json_object_get(o, "ratio_512_256")));
    json_decref(o);
}

int main(void) {
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_roofs_sane),
        cmocka_unit_test(test_roofs_json_invented),
        cmocka_unit_test(test_peak_kernels_compute),
    };
    return cpt_suite_status(cmocka_run_group_tests(tests, NULL, NULL),
                            sizeof tests / sizeof tests[0]);
}
