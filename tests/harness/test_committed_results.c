/* Every committed result file the tool reads (results/ STAR.table.json,
 * results/ STAR.bench STAR.json, results/quiet/ STAR.json, STAR a wildcard; all
 * written in format version 1) still loads through the migration, with the
 * counts Python's json module finds in it (/usr/bin/python3, standard library
 * only; the counting script is below).  The cache study's JSON
 * (results/cache/) is read by nothing and not checked. */
#define _POSIX_C_SOURCE 200809L
#include <glob.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <cmocka.h>

#include "convpick/convpick.h"
#include "harness/io/results_read.h"
#include "tests/support/suite.h"

#define PY "/usr/bin/python3"

/* Prints "KIND VERSION A B C": tables "table V entries ok_candidates
 * not_ok_candidates", bench "bench V ok unsupported error". */
static const char *const count_py =
    "import json,sys\n"
    "d=json.load(open(sys.argv[1]))\n"
    "if d['format']=='convpick-tuning-table':\n"
    "  c=[x['status'] for e in d['entries'] for x in e['candidates']]\n"
    "  print('table',d['version'],len(d['entries']),c.count('ok'),len(c)-c.count('ok'))\n"
    "else:\n"
    "  s=[r['status'] for r in d['results']]\n"
    "  print('bench',d['version'],s.count('ok'),s.count('unsupported'),s.count('error'))\n";

typedef struct expected {
    char kind[8];
    int version;
    size_t a, b, c;
} expected;

static void python_counts(const char *path, expected *x) {
    char script[] = "/tmp/cp_count_XXXXXX";
    int fd = mkstemp(script);
    assert_true(fd >= 0);
    assert_int_equal(write(fd, count_py, strlen(count_py)), (ssize_t)strlen(count_py));
    close(fd);
    char cmd[2048];
    snprintf(cmd, sizeof cmd, "%s %s '%s'", PY, script, path);
    FILE *p = popen(cmd, "r");
    assert_non_null(p);
    int n = fscanf(p, "%7s %d %zu %zu %zu", x->kind, &x->version, &x->a, &x->b, &x->c);
    assert_int_equal(pclose(p), 0);
    unlink(script);
    assert_int_equal(n, 5);
}

static size_t glob_all(glob_t *g) {
    static const char *const pats[] = {"/results/*.table.json", "/results/*.bench*.json",
                                       "/results/quiet/*.json"};
    for (size_t i = 0; i < sizeof pats / sizeof pats[0]; i++) {
        char pat[1024];
        snprintf(pat, sizeof pat, "%s%s", CP_SOURCE_DIR, pats[i]);
        int rc = glob(pat, i ? GLOB_APPEND : 0, NULL, g);
        assert_true(rc == 0 || rc == GLOB_NOMATCH);
    }
    return g->gl_pathc;
}

static void test_committed_results_load(void **state) {
    (void)state;
    if (access(PY, X_OK) != 0) cpt_skip(); /* exits 77: no independent count here */
    glob_t g;
    memset(&g, 0, sizeof g);
    /* 3 resnet50 bench files + the table at the top, a table and a bench file
     * in quiet/ (git ls-files results/ at the time of writing) */
    assert_true(glob_all(&g) >= 6);
    size_t tables = 0, benches = 0;
    for (size_t i = 0; i < g.gl_pathc; i++) {
        const char *path = g.gl_pathv[i];
        expected x;
        python_counts(path, &x);
        assert_int_equal(x.version, 1); /* the migration inputs */
        char msg[1024] = "";
        cph_results r;
        if (cph_results_read(path, &r, msg, sizeof msg) != CP_OK) fail_msg("%s", msg);
        if (strcmp(x.kind, "table") == 0) {
            tables++;
            cp_table *t;
            if (cp_table_load(path, 0, &t, msg, sizeof msg) != CP_OK) fail_msg("%s", msg);
            assert_int_equal(cp_table_count(t), x.a);
            cp_table_free(t);
            assert_int_equal(r.kind, CPH_RESULTS_TABLE);
            assert_int_equal(r.nchoices, x.a);
            assert_int_equal(r.nitems, x.b);
            assert_int_equal(r.nfailed, x.c);
        } else {
            benches++;
            assert_int_equal(r.kind, CPH_RESULTS_BENCH);
            assert_int_equal(r.nitems, x.a);
            assert_int_equal(r.nunsupported, x.b);
            assert_int_equal(r.nfailed, x.c);
        }
        print_message("%s: %s, counts %zu %zu %zu agree\n", path, x.kind, x.a, x.b, x.c);
        cph_results_free(&r);
    }
    assert_true(tables >= 2 && benches >= 4);
    globfree(&g);
}

int main(void) {
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_committed_results_load),
    };
    return cpt_suite_status(cmocka_run_group_tests(tests, NULL, NULL),
                            sizeof tests / sizeof tests[0]);
}
