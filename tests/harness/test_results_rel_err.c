/* The results reader's rel_err (harness/io/results_read.h): a bench row's
 * error against the oracle reads back as written, a file written before
 * bench measured it still reads (NaN), null reads as NaN, and a mistyped
 * value is refused with its JSON path.  The documents are
 * tests/data/diff_base.bench.json (a committed fixture without rel_err) with
 * fields set here; the values are invented. */
#include <jansson.h>
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>

#include "harness/io/results_read.h"

static json_t *fixture(void) {
    json_error_t err;
    json_t *d = json_load_file(CP_TEST_DATA "/diff_base.bench.json", 0, &err);
    if (!d) fail_msg("diff_base.bench.json: %s", err.text);
    return d;
}

/* Reads d (stolen) as a document; the status, r filled when CP_OK. */
static cp_status read_doc(json_t *d, cph_results *r, char *msg, size_t cap) {
    char *text = json_dumps(d, 0);
    json_decref(d);
    assert_non_null(text);
    const cp_status st = cph_results_read_buffer(text, strlen(text), "doc.json", r, msg, cap);
    free(text);
    return st;
}

static void test_older_file_reads_nan(void **state) {
    (void)state;
    cph_results r;
    char msg[512] = "";
    if (read_doc(fixture(), &r, msg, sizeof msg) != CP_OK) fail_msg("%s", msg);
    assert_true(r.nitems > 0);
    for (size_t i = 0; i < r.nitems; i++) assert_true(isnan(r.items[i].rel_err));
    cph_results_free(&r);
}

static void test_values_and_null(void **state) {
    (void)state;
    json_t *d = fixture();
    json_t *res = json_object_get(d, "results");
    assert_true(json_array_size(res) >= 2);
    json_object_set_new(json_array_get(res, 0), "rel_err", json_real(1.25e-7));
    json_object_set_new(json_array_get(res, 1), "rel_err", json_null());
    cph_results r;
    char msg[512] = "";
    if (read_doc(d, &r, msg, sizeof msg) != CP_OK) fail_msg("%s", msg);
    assert_true(r.nitems >= 2);
    assert_true(r.items[0].rel_err == 1.25e-7);
    assert_true(isnan(r.items[1].rel_err));
    cph_results_free(&r);
}

static void test_mistyped_refused(void **state) {
    (void)state;
    const char *bad[] = {"\"small\"", "-1e-7"};
    for (size_t k = 0; k < 2; k++) {
        json_t *d = fixture();
        json_error_t err;
        json_t *v = json_loads(bad[k], JSON_DECODE_ANY, &err);
        assert_non_null(v);
        json_object_set_new(json_array_get(json_object_get(d, "results"), 2), "rel_err", v);
        cph_results r;
        char msg[512] = "";
        assert_int_equal(read_doc(d, &r, msg, sizeof msg), CP_EFORMAT);
        assert_non_null(strstr(msg, "doc.json: results[2].rel_err: expected a number >= 0 or null"));
    }
}

int main(void) {
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_older_file_reads_nan),
        cmocka_unit_test(test_values_and_null),
        cmocka_unit_test(test_mistyped_refused),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
