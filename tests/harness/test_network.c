/* The network total: sum over the layers of count x median.  Every expected
 * figure is worked by hand from that definition (issue 15) on invented
 * timings; no outside source. */
#define _POSIX_C_SOURCE 200809L /* open_memstream */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>

#include "harness/bench/bench_summary.h"
#include "harness/measure/network.h"
#include "harness/tune/tune_run.h"

static const cph_net_row *row(const cph_net_total *t, const char *name) {
    for (size_t i = 0; i < t->nrows; i++)
        if (strcmp(t->rows[i].name, name) == 0) return &t->rows[i];
    fail_msg("no row %s", name);
    return NULL;
}

static char *printed(const cph_net_total *t) {
    char *text = NULL;
    size_t len = 0;
    FILE *f = open_memstream(&text, &len);
    assert_non_null(f);
    cph_net_print(f, t);
    fclose(f);
    return text;
}

static void test_sum_and_partial(void **state) {
    (void)state;
    cph_net_total t;
    cph_net_init(&t, CP_XCORR, 2, 2, 4);
    cph_net_add(&t, "chosen", 3, 2e-3); /* layer a x3 at 2 ms */
    cph_net_add(&t, "chosen", 1, 5e-3); /* layer b x1 at 5 ms: 3*2 + 1*5 = 11 ms */
    cph_net_add(&t, "direct", 3, 4e-3); /* only on a: no total */
    assert_float_equal(row(&t, "chosen")->seconds, 11e-3, 1e-12);
    char *text = printed(&t);
    if (!strstr(text, "flip=no threads=2: 4 layer(s) in 2 shape(s)")) fail_msg("%s", text);
    if (!strstr(text, "chosen                 11.000 ms")) fail_msg("%s", text);
    if (!strstr(text, "direct                    n/a    (measured on 1 of 2 shapes"))
        fail_msg("%s", text);
    free(text);
}

static void test_tune_entry(void **state) {
    (void)state;
    cp_candidate cand[4];
    memset(cand, 0, sizeof cand);
    strcpy(cand[0].algo, "blocked");
    cand[0].timing.median = 1e-3;
    strcpy(cand[1].algo, "blocked"); /* a faster parameter choice of the same algorithm */
    cand[1].timing.median = 0.8e-3;
    strcpy(cand[2].algo, "direct");
    cand[2].timing.median = 2e-3;
    strcpy(cand[3].algo, "winograd_2x2_3x3");
    cand[3].disqualified = 1;
    cp_table_entry e;
    memset(&e, 0, sizeof e);
    e.timing.median = 0.8e-3;
    e.candidates = cand;
    e.ncandidates = 4;
    cph_layer L;
    memset(&L, 0, sizeof L);
    L.count = 3;
    cph_net_total t;
    cph_net_init(&t, CP_XCORR, 1, 1, 3);
    cph_tune_network_add(&t, &L, &e);
    assert_float_equal(row(&t, "chosen")->seconds, 2.4e-3, 1e-12);  /* 3 x 0.8 ms */
    assert_float_equal(row(&t, "blocked")->seconds, 2.4e-3, 1e-12); /* its best, once */
    assert_int_equal(row(&t, "blocked")->covered, 1);
    assert_float_equal(row(&t, "direct")->seconds, 6e-3, 1e-12);
    assert_int_equal(t.nrows, 3); /* the disqualified candidate adds nothing */
}

static void test_bench_rows(void **state) {
    (void)state;
    cph_layer_list l = {0};
    cp_shape s = cp_shape_init();
    s.c = s.h = s.w = s.k = 4;
    s.r = s.s = 3;
    assert_int_equal(cph_layers_add(&l, "a", &s, 2), CP_OK);
    s.k = 8;
    assert_int_equal(cph_layers_add(&l, "b", &s, 1), CP_OK);
    cph_bench_recs r = {0};
    const struct { size_t layer; int count; cph_row_kind kind; const char *name; double med; } v[] = {
        {0, 2, CPH_ROW_ALGO, "x", 1e-3}, {0, 2, CPH_ROW_ALGO, "y", 3e-3},
        {1, 1, CPH_ROW_ALGO, "x", 5e-3}, {1, 1, CPH_ROW_ALGO, "y", 2e-3},
        {0, 2, CPH_ROW_SGEMM, "sgemm", 0.1e-3}};
    for (size_t i = 0; i < sizeof v / sizeof v[0]; i++) {
        cph_bench_rec rec;
        memset(&rec, 0, sizeof rec);
        rec.layer = v[i].layer;
        rec.count = v[i].count;
        rec.kind = v[i].kind;
        rec.threads = 1;
        strcpy(rec.name, v[i].name);
        rec.median = v[i].med;
        assert_int_equal(cph_bench_recs_add(&r, &rec), CP_OK);
    }
    char *text = NULL;
    size_t len = 0;
    FILE *f = open_memstream(&text, &len);
    cph_bench_network_print(f, &r, &l);
    fclose(f);
    /* x: 2*1 + 1*5 = 7 ms; y: 2*3 + 1*2 = 8 ms; best of each: 2*1 + 1*2 = 4 ms;
     * SGEMM rows are not algorithms and add nothing. */
    if (!strstr(text, "x                       7.000 ms") || !strstr(text, "y                       8.000 ms") ||
        !strstr(text, "best of each            4.000 ms") || strstr(text, "sgemm"))
        fail_msg("%s", text);
    free(text);
    cph_bench_recs_free(&r);
    cph_layers_free(&l);
}

int main(void) {
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_sum_and_partial),
        cmocka_unit_test(test_tune_entry),
        cmocka_unit_test(test_bench_rows),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
