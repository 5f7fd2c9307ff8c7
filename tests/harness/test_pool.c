/* The thread pool: every index of a parallel_for runs exactly once, on a
 * worker in range, in contiguous ranges; workers are pinned to distinct cores
 * (checked against the kernel's sched_getcpu()); the placement chosen on an
 * invented two-package machine; the caller's binding and OpenBLAS's thread
 * count come back after the pool; --threads parsing. */
#define _GNU_SOURCE
#include <cblas.h>
#include <hwloc.h>
#include <sched.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stdatomic.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>

#include <cmocka.h>

#include "tests/support/suite.h"

#include "harness/machine/machine.h"
#include "harness/machine/pool.h"

#define MAXN 1000

typedef struct cover {
    atomic_int hits[MAXN];
    atomic_int calls;
    atomic_int bad_worker;
    atomic_int seen_worker[8];
    int nthreads;
    int cpu_of_worker[8]; /* sched_getcpu() seen by each worker (-1 unseen) */
} cover;

static void cover_task(void *arg, int64_t begin, int64_t end, int worker) {
    cover *c = arg;
    atomic_fetch_add(&c->calls, 1);
    if (worker < 0 || worker >= c->nthreads || begin >= end) {
        atomic_fetch_add(&c->bad_worker, 1);
        return;
    }
    atomic_fetch_add(&c->seen_worker[worker], 1);
    c->cpu_of_worker[worker] = sched_getcpu(); /* each worker writes its own slot */
    for (int64_t i = begin; i < end; i++) atomic_fetch_add(&c->hits[i], 1);
}

static void check_cover(cph_pool *p, int nthreads, int64_t count) {
    static cover c;
    memset(&c, 0, sizeof c);
    c.nthreads = nthreads;
    const cp_exec ex = cph_pool_exec(p);
    assert_int_equal(ex.nthreads, nthreads);
    ex.parallel_for(ex.pool, count, cover_task, &c);
    for (int64_t i = 0; i < count; i++) assert_int_equal(atomic_load(&c.hits[i]), 1);
    for (int64_t i = count; i < MAXN; i++) assert_int_equal(atomic_load(&c.hits[i]), 0);
    assert_int_equal(atomic_load(&c.bad_worker), 0);
    const int64_t expect_calls = count < nthreads ? count : nthreads;
    assert_int_equal(atomic_load(&c.calls), expect_calls);
    for (int w = 0; w < nthreads; w++) assert_true(atomic_load(&c.seen_worker[w]) <= 1);
}

static void coverage_with(int nthreads) {
    cph_machine m;
    char msg[256] = "";
    assert_int_equal(cph_machine_detect(&m, NULL, msg, sizeof msg), CP_OK);
    if (m.cores < nthreads) {
        cph_machine_free(&m);
        cpt_skip();
    }
    cph_pool *p = NULL;
    int pinned = -1;
    assert_int_equal(cph_pool_create(&m, nthreads, &p, &pinned, msg, sizeof msg), CP_OK);
    assert_int_equal(cph_pool_threads(p), nthreads);
    const int64_t counts[] = {0, 1, 3, 1000};
    for (size_t i = 0; i < sizeof counts / sizeof counts[0]; i++) check_cover(p, nthreads, counts[i]);
    /* Many back-to-back calls: the hand-over between generations holds. */
    for (int rep = 0; rep < 2000; rep++) check_cover(p, nthreads, 1 + rep % 7);
    cph_pool_destroy(p);
    cph_machine_free(&m);
}

static void test_cover_1(void **state) {
    (void)state;
    coverage_with(1);
}

static void test_cover_2(void **state) {
    (void)state;
    coverage_with(2);
}

/* On the real machine every worker is bound to its own core, runs there, and
 * the caller gets its binding and OpenBLAS its thread count back. */
static void test_pinning_real(void **state) {
    (void)state;
    cph_machine m;
    char msg[256] = "";
    assert_int_equal(cph_machine_detect(&m, NULL, msg, sizeof msg), CP_OK);
    const int n = m.cores < 8 ? m.cores : 8;
    hwloc_topology_t t = m.topology;
    hwloc_bitmap_t before = hwloc_bitmap_alloc(), after = hwloc_bitmap_alloc();
    assert_int_equal(hwloc_get_cpubind(t, before, HWLOC_CPUBIND_THREAD), 0);
    const int blas_before = openblas_get_num_threads();

    cph_pool *p = NULL;
    int pinned = -1;
    assert_int_equal(cph_pool_create(&m, n, &p, &pinned, msg, sizeof msg), CP_OK);
    if (!pinned) {
        cph_pool_destroy(p);
        cph_machine_free(&m);
        hwloc_bitmap_free(before);
        hwloc_bitmap_free(after);
        cpt_skip(); /* a restricted cpuset: nothing to check */
    }
    assert_int_equal(openblas_get_num_threads(), 1); /* the workers split GEMMs (pool.h) */
    int cores[8], pus[8];
    assert_int_equal(cph_pool_choose_cores(t, n, cores, pus), n);
    static cover c;
    memset(&c, 0, sizeof c);
    c.nthreads = n;
    const cp_exec ex = cph_pool_exec(p);
    ex.parallel_for(ex.pool, n, cover_task, &c);
    for (int w = 0; w < n; w++) {
        const int core = cph_pool_core_of(p, w);
        assert_int_equal(core, cores[w]);
        assert_true(core >= 0 && core < m.cores);
        for (int v = 0; v < w; v++) assert_int_not_equal(cph_pool_core_of(p, v), core);
        assert_int_equal(c.cpu_of_worker[w], pus[w]); /* the kernel agrees */
    }
    assert_int_equal(cph_pool_core_of(p, n), -1);
    cph_pool_destroy(p);
    assert_int_equal(hwloc_get_cpubind(t, after, HWLOC_CPUBIND_THREAD), 0);
    assert_true(hwloc_bitmap_isequal(before, after));
    assert_int_equal(openblas_get_num_threads(), blas_before);
    hwloc_bitmap_free(before);
    hwloc_bitmap_free(after);
    cph_machine_free(&m);
}

/* Placement on an invented machine: 2 packages x 8 cores x 2 PUs.  hwloc
 * numbers synthetic PUs in order (P#0..P#31, two per core), so core i owns
 * PUs 2i and 2i+1 (hwloc synthetic topologies documentation). */
static const char *const two_socket =
    "pack:2 [numa(memory=16GiB)] l3:1(size=32MiB) l2:8(size=1MiB) l1d:1(size=48KiB) core:1 pu:2";

static void test_choose_cores_synthetic(void **state) {
    (void)state;
    cph_machine m;
    char msg[256] = "";
    assert_int_equal(cph_machine_detect(&m, two_socket, msg, sizeof msg), CP_OK);
    hwloc_topology_t t = m.topology;
    int cores[16], pus[16];
    assert_int_equal(cph_pool_choose_cores(t, 10, cores, pus), 10);
    for (int i = 0; i < 10; i++) {
        assert_int_equal(cores[i], i);
        assert_int_equal(pus[i], 2 * i);
        hwloc_obj_t pu = hwloc_get_pu_obj_by_os_index(t, (unsigned)pus[i]);
        assert_non_null(pu);
        hwloc_obj_t pkg = hwloc_get_ancestor_obj_by_type(t, HWLOC_OBJ_PACKAGE, pu);
        assert_int_equal((int)pkg->logical_index, i < 8 ? 0 : 1); /* compact: fill package 0 */
    }
    assert_int_equal(cph_pool_choose_cores(t, 16, cores, pus), 16);
    assert_int_equal(pus[15], 30);
    assert_int_equal(cph_pool_choose_cores(t, 17, cores, pus), -1);
    assert_int_equal(cph_pool_choose_cores(t, 0, cores, pus), -1);

    /* A pool on the invented machine works, unpinned, and says so. */
    cph_pool *p = NULL;
    int pinned = -1;
    assert_int_equal(cph_pool_create(&m, 2, &p, &pinned, msg, sizeof msg), CP_OK);
    assert_int_equal(pinned, 0);
    assert_non_null(strstr(msg, "not pinned"));
    assert_int_equal(cph_pool_core_of(p, 0), -1);
    check_cover(p, 2, 1000);
    cph_pool_destroy(p);
    assert_int_equal(cph_pool_create(&m, 17, &p, &pinned, msg, sizeof msg), CP_EINVAL);
    assert_null(p);
    assert_int_equal(cph_pool_create(&m, 0, &p, &pinned, msg, sizeof msg), CP_EINVAL);
    cph_machine_free(&m);
}

/* --- --threads ------------------------------------------------------------ */

static void expect_threads(const char *arg, int cores, const int *want, int nwant) {
    int out[16];
    char msg[256] = "";
    const int n = cph_parse_threads(arg, cores, out, 16, msg, sizeof msg);
    if (n != nwant) fail_msg("'%s': got %d counts (%s), want %d", arg, n, msg, nwant);
    for (int i = 0; i < n; i++) assert_int_equal(out[i], want[i]);
}

static void expect_threads_error(const char *arg, int cores, int max, const char *needle) {
    int out[16];
    char msg[256] = "";
    assert_int_equal(cph_parse_threads(arg, cores, out, max, msg, sizeof msg), -1);
    if (!strstr(msg, needle)) fail_msg("'%s': message '%s' lacks '%s'", arg, msg, needle);
}

static void test_parse_threads(void **state) {
    (void)state;
    expect_threads("1,2", 8, (const int[]){1, 2}, 2);
    expect_threads("all", 8, (const int[]){8}, 1);
    expect_threads("1-4", 8, (const int[]){1, 2, 3, 4}, 4);
    expect_threads("4", 8, (const int[]){4}, 1);
    expect_threads("1,2-3,all", 4, (const int[]){1, 2, 3, 4}, 4);
    expect_threads("2,2,1-2", 4, (const int[]){2, 1}, 2); /* repeats kept once */
    expect_threads("3-3", 4, (const int[]){3}, 1);

    expect_threads_error("", 8, 16, "empty");
    expect_threads_error("0", 8, 16, "outside [1, 8]");
    expect_threads_error("9", 8, 16, "outside [1, 8]");
    expect_threads_error("3-1", 8, 16, "backwards");
    expect_threads_error("two", 8, 16, "'two'");
    expect_threads_error("1,", 8, 16, "not a count");
    expect_threads_error(",1", 8, 16, "not a count");
    expect_threads_error("1-", 8, 16, "not a count");
    expect_threads_error("-1", 8, 16, "not a count");
    expect_threads_error("1--2", 8, 16, "not a count");
    expect_threads_error("1-4", 8, 3, "more than 3");
    expect_threads_error("99999999999", 8, 16, "not a count");
}

int main(void) {
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_cover_1),
        cmocka_unit_test(test_cover_2),
        cmocka_unit_test(test_pinning_real),
        cmocka_unit_test(test_choose_cores_synthetic),
        cmocka_unit_test(test_parse_threads),
    };
    return cpt_suite_status(cmocka_run_group_tests(tests, NULL, NULL),
                            sizeof tests / sizeof tests[0]);
}
