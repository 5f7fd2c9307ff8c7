/* Plugins through the library alone (convpick/plugin.h), as a deploying
 * program uses them: loading adds to the registry, every refusal leaves the
 * registry as it was, a plugin algorithm plans and runs like a built-in one
 * (checked against the fp64 oracle), and unloading removes it (under ASan,
 * nothing leaks across load/unload cycles).  The plugins are
 * tests/plugins/test_plugin.c's variants, built by tests/CMakeLists.txt. */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>

#include "convpick/convpick.h"

static void plugin_path(char *buf, size_t cap, const char *variant) {
    snprintf(buf, cap, "%s/cptp_%s.so", CP_PLUGIN_DIR, variant);
}

static void test_load_list_unload(void **state) {
    (void)state;
    const size_t builtins = cp_algo_count();
    char path[512], msg[512];
    plugin_path(path, sizeof path, "good");
    for (int cycle = 0; cycle < 3; cycle++) {
        const cp_plugin *p = NULL;
        assert_int_equal(cp_plugin_load(path, &p, msg, sizeof msg), CP_OK);
        assert_non_null(p);
        assert_int_equal(cp_algo_count(), builtins + 1);
        assert_int_equal(cp_plugin_count(), 1);
        assert_ptr_equal(cp_plugin_at(0), p);
        assert_ptr_equal(cp_plugin_find("tp"), p);
        assert_string_equal(cp_plugin_name(p), "tp");
        assert_string_equal(cp_plugin_path(p), path);
        assert_int_equal(strlen(cp_plugin_hash(p)), 16);
        assert_int_equal(strspn(cp_plugin_hash(p), "0123456789abcdef"), 16);
        assert_int_equal(cp_plugin_algo_count(p), 1);
        const cp_algo *a = cp_algo_find("tp_loops");
        assert_non_null(a);
        assert_ptr_equal(cp_plugin_algo_at(p, 0), a);
        assert_ptr_equal(cp_algo_at(builtins), a);
        assert_ptr_equal(cp_algo_plugin(a), p);
        assert_null(cp_algo_plugin(cp_algo_find("direct")));
        cp_plugins_unload_all();
        assert_int_equal(cp_algo_count(), builtins);
        assert_int_equal(cp_plugin_count(), 0);
        assert_null(cp_algo_find("tp_loops"));
    }
}

/* Each refusal: its status, one line naming the file, nothing registered. */
static void test_refusals(void **state) {
    (void)state;
    const size_t builtins = cp_algo_count();
    static const struct {
        const char *variant;
        cp_status st;
        const char *fragment;
    } cases[] = {
        {"clash", CP_EINVAL, "algorithm 'direct' clashes with the built-in one"},
        {"badabi", CP_EVERSION, "plugin ABI version 99 is not supported"},
        {"badparam", CP_EINVAL, "parameter 'unroll' has an empty range [4, 1]"},
        {"noentry", CP_ENOTFOUND, "no entry point 'convpick_plugin_entry'"},
        {"missing", CP_EIO, "cannot load plugin"},
    };
    char path[512], msg[512];
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        plugin_path(path, sizeof path, cases[i].variant);
        const cp_plugin *p = NULL;
        msg[0] = '\0';
        assert_int_equal(cp_plugin_load(path, &p, msg, sizeof msg), cases[i].st);
        assert_null(p);
        assert_non_null(strstr(msg, cases[i].fragment));
        assert_non_null(strstr(msg, path));
        assert_null(strchr(msg, '\n'));
        assert_int_equal(cp_algo_count(), builtins);
        assert_int_equal(cp_plugin_count(), 0);
    }
    /* A plugin name twice: the second build is refused, the first stays. */
    char path2[512];
    plugin_path(path, sizeof path, "good");
    plugin_path(path2, sizeof path2, "good2");
    assert_int_equal(cp_plugin_load(path, NULL, msg, sizeof msg), CP_OK);
    assert_int_equal(cp_plugin_load(path2, NULL, msg, sizeof msg), CP_EINVAL);
    assert_non_null(strstr(msg, "a plugin named 'tp' is already loaded"));
    assert_int_equal(cp_algo_count(), builtins + 1);
    cp_plugins_unload_all();
}

/* The good plugin through a plan, against the oracle (convpick/oracle.h);
 * the wrong one's off-by-one shows against the same reference. */
static void run_against_oracle(const char *variant, const char *algo, int expect_ok) {
    char path[512], msg[512];
    plugin_path(path, sizeof path, variant);
    assert_int_equal(cp_plugin_load(path, NULL, msg, sizeof msg), CP_OK);
    const cp_algo *a = cp_algo_find(algo);
    assert_non_null(a);
    cp_shape s;
    memset(&s, 0, sizeof s);
    s = (cp_shape){1, 3, 7, 6, 4, 3, 3, 1, 1, 1, 1, 1, 1, 1, 1, 1, CP_ACT_NCHW, CP_WT_KCRS};
    assert_int_equal(cp_shape_validate(&s, msg, sizeof msg), CP_OK);
    const size_t nx = cp_shape_input_elems(&s), nw = cp_shape_weight_elems(&s),
                 ny = cp_shape_output_elems(&s);
    float *x = malloc(nx * sizeof *x), *w = malloc(nw * sizeof *w), *y = malloc(ny * sizeof *y);
    float bias[4] = {0.5f, -0.25f, 0.0f, 1.0f};
    double *ref = malloc(ny * sizeof *ref), *mag = malloc(ny * sizeof *mag);
    assert_true(x && w && y && ref && mag);
    for (size_t i = 0; i < nx; i++) x[i] = (float)((double)(i * 37 % 101) / 50.0 - 1.0);
    for (size_t i = 0; i < nw; i++) w[i] = (float)((double)(i * 53 % 89) / 44.0 - 1.0);
    for (int f = 0; f < 2; f++) {
        const cp_flip flip = f ? CP_CONV : CP_XCORR;
        cp_oracle_run(&s, flip, x, w, bias, ref, mag);
        cp_plan *plan = NULL;
        assert_int_equal(cp_plan_create(a, &s, flip, NULL, NULL, 1, w, &plan, msg, sizeof msg),
                         CP_OK);
        assert_int_equal(cp_plan_run(plan, x, bias, y, NULL), CP_OK);
        cp_plan_destroy(plan);
        const cp_error e = cp_error_measure(y, ref, mag, ny);
        assert_int_equal(e.nonfinite, 0);
        if (expect_ok)
            assert_true(e.rel_err <= a->tolerance);
        else
            assert_true(e.rel_err > 1e-2);
    }
    free(x);
    free(w);
    free(y);
    free(ref);
    free(mag);
    cp_plugins_unload_all();
}

static void test_runs_like_builtin(void **state) {
    (void)state;
    run_against_oracle("good", "tp_loops", 1);
    run_against_oracle("wrong", "tp_wrong", 0);
}

int main(void) {
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_load_list_unload),
        cmocka_unit_test(test_refusals),
        cmocka_unit_test(test_runs_like_builtin),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
