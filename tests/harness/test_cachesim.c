/* The cache simulator (harness/cache/cachesim.c) on cases whose miss counts are
 * worked out by hand below, the geometry syntax, the access counts of the
 * traced kernels (harness/cache/cache_traced.h) and the hardware-counter probe.
 *
 * Sources: set-associative LRU behaviour and compulsory misses are facts of
 * the trade (common practice, no source); every expected count is derived in
 * the comment beside it.  The comparison against an outside simulator
 * (valgrind's cachegrind) is tests/cli/cli_cachegrind.sh. */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>

#include "harness/cache/cache_traced.h"
#include "harness/cache/cachesim.h"
#include "harness/machine/counters.h"
#include "convpick/convpick.h"
#include "harness/measure/data.h"
#include "tests/support/conv.h"

static cph_cachesim make(const char *spec) {
    cph_cache_geom g[CPH_SIM_MAX_LEVELS];
    int n = 0;
    char msg[256];
    if (cph_geom_parse(spec, "test", g, &n, msg, sizeof msg) != CP_OK) fail_msg("%s", msg);
    cph_cachesim s;
    if (cph_sim_init(&s, g, n, msg, sizeof msg) != CP_OK) fail_msg("%s", msg);
    return s;
}

/* A base address aligned to 1 MiB so that set numbers are known: the
 * simulator never dereferences, so any number will do. */
static const uintptr_t BASE = (uintptr_t)1 << 30;

/* Sequential stream of B = 64 KiB with 4-byte loads, L1 32 KiB, 64-byte
 * lines: compulsory misses only, B / line = 65536 / 64 = 1024 at every level
 * (the stream never comes back); accesses at L1 = B / 4 = 16384; at L2 one
 * per L1 miss = 1024. */
static void test_sequential_stream(void **st) {
    (void)st;
    cph_cachesim s = make("L1=32K:8:64,L2=512K:8:64");
    for (uintptr_t a = 0; a < 65536; a += 4) cph_sim_access(&s, BASE + a, 4, 0);
    assert_int_equal(s.lv[0].c.accesses, 16384);
    assert_int_equal(s.lv[0].c.misses, 1024);
    assert_int_equal(s.lv[1].c.accesses, 1024);
    assert_int_equal(s.lv[1].c.misses, 1024);
    /* Write-allocate: the same stream of stores misses the same lines. */
    cph_sim_reset(&s);
    for (uintptr_t a = 0; a < 65536; a += 4) cph_sim_access(&s, BASE + a, 4, 1);
    assert_int_equal(s.lv[0].c.misses, 1024);
    assert_int_equal(s.lv[0].c.read_misses, 0);
    assert_int_equal(s.stores, 16384);
    cph_sim_free(&s);
}

/* One set.  L1 32 KiB, 8 ways, 64-byte lines: sets = 32768 / (8 * 64) = 64,
 * so addresses 64 * 64 = 4096 bytes apart share a set.
 *  - A = 8 such lines read cyclically T = 10 times: they fit the 8 ways, so
 *    misses = 8 (first pass) and 72 hits.
 *  - A = 9 lines (one more than the ways), cyclically with LRU: each access
 *    evicts the line needed 8 accesses later, so every access misses:
 *    misses = 9 * 10 = 90.
 *  - A = 9 lines but on a 2-level hierarchy with L2 = 256 KiB 8 ways
 *    (512 sets, same-set stride 32 KiB): the 9 lines 4 KiB apart spread over
 *    L2 sets 0, 64, ..., 512 mod 512 (= 0 again for the 9th: 8 * 4096 =
 *    32768), i.e. set 0 holds lines 0 and 8 and the others one each, all
 *    within 8 ways: L2 misses = 9 (compulsory), L1 still 90. */
static void test_one_set(void **st) {
    (void)st;
    cph_cachesim s = make("L1=32K:8:64");
    for (int t = 0; t < 10; t++)
        for (uintptr_t i = 0; i < 8; i++) cph_sim_access(&s, BASE + i * 4096, 4, 0);
    assert_int_equal(s.lv[0].c.misses, 8);
    assert_int_equal(s.lv[0].c.accesses, 80);
    cph_sim_reset(&s);
    for (int t = 0; t < 10; t++)
        for (uintptr_t i = 0; i < 9; i++) cph_sim_access(&s, BASE + i * 4096, 4, 0);
    assert_int_equal(s.lv[0].c.misses, 90);
    cph_sim_free(&s);

    cph_cachesim s2 = make("L1=32K:8:64,L2=256K:8:64");
    for (int t = 0; t < 10; t++)
        for (uintptr_t i = 0; i < 9; i++) cph_sim_access(&s2, BASE + i * 4096, 4, 0);
    assert_int_equal(s2.lv[0].c.misses, 90);
    assert_int_equal(s2.lv[1].c.accesses, 90);
    assert_int_equal(s2.lv[1].c.misses, 9);
    cph_sim_free(&s2);
}

/* LRU order, not FIFO: lines a..h fill the 8 ways of set 0; touching a again
 * makes b the least recent, so a 9th line i evicts b.  Then a hits (1 more
 * hit) and b misses.  Accesses 8 + 4 = 12, misses 8 + 1 (i) + 1 (b) = 10. */
static void test_lru_not_fifo(void **st) {
    (void)st;
    cph_cachesim s = make("L1=32K:8:64");
    for (uintptr_t i = 0; i < 8; i++) cph_sim_access(&s, BASE + i * 4096, 4, 0);
    cph_sim_access(&s, BASE, 4, 0);            /* a: hit */
    cph_sim_access(&s, BASE + 8 * 4096, 4, 0); /* i: miss, evicts b */
    cph_sim_access(&s, BASE, 4, 0);            /* a: hit */
    cph_sim_access(&s, BASE + 4096, 4, 0);     /* b: miss */
    assert_int_equal(s.lv[0].c.accesses, 12);
    assert_int_equal(s.lv[0].c.misses, 10);
    cph_sim_free(&s);
}

/* Working sets, 3 passes of 4-byte loads over an array.
 *  - 16 KiB in a 32 KiB L1: 16384 / 64 = 256 lines, 4 per set (256 / 64
 *    sets), within 8 ways: 256 misses in pass 1, none after; total 256.
 *  - 48 KiB: 768 lines, 12 per set > 8 ways; a cyclic sweep under LRU
 *    evicts each line before its reuse: every line misses every pass,
 *    3 * 768 = 2304.  With L2 = 512 KiB behind it (768 lines over 1024 sets,
 *    at most 1 per set): L2 misses 768 in pass 1 only. */
static void test_working_set(void **st) {
    (void)st;
    cph_cachesim s = make("L1=32K:8:64,L2=512K:8:64");
    for (int t = 0; t < 3; t++)
        for (uintptr_t a = 0; a < 16384; a += 4) cph_sim_access(&s, BASE + a, 4, 0);
    assert_int_equal(s.lv[0].c.misses, 256);
    assert_int_equal(s.lv[1].c.misses, 256);
    cph_sim_reset(&s);
    for (int t = 0; t < 3; t++)
        for (uintptr_t a = 0; a < 49152; a += 4) cph_sim_access(&s, BASE + a, 4, 0);
    assert_int_equal(s.lv[0].c.misses, 2304);
    assert_int_equal(s.lv[1].c.misses, 768);
    cph_sim_free(&s);
}

/* A set count that is not a power of two (96 KiB, 8 ways, 64 B: 192 sets)
 * takes the modulo path: lines 192 * 64 = 12288 bytes apart share a set, 9
 * of them cyclically 4 times all miss (36); 8 of them miss only once (8). */
static void test_non_power_of_two_sets(void **st) {
    (void)st;
    cph_cachesim s = make("X=96K:8:64");
    assert_int_equal(s.lv[0].sets, 192);
    for (int t = 0; t < 4; t++)
        for (uintptr_t i = 0; i < 9; i++) cph_sim_access(&s, BASE + i * 12288, 4, 0);
    assert_int_equal(s.lv[0].c.misses, 36);
    cph_sim_reset(&s);
    for (int t = 0; t < 4; t++)
        for (uintptr_t i = 0; i < 8; i++) cph_sim_access(&s, BASE + i * 12288, 4, 0);
    assert_int_equal(s.lv[0].c.misses, 8);
    cph_sim_free(&s);
}

/* An 8-byte access across a line boundary looks up both lines; a fully
 * associative cache of 4 lines holds any 4 lines. */
static void test_straddle_and_full(void **st) {
    (void)st;
    cph_cachesim s = make("L1=32K:8:64");
    cph_sim_access(&s, BASE + 60, 8, 0);
    assert_int_equal(s.refs, 1);
    assert_int_equal(s.lv[0].c.accesses, 2);
    assert_int_equal(s.lv[0].c.misses, 2);
    cph_sim_free(&s);
    cph_cachesim f = make("F=256:full:64");
    assert_int_equal(f.lv[0].g.ways, 4);
    assert_int_equal(f.lv[0].sets, 1);
    for (int t = 0; t < 5; t++)
        for (uintptr_t i = 0; i < 4; i++) cph_sim_access(&f, BASE + i * 100000 * 64, 4, 0);
    assert_int_equal(f.lv[0].c.misses, 4);
    cph_sim_free(&f);
}

static void test_geometry_syntax(void **st) {
    (void)st;
    cph_cache_geom g[CPH_SIM_MAX_LEVELS];
    int n = 0;
    char msg[256];
    assert_int_equal(cph_geom_parse("L1=32K:8:64,L2=512K:8:64,L3=32M:16:64", "x", g, &n, msg,
                                    sizeof msg), CP_OK);
    assert_int_equal(n, 3);
    assert_string_equal(g[0].name, "L1");
    assert_int_equal(g[0].size, 32768);
    assert_int_equal(g[1].size, 524288);
    assert_int_equal(g[2].size, 33554432);
    assert_int_equal(g[2].ways, 16);
    assert_int_equal(g[2].line, 64);
    char buf[128];
    cph_geom_format(g, n, buf, sizeof buf);
    assert_string_equal(buf, "L1=32K:8:64,L2=512K:8:64,L3=32M:16:64");
    static const struct { const char *spec, *needle; } bad[] = {
        {"L1=32K:8:48", "power of two"},
        {"L1=32K:x:64", "ways 'x'"},
        {"L1=30000:8:64", "multiple"},
        {"L1=32K:8", "SIZE:WAYS:LINE"},
        {"=32K:8:64", "NAME=SIZE"},
        {"L1=32Q:8:64", "size '32Q'"},
        {"", "no cache level"},
        {"A=1K:1:64,B=1K:1:64,C=1K:1:64,D=1K:1:64,E=1K:1:64", "more than 4"},
    };
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        msg[0] = '\0';
        assert_int_equal(cph_geom_parse(bad[i].spec, "--cache-geometry", g, &n, msg, sizeof msg),
                         CP_EINVAL);
        if (!strstr(msg, bad[i].needle) || !strstr(msg, "--cache-geometry"))
            fail_msg("'%s': message '%s' lacks '%s'", bad[i].spec, msg, bad[i].needle);
    }
}

/* The traced direct loops report every access the source names.  Valid
 * padding, so every (c, r, s) tap is inside the input: per output, order 0
 * loads C*R*S inputs and C*R*S weights and stores once; order 1 stores the
 * bias (0) once, then per tap loads one weight per plane and, per output,
 * loads y and x and stores y.  Shape n=1, c=3, h=w=6, k=2, r=s=3: P=Q=4,
 * outputs 32, taps per output 27.
 *   order 0: loads 2*27*32 = 1728, stores 32.
 *   order 1: loads 27*2 (weights) + 2*27*32 (x and y) = 54 + 1728 = 1782,
 *            stores 32 + 27*32 = 896. */
static void test_traced_direct_counts(void **st) {
    (void)st;
    cp_shape s = cpt_shape(1, 3, 6, 6, 2, 3, 3);
    float x[108], w[54], y[32];
    cph_fill_uniform(x, 108, 7);
    cph_fill_uniform(w, 54, 8);
    static const struct { int64_t order; uint64_t loads, stores; } want[] = {{0, 1728, 32},
                                                                            {1, 1782, 896}};
    for (size_t i = 0; i < 2; i++)
        for (int fl = 0; fl < 2; fl++) {
            const cp_algo *a = fl ? &cph_traced_direct_flipidx : &cph_traced_direct;
            cp_params p;
            memset(&p, 0, sizeof p);
            p.v[0] = want[i].order;
            cp_plan *plan = NULL;
            char msg[256];
            assert_int_equal(cp_plan_create(a, &s, fl ? CP_CONV : CP_XCORR, &p, NULL, 1, w,
                                            &plan, msg, sizeof msg), CP_OK);
            cph_cachesim sim = make("L1=32K:8:64");
            cph_trace_to(&sim);
            assert_int_equal(cp_plan_run(plan, x, NULL, y, NULL), CP_OK);
            cph_trace_to(NULL);
            assert_int_equal(sim.loads, want[i].loads);
            assert_int_equal(sim.stores, want[i].stores);
            /* Everything fits: x 432 B + w 216 B + y 128 B touch at most
             * 7 + 4 + 2 lines, plus line-boundary spill of unaligned
             * buffers: at most 16 compulsory misses. */
            assert_true(sim.lv[0].c.misses <= 16);
            assert_true(sim.lv[0].c.misses >= 11);
            cph_sim_free(&sim);
            cp_plan_destroy(plan);
        }
}

/* The probe either opens events (then instructions of a loop are counted
 * and positive) or says why not; it never reports a count it did not read. */
static void test_counters_probe(void **st) {
    (void)st;
    cph_counters c;
    const int n = cph_counters_open(&c);
    if (n == 0) {
        assert_false(c.any);
        assert_non_null(strstr(c.reason, "perf_event_open"));
        cph_counter_values v;
        cph_counters_start(&c);
        cph_counters_stop(&c, &v);
        for (int i = 0; i < CPH_NCTR; i++) assert_false(v.valid[i]);
    } else {
        assert_true(c.any);
        cph_counter_values v;
        volatile double acc = 0.0;
        cph_counters_start(&c);
        for (int i = 0; i < 1000000; i++) acc += i;
        cph_counters_stop(&c, &v);
        if (v.valid[CPH_CTR_INSTRUCTIONS]) assert_true(v.value[CPH_CTR_INSTRUCTIONS] > 1e6);
    }
    cph_counters_close(&c);
}

int main(void) {
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_sequential_stream),
        cmocka_unit_test(test_one_set),
        cmocka_unit_test(test_lru_not_fifo),
        cmocka_unit_test(test_working_set),
        cmocka_unit_test(test_non_power_of_two_sets),
        cmocka_unit_test(test_straddle_and_full),
        cmocka_unit_test(test_geometry_syntax),
        cmocka_unit_test(test_traced_direct_counts),
        cmocka_unit_test(test_counters_probe),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
