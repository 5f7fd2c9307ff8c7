/* The machine description: counts and caches on invented machines given as
 * hwloc synthetic descriptions (the description text is the reference: its
 * sizes are the facts the tests expect back; KiB/MiB/GiB are powers of two in
 * hwloc's synthetic syntax, per hwloc's "Synthetic topologies" documentation),
 * the real machine's cpuid facts against what the Linux kernel reports in
 * /proc/cpuinfo and sysfs, and the device fingerprint. */
#define _GNU_SOURCE
#include <ctype.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <cmocka.h>

#include "tests/support/suite.h"

#include "convpick/convpick.h"
#include "loader/cpuid.h"
#include "loader/device.h"
#include "harness/machine/machine.h"

#define KiB ((size_t)1024)
#define MiB (KiB * 1024)
#define GiB (MiB * 1024)

/* Two packages of 8 cores with 2 PUs each, an L3 per package, L2 and L1d per core. */
static const char *const two_socket =
    "pack:2 [numa(memory=16GiB)] l3:1(size=32MiB) l2:8(size=1MiB) l1d:1(size=48KiB) core:1 pu:2";

static void test_synthetic_two_socket(void **state) {
    (void)state;
    cph_machine m;
    char msg[256] = "";
    assert_int_equal(cph_machine_detect(&m, two_socket, msg, sizeof msg), CP_OK);
    assert_true(m.synthetic);
    assert_int_equal(m.packages, 2);
    assert_int_equal(m.numa_nodes, 2);
    assert_int_equal(m.cores, 16);
    assert_int_equal(m.pus, 32);
    assert_true(m.memory_bytes == 32 * GiB);
    assert_int_equal(m.ncaches, 3);

    const cph_cache_level *l1 = cph_machine_cache(&m, 1), *l2 = cph_machine_cache(&m, 2),
                          *l3 = cph_machine_cache(&m, 3);
    assert_non_null(l1);
    assert_non_null(l2);
    assert_non_null(l3);
    assert_null(cph_machine_cache(&m, 4));
    assert_string_equal(l1->kind, "data");
    assert_true(l1->size == 48 * KiB);
    assert_int_equal(l1->instances, 16);
    assert_int_equal(l1->cores_sharing, 1);
    assert_string_equal(l2->kind, "unified");
    assert_true(l2->size == 1 * MiB);
    assert_int_equal(l2->instances, 16);
    assert_int_equal(l2->cores_sharing, 1);
    assert_string_equal(l3->kind, "unified");
    assert_true(l3->size == 32 * MiB);
    assert_int_equal(l3->instances, 2);
    assert_int_equal(l3->cores_sharing, 8);
    /* L1 first, levels ascending. */
    for (int i = 1; i < m.ncaches; i++) assert_true(m.caches[i].level > m.caches[i - 1].level);

    const cp_cache_sizes cs = cph_machine_caches(&m);
    assert_true(cs.l1d == 48 * KiB);
    assert_true(cs.l2 == 1 * MiB);
    assert_true(cs.l3 == 32 * MiB);
    assert_true(cs.line == 64); /* hwloc gives synthetic caches 64-byte lines (hwloc docs) */
    assert_true(cph_machine_llc_total(&m) == 64 * MiB);
    /* The ISA still comes from cpuid, the fingerprint from the real processor. */
    char fp[17];
    cp_device_fingerprint(fp);
    assert_string_equal(m.fingerprint, fp);
    cph_machine_free(&m);
    assert_null(m.topology);
}

/* No L3: the missing level comes from the fallback, the LLC is the L2. */
static void test_synthetic_no_l3(void **state) {
    (void)state;
    cph_machine m;
    char msg[256] = "";
    assert_int_equal(
        cph_machine_detect(&m, "pack:1 l2:2(size=512KiB) l1d:1(size=32KiB) core:1 pu:1", msg,
                           sizeof msg),
        CP_OK);
    assert_int_equal(m.packages, 1);
    assert_int_equal(m.cores, 2);
    assert_int_equal(m.pus, 2);
    assert_int_equal(m.ncaches, 2);
    const cp_cache_sizes cs = cph_machine_caches(&m), fb = cp_cache_sizes_fallback();
    assert_true(cs.l1d == 32 * KiB);
    assert_true(cs.l2 == 512 * KiB);
    assert_true(cs.l3 == fb.l3);
    assert_true(cph_machine_llc_total(&m) == 1 * MiB);
    cph_machine_free(&m);
}

static void test_synthetic_rejected(void **state) {
    (void)state;
    cph_machine m;
    char msg[256] = "";
    /* hwloc wants "size=" in cache attributes: "(32MB)" alone is an error. */
    assert_int_equal(cph_machine_detect(&m, "pack:1 l3:1(32MB) core:2 pu:1", msg, sizeof msg),
                     CP_EINVAL);
    assert_non_null(strstr(msg, "l3:1(32MB)"));
    assert_null(m.topology);
    assert_int_equal(cph_machine_detect(&m, "not a topology", msg, sizeof msg), CP_EINVAL);
}

/* ResNet-50 convolution shapes (He et al. 2016, table 1): conv1, a 3x3 of
 * conv2_x, a 1x1 of conv3_x, a strided 3x3 of conv4_x. */
static cp_shape resnet_shape(int which) {
    cp_shape s = cp_shape_init();
    static const int64_t d[4][6] = {
        {3, 224, 64, 7, 2, 3}, {64, 56, 64, 3, 1, 1}, {512, 28, 128, 1, 1, 0}, {256, 28, 256, 3, 2, 1}};
    s.c = d[which][0];
    s.h = s.w = d[which][1];
    s.k = d[which][2];
    s.r = s.s = d[which][3];
    s.stride_h = s.stride_w = d[which][4];
    s.pad_top = s.pad_left = s.pad_bottom = s.pad_right = d[which][5];
    return s;
}

/* Defaults every algorithm derives from the invented machine's caches are
 * within its own parameter ranges. */
static void test_defaults_from_machine_caches(void **state) {
    (void)state;
    cph_machine m;
    char msg[256] = "";
    assert_int_equal(cph_machine_detect(&m, two_socket, msg, sizeof msg), CP_OK);
    const cp_cache_sizes cs = cph_machine_caches(&m);
    int checked = 0;
    for (size_t i = 0; i < cp_algo_count(); i++) {
        const cp_algo *a = cp_algo_at(i);
        for (int k = 0; k < 4; k++) {
            const cp_shape s = resnet_shape(k);
            assert_int_equal(cp_shape_validate(&s, msg, sizeof msg), CP_SHAPE_OK);
            if (!a->supports(&s, CP_XCORR, NULL, 0)) continue;
            cp_params p;
            cp_algo_defaults(a, &s, &cs, &p);
            if (cp_params_check(a, &p, msg, sizeof msg) != CP_OK) fail_msg("%s", msg);
            checked++;
        }
    }
    assert_true(checked > 0); /* at least "direct" supports these shapes */
    cph_machine_free(&m);
}

/* --- the real machine against the kernel's view ------------------------- */

/* Value of "key<tabs>: value" in /proc/cpuinfo (first processor), or NULL. */
static int cpuinfo(const char *key, char *out, size_t cap) {
    FILE *f = fopen("/proc/cpuinfo", "r");
    if (!f) return -1;
    char line[4096];
    int found = -1;
    while (fgets(line, sizeof line, f)) {
        const size_t kl = strlen(key);
        if (strncmp(line, key, kl) != 0 || (line[kl] != '\t' && line[kl] != ' ' && line[kl] != ':'))
            continue;
        char *colon = strchr(line, ':');
        if (!colon) continue;
        char *v = colon + 1;
        while (*v == ' ') v++;
        v[strcspn(v, "\n")] = '\0';
        snprintf(out, cap, "%s", v);
        found = 0;
        break;
    }
    fclose(f);
    return found;
}

static int has_flag(const char *flags, const char *flag) {
    const size_t n = strlen(flag);
    for (const char *p = flags; (p = strstr(p, flag)) != NULL; p += n)
        if ((p == flags || p[-1] == ' ') && (p[n] == ' ' || p[n] == '\0')) return 1;
    return 0;
}

static void test_cpuid_matches_proc_cpuinfo(void **state) {
    (void)state;
    char v[4096];
    if (cpuinfo("vendor_id", v, sizeof v) != 0) cpt_skip();
    cpl_cpu_id id;
    cpl_cpuid_read(&id);
    assert_string_equal(id.vendor, v);
    assert_int_equal(cpuinfo("cpu family", v, sizeof v), 0);
    assert_int_equal(id.family, atoi(v));
    assert_int_equal(cpuinfo("model", v, sizeof v), 0);
    assert_int_equal(id.model, atoi(v));
    assert_int_equal(cpuinfo("stepping", v, sizeof v), 0);
    assert_int_equal(id.stepping, atoi(v));
    assert_int_equal(cpuinfo("model name", v, sizeof v), 0);
    assert_string_equal(id.brand, v);
    /* The kernel lists a feature only when it also enabled its state (XSAVE). */
    assert_int_equal(cpuinfo("flags", v, sizeof v), 0);
    assert_int_equal(id.sse42, has_flag(v, "sse4_2"));
    assert_int_equal(id.avx, has_flag(v, "avx"));
    assert_int_equal(id.avx2, has_flag(v, "avx2"));
    assert_int_equal(id.fma, has_flag(v, "fma"));
    assert_int_equal(id.avx512f, has_flag(v, "avx512f"));
    assert_int_equal(id.avx512bw, has_flag(v, "avx512bw"));
    assert_int_equal(id.avx512vl, has_flag(v, "avx512vl"));
    assert_int_equal(id.avx512dq, has_flag(v, "avx512dq"));
    assert_int_equal(id.avx512_vnni, has_flag(v, "avx512_vnni"));
    assert_int_equal(id.avx512_bf16, has_flag(v, "avx512_bf16"));
}

static long sysfs_long(const char *path) {
    FILE *f = fopen(path, "r");
    if (!f) return -1;
    char b[64] = "";
    const int ok = fgets(b, sizeof b, f) != NULL;
    fclose(f);
    if (!ok) return -1;
    char *end;
    long v = strtol(b, &end, 10);
    if (*end == 'K') v *= 1024;
    return v;
}

/* cpuid's cache geometry equals the kernel's (sysfs cache/indexN of cpu0). */
static void test_cpuid_caches_match_sysfs(void **state) {
    (void)state;
    cpl_cpuid_cache c[16];
    const int n = cpl_cpuid_caches(c, 16);
    if (sysfs_long("/sys/devices/system/cpu/cpu0/cache/index0/level") < 0) cpt_skip();
    assert_true(n > 0);
    int matched = 0;
    for (int i = 0; i < 16; i++) {
        char p[128];
        snprintf(p, sizeof p, "/sys/devices/system/cpu/cpu0/cache/index%d/level", i);
        const long level = sysfs_long(p);
        if (level < 0) break;
        snprintf(p, sizeof p, "/sys/devices/system/cpu/cpu0/cache/index%d/size", i);
        const long size = sysfs_long(p);
        snprintf(p, sizeof p, "/sys/devices/system/cpu/cpu0/cache/index%d/coherency_line_size", i);
        const long line = sysfs_long(p);
        snprintf(p, sizeof p, "/sys/devices/system/cpu/cpu0/cache/index%d/ways_of_associativity", i);
        const long ways = sysfs_long(p);
        for (int j = 0; j < n; j++)
            if (c[j].level == level && (long)c[j].size == size && (long)c[j].line == line &&
                (long)c[j].ways == ways) {
                matched++;
                break;
            }
    }
    assert_int_equal(matched, n);
}

static void test_machine_real(void **state) {
    (void)state;
    cph_machine m;
    char msg[256] = "";
    assert_int_equal(cph_machine_detect(&m, NULL, msg, sizeof msg), CP_OK);
    assert_false(m.synthetic);
    assert_int_equal(m.pus, (int)sysconf(_SC_NPROCESSORS_ONLN));
    assert_true(m.cores >= 1 && m.cores <= m.pus);
    assert_true(m.packages >= 1);
    assert_true(m.ncaches >= 1);
    assert_true(m.memory_bytes > 0);
    /* hwloc's L1d equals the kernel's (sysfs index0 is the L1 data cache on x86). */
    const long l1 = sysfs_long("/sys/devices/system/cpu/cpu0/cache/index0/size");
    if (l1 > 0) assert_true(cph_machine_caches(&m).l1d == (size_t)l1);
    assert_true(strlen(m.compiler) > 0);
    assert_true(strstr(m.blas_version, "OpenBLAS") != NULL); /* openblas_get_config() */
    cph_machine_free(&m);
}

/* --- fingerprint --------------------------------------------------------- */

/* FNV-1a 64-bit test vectors of the FNV authors (draft-eastlake-fnv); from memory. */
static void test_fnv1a_vectors(void **state) {
    (void)state;
    assert_true(cpl_fnv1a64(CPL_FNV1A64_OFFSET, "", 0) == 0xcbf29ce484222325ull);
    assert_true(cpl_fnv1a64(CPL_FNV1A64_OFFSET, "a", 1) == 0xaf63dc4c8601ec8cull);
    assert_true(cpl_fnv1a64(CPL_FNV1A64_OFFSET, "foobar", 6) == 0x85944171f73967e8ull);
    /* Continuing a hash equals hashing the concatenation. */
    assert_true(cpl_fnv1a64(cpl_fnv1a64(CPL_FNV1A64_OFFSET, "foo", 3), "bar", 3) ==
                0x85944171f73967e8ull);
}

static void test_fingerprint_stable(void **state) {
    (void)state;
    char a[17], b[17];
    memset(a, 'x', sizeof a);
    memset(b, 'y', sizeof b);
    cp_device_fingerprint(a);
    cp_device_fingerprint(b);
    assert_int_equal(a[16], '\0');
    assert_int_equal(strlen(a), 16);
    for (int i = 0; i < 16; i++) assert_true(isxdigit((unsigned char)a[i]) && !isupper((unsigned char)a[i]));
    assert_string_equal(a, b);
}

/* Every fact that enters the fingerprint changes it. */
static void test_fingerprint_inputs(void **state) {
    (void)state;
    cpl_cpu_id id;
    memset(&id, 0, sizeof id);
    snprintf(id.vendor, sizeof id.vendor, "AuthenticAMD");
    snprintf(id.brand, sizeof id.brand, "Invented CPU 9000");
    id.family = 25;
    id.model = 1;
    id.stepping = 1;
    id.avx2 = id.fma = 1;
    cpl_cpuid_cache c[2] = {{1, 1, 32768, 64, 8, 2}, {2, 3, 524288, 64, 8, 2}};
    char base[17], fp[17];
    cpl_fingerprint_of(&id, c, 2, 4, base);
    cpl_fingerprint_of(&id, c, 2, 4, fp);
    assert_string_equal(base, fp);

    cpl_cpu_id v = id;
    v.stepping = 2;
    cpl_fingerprint_of(&v, c, 2, 4, fp);
    assert_string_not_equal(base, fp);
    v = id;
    v.brand[0] = 'X';
    cpl_fingerprint_of(&v, c, 2, 4, fp);
    assert_string_not_equal(base, fp);
    v = id;
    v.avx512f = 1;
    cpl_fingerprint_of(&v, c, 2, 4, fp);
    assert_string_not_equal(base, fp);
    cpl_cpuid_cache c2[2] = {c[0], c[1]};
    c2[1].size = 1048576;
    cpl_fingerprint_of(&id, c2, 2, 4, fp);
    assert_string_not_equal(base, fp);
    cpl_fingerprint_of(&id, c, 1, 4, fp);
    assert_string_not_equal(base, fp);
    cpl_fingerprint_of(&id, c, 2, 8, fp);
    assert_string_not_equal(base, fp);
}

int main(void) {
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_synthetic_two_socket),
        cmocka_unit_test(test_synthetic_no_l3),
        cmocka_unit_test(test_synthetic_rejected),
        cmocka_unit_test(test_defaults_from_machine_caches),
        cmocka_unit_test(test_cpuid_matches_proc_cpuinfo),
        cmocka_unit_test(test_cpuid_caches_match_sysfs),
        cmocka_unit_test(test_machine_real),
        cmocka_unit_test(test_fnv1a_vectors),
        cmocka_unit_test(test_fingerprint_stable),
        cmocka_unit_test(test_fingerprint_inputs),
    };
    return cpt_suite_status(cmocka_run_group_tests(tests, NULL, NULL),
                            sizeof tests / sizeof tests[0]);
}
