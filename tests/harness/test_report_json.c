/* Measurement JSON (harness/io/report_json.c): round trip, the documented
 * field names, null for non-finite numbers, error messages naming the field
 * (read back by the test-only tests/support/measurement_read.c), and the
 * atomic write (no temporary file left; an existing target whose replacement
 * fails midway is left byte for byte as it was). */
#define _POSIX_C_SOURCE 200809L
#include <dirent.h>
#include <signal.h>
#include <sys/resource.h>
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <cmocka.h>

#include "harness/io/report_json.h"
#include "tests/support/measurement_read.h"

static char dir[64];

static int make_dir(void **state) {
    (void)state;
    snprintf(dir, sizeof dir, "/tmp/cp_report_json_XXXXXX");
    return mkdtemp(dir) ? 0 : -1;
}

static int remove_dir(void **state) {
    (void)state;
    DIR *d = opendir(dir);
    if (d) {
        struct dirent *e;
        char p[512];
        while ((e = readdir(d)))
            if (e->d_name[0] != '.') {
                snprintf(p, sizeof p, "%s/%s", dir, e->d_name);
                unlink(p);
            }
        closedir(d);
    }
    rmdir(dir);
    return 0;
}

static int entries_in_dir(const char *needle) {
    DIR *d = opendir(dir);
    assert_non_null(d);
    int count = 0;
    struct dirent *e;
    while ((e = readdir(d)))
        if (strcmp(e->d_name, ".") != 0 && strcmp(e->d_name, "..") != 0 &&
            strstr(e->d_name, needle))
            count++;
    closedir(d);
    return count;
}

/* Values that need all 17 significant digits to read back exactly. */
static const double vals[12] = {0.1, 0.2, 0.30000000000000004, 1e-7, 3.14159e-3, 2.0 / 3.0,
                                1.0 / 7.0, 5e-4, 5.0000000000000001e-4, 0.125, 9.87654321e-5, 0.1};

static void fill(cph_measurement *m) {
    memset(m, 0, sizeof *m);
    cph_timing_defaults(&m->opts);
    m->opts.cold = 1;
    m->opts.flush_bytes = 1 << 20;
    m->n = 12;
    m->samples = malloc(sizeof vals);
    assert_non_null(m->samples);
    memcpy(m->samples, vals, sizeof vals);
    m->stop = CPH_STOP_TIME_CAP;
    m->warmup_runs = 2;
    m->flushes = 12;
    m->checks = 1;
    m->wall_seconds = 1.5;
    m->timed_seconds = 1.25;
    cph_stats_compute(m->samples, m->n, m->opts.confidence, &m->stats);
    m->stats.noisy = 1;
}

static void test_round_trip(void **state) {
    (void)state;
    cph_measurement m;
    fill(&m);
    json_t *j = cph_json_measurement(&m);
    assert_non_null(j);
    char path[128];
    snprintf(path, sizeof path, "%s/m.json", dir);
    char msg[512] = "";
    assert_int_equal(cph_json_write_atomic(j, path, msg, sizeof msg), CP_OK);
    json_decref(j);
    assert_int_equal(entries_in_dir(".json."), 0);

    json_error_t err;
    json_t *back = json_load_file(path, 0, &err);
    assert_non_null(back);
    /* documented names */
    assert_string_equal(json_string_value(json_object_get(back, "stop")), "time_cap");
    assert_true(json_is_false(json_object_get(back, "converged")));
    const json_t *settings = json_object_get(back, "settings");
    assert_true(json_is_true(json_object_get(settings, "cold")));
    assert_int_equal(json_integer_value(json_object_get(settings, "flush_bytes")), 1 << 20);
    const json_t *stats = json_object_get(back, "stats");
    assert_true(json_real_value(json_object_get(stats, "median")) == m.stats.median);
    assert_int_equal(json_integer_value(json_object_get(stats, "ci_rank_lo")), m.stats.ci_rank_lo);
    const json_t *samples = json_object_get(back, "samples");
    assert_int_equal(json_array_size(samples), 12);
    for (size_t i = 0; i < 12; i++)
        assert_true(json_real_value(json_array_get(samples, i)) == vals[i]); /* bit for bit */

    cph_measurement r;
    assert_int_equal(cpt_json_read_measurement(back, "m.json", "m", &r, msg, sizeof msg), CP_OK);
    assert_int_equal(r.n, 12);
    assert_memory_equal(r.samples, vals, sizeof vals);
    assert_int_equal(r.stop, CPH_STOP_TIME_CAP);
    assert_int_equal(r.warmup_runs, 2);
    assert_int_equal(r.flushes, 12);
    assert_true(r.opts.cold && r.opts.flush_bytes == (1u << 20));
    assert_true(r.stats.median == m.stats.median && r.stats.ci_lo == m.stats.ci_lo &&
                r.stats.ci_hi == m.stats.ci_hi);
    assert_true(r.wall_seconds == 1.5 && r.timed_seconds == 1.25);
    cph_measurement_free(&r);
    json_decref(back);
    cph_measurement_free(&m);
}

static char *slurp(const char *path, size_t *len) {
    FILE *f = fopen(path, "rb");
    assert_non_null(f);
    char *buf = malloc(1 << 20);
    assert_non_null(buf);
    *len = fread(buf, 1, 1 << 20, f);
    fclose(f);
    return buf;
}

/* The failure is made real: the process may write at most 64 KiB per file
 * (RLIMIT_FSIZE, SIGXFSZ ignored, so write() fails with EFBIG), and the new
 * document is ~1 MB, so the temporary file's write fails midway through.
 * The existing target must come back byte for byte (common practice, no
 * source: what atomic replacement by rename promises). */
static void test_replaces_existing_and_failure_leaves_target(void **state) {
    (void)state;
    char path[128], msg[512] = "";
    snprintf(path, sizeof path, "%s/r.json", dir);
    json_t *a = json_pack("{s:i}", "x", 1), *b = json_pack("{s:i}", "x", 2);
    assert_int_equal(cph_json_write_atomic(a, path, msg, sizeof msg), CP_OK);
    assert_int_equal(cph_json_write_atomic(b, path, msg, sizeof msg), CP_OK);
    size_t before_len;
    char *before = slurp(path, &before_len);
    assert_int_equal(before_len, strlen("{\n \"x\": 2\n}\n"));
    assert_memory_equal(before, "{\n \"x\": 2\n}\n", before_len);

    json_t *big = json_array();
    for (int i = 0; i < 100000; i++) json_array_append_new(big, json_real(0.1 * i));
    struct rlimit old, lim;
    assert_int_equal(getrlimit(RLIMIT_FSIZE, &old), 0);
    lim = old;
    lim.rlim_cur = 64 * 1024;
    void (*prev)(int) = signal(SIGXFSZ, SIG_IGN);
    assert_int_equal(setrlimit(RLIMIT_FSIZE, &lim), 0);
    const cp_status st = cph_json_write_atomic(big, path, msg, sizeof msg);
    assert_int_equal(setrlimit(RLIMIT_FSIZE, &old), 0);
    signal(SIGXFSZ, prev);
    assert_int_equal(st, CP_EIO);
    assert_non_null(strstr(msg, "write failed"));
    size_t after_len;
    char *after = slurp(path, &after_len);
    assert_int_equal(after_len, before_len);
    assert_memory_equal(after, before, before_len);
    assert_int_equal(entries_in_dir(".json."), 0);
    free(before);
    free(after);
    json_decref(big);

    char bad[160];
    snprintf(bad, sizeof bad, "%s/no/such/dir/r.json", dir);
    assert_int_equal(cph_json_write_atomic(a, bad, msg, sizeof msg), CP_EIO);
    assert_non_null(strstr(msg, bad));
    json_decref(a);
    json_decref(b);
}

static void test_empty_measurement_writes_null(void **state) {
    (void)state;
    cph_measurement m;
    memset(&m, 0, sizeof m);
    cph_timing_defaults(&m.opts);
    cph_stats_compute(NULL, 0, 0.95, &m.stats);
    json_t *j = cph_json_measurement(&m);
    assert_non_null(j);
    assert_true(json_is_null(json_object_get(json_object_get(j, "stats"), "rel_ci")));
    char *text = json_dumps(j, 0);
    assert_non_null(text);
    json_error_t err;
    json_t *again = json_loads(text, 0, &err); /* valid JSON: no inf/nan tokens */
    assert_non_null(again);
    json_decref(again);
    free(text);
    json_decref(j);
}

static void test_read_errors_name_the_field(void **state) {
    (void)state;
    cph_measurement m, r;
    fill(&m);
    json_t *j = cph_json_measurement(&m);
    char msg[512] = "";
    json_array_set_new(json_object_get(j, "samples"), 3, json_string("fast"));
    assert_int_equal(
        cpt_json_read_measurement(j, "b.json", "results[2].measurement", &r, msg, sizeof msg),
        CP_EFORMAT);
    assert_string_equal(msg, "b.json: results[2].measurement.samples[3]: expected a number >= 0 "
                             "(seconds), found a string");
    json_object_del(json_object_get(j, "settings"), "confidence");
    assert_int_equal(cpt_json_read_measurement(j, "b.json", "x", &r, msg, sizeof msg), CP_EFORMAT);
    assert_string_equal(msg, "b.json: x.settings.confidence: missing (expected number)");
    json_decref(j);
    cph_measurement_free(&m);
}

static void test_shape_json(void **state) {
    (void)state;
    cp_shape s = cp_shape_init();
    s.c = 64;
    s.h = s.w = 56;
    s.k = 128;
    s.r = s.s = 3;
    s.stride_h = s.stride_w = 2;
    s.pad_top = s.pad_left = s.pad_bottom = s.pad_right = 1;
    json_t *j = cph_json_shape(&s);
    assert_non_null(j);
    assert_int_equal(json_integer_value(json_object_get(j, "k")), 128);
    assert_int_equal(json_integer_value(json_object_get(j, "stride_w")), 2);
    assert_int_equal(json_integer_value(json_object_get(j, "pad_bottom")), 1);
    assert_int_equal(json_integer_value(json_object_get(j, "groups")), 1);
    /* the one spelling of every format (docs/table-format.md, "Shared objects") */
    assert_int_equal(json_integer_value(json_object_get(j, "dilation_h")), 1);
    assert_null(json_object_get(j, "dil_h"));
    assert_string_equal(json_string_value(json_object_get(j, "layout")), "NCHW/KCRS");
    char spec[256];
    cp_shape_format(&s, spec, sizeof spec);
    assert_string_equal(json_string_value(json_object_get(j, "spec")), spec);
    json_decref(j);
}

int main(void) {
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_round_trip),
        cmocka_unit_test(test_replaces_existing_and_failure_leaves_target),
        cmocka_unit_test(test_empty_measurement_writes_null),
        cmocka_unit_test(test_read_errors_name_the_field),
        cmocka_unit_test(test_shape_json),
    };
    return cmocka_run_group_tests(tests, make_dir, remove_dir);
}
