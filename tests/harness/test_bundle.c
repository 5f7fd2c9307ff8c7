/* Bundles: tables written by the table writer for invented machines (hwloc
 * synthetic topologies for caches and CPU counts, invented cpuid records for
 * the ISA features and the fingerprint), and the pick for other invented
 * machines.  Every expected pick is worked by hand from the rules written in
 * convpick/bundle.h (exact fingerprint; else ISA features a subset, most
 * features; then cache distance; then CPU count; then file name), no
 * outside source.  The same picks from a bundle file (convpick pack of the
 * directory), and the bundle file's framing errors with the line each names,
 * counted by hand from the format of docs/table-format.md, "Bundle files". */
#define _GNU_SOURCE
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
#include "harness/io/bundle_pack.h"
#include "harness/io/table_write.h"
#include "harness/machine/machine.h"

/* Invented machines: 16 PUs with big caches, 8 PUs with the same caches,
 * 16 and 4 PUs with small caches. */
static const char *const big16 =
    "pack:1 [numa(memory=8GiB)] l3:1(size=32MiB) l2:8(size=1MiB) l1d:1(size=48KiB) core:1 pu:2";
static const char *const big8 =
    "pack:1 [numa(memory=8GiB)] l3:1(size=32MiB) l2:4(size=1MiB) l1d:1(size=48KiB) core:1 pu:2";
static const char *const small16 =
    "pack:1 [numa(memory=8GiB)] l3:1(size=8MiB) l2:8(size=512KiB) l1d:1(size=32KiB) core:1 pu:2";
static const char *const small4 =
    "pack:1 [numa(memory=8GiB)] l3:1(size=8MiB) l2:4(size=512KiB) l1d:1(size=32KiB) core:1 pu:1";

enum { SSE42 = 1, AVX = 2, AVX2 = 4, FMA = 8, AVX512F = 16 };
#define HASWELLISH (SSE42 | AVX | AVX2 | FMA)

static char dir[64];

/* An invented machine: synthetic topology, ISA bits (cp_isa_names order),
 * fingerprint. */
static void invent(cph_machine *m, const char *topo, uint32_t isa, const char *fp) {
    char msg[256];
    assert_int_equal(cph_machine_detect(m, topo, msg, sizeof msg), CP_OK);
    int *f[] = {&m->sse42,    &m->avx,      &m->avx2,     &m->fma,         &m->avx512f,
                &m->avx512bw, &m->avx512vl, &m->avx512dq, &m->avx512_vnni, &m->avx512_bf16};
    for (unsigned i = 0; i < CP_ISA_COUNT; i++) *f[i] = (isa >> i) & 1;
    snprintf(m->fingerprint, sizeof m->fingerprint, "%s", fp);
}

static void desc_of(const cph_machine *m, cp_device_desc *d) {
    memset(d, 0, sizeof *d);
    snprintf(d->fingerprint, sizeof d->fingerprint, "%s", m->fingerprint);
    const int f[] = {m->sse42,    m->avx,      m->avx2,     m->fma,         m->avx512f,
                     m->avx512bw, m->avx512vl, m->avx512dq, m->avx512_vnni, m->avx512_bf16};
    for (unsigned i = 0; i < CP_ISA_COUNT; i++)
        if (f[i]) d->isa |= 1u << i;
    d->l1d = cph_machine_cache(m, 1)->size;
    d->l2 = cph_machine_cache(m, 2)->size;
    d->l3 = cph_machine_cache(m, 3)->size;
    d->cpus = m->pus;
}

/* Writes dir/name: an empty table of the invented machine. */
static void table_for(const char *name, const char *topo, uint32_t isa, const char *fp) {
    cph_machine m;
    invent(&m, topo, isa, fp);
    cph_table_settings s;
    memset(&s, 0, sizeof s);
    s.target_rel_ci = 0.02;
    s.confidence = 0.95;
    s.max_seconds = 1;
    s.min_samples = s.max_samples = 5;
    s.max_rel_err = 1e-4;
    s.budget_seconds = 1;
    s.max_candidates = 1;
    s.seed = 1;
    s.threads[0] = 1;
    s.nthreads = 1;
    char msg[512], path[128];
    cph_table_doc *d;
    assert_int_equal(cph_table_doc_new(&m, &s, &d, msg, sizeof msg), CP_OK);
    snprintf(path, sizeof path, "%s/%s", dir, name);
    assert_int_equal(cph_table_doc_write(d, path, msg, sizeof msg), CP_OK);
    cph_table_doc_free(d);
    cph_machine_free(&m);
}

static void clear_dir(void) {
    char cmd[128];
    snprintf(cmd, sizeof cmd, "rm -f %s/*", dir);
    assert_int_equal(system(cmd), 0);
}

/* The bundle the picks read: the directory, or a bundle file packed from it. */
static char packed[96];
static int use_file;

static const char *bundle_path(void) {
    if (!use_file) return dir;
    char msg[512];
    const char *in[] = {dir};
    size_t n;
    assert_int_equal(cph_bundle_pack(in, 1, packed, &n, msg, sizeof msg), CP_OK);
    return packed;
}

/* Picks for the invented machine; returns the file picked ("" for none). */
static const char *pick(const char *topo, uint32_t isa, const char *fp, cp_bundle_pick *p) {
    static char name[64];
    cph_machine m;
    invent(&m, topo, isa, fp);
    cp_device_desc here;
    desc_of(&m, &here);
    cph_machine_free(&m);
    cp_bundle *b;
    char msg[512];
    assert_int_equal(cp_bundle_open(bundle_path(), &b, msg, sizeof msg), CP_OK);
    const cp_status st = cp_bundle_pick_for(b, &here, p);
    name[0] = '\0';
    if (st == CP_OK) {
        const char *path = cp_bundle_path(b, p->index);
        snprintf(name, sizeof name, "%s", strrchr(path, use_file ? ':' : '/') + 1);
        /* the table picked loads, and is the device's */
        cp_table *t;
        assert_int_equal(cp_bundle_table(b, p->index, 0, &t, msg, sizeof msg), CP_OK);
        assert_string_equal(cp_table_fingerprint(t), cp_bundle_device(b, p->index)->fingerprint);
        cp_table_free(t);
    } else {
        assert_int_equal(st, CP_ENOTFOUND);
    }
    cp_bundle_free(b);
    printf("  pick: %s\n", p->why);
    return name;
}

static void test_exact_fingerprint_first(void **state) {
    (void)state;
    clear_dir();
    table_for("a_avx512.json", big16, HASWELLISH | AVX512F, "aaaaaaaaaaaaaaaa");
    table_for("b_mine.json", small4, SSE42, "bbbbbbbbbbbbbbbb");
    cp_bundle_pick p;
    /* b has fewer features and other caches, but it is this machine. */
    assert_string_equal(pick(big16, HASWELLISH | AVX512F, "bbbbbbbbbbbbbbbb", &p), "b_mine.json");
    assert_int_equal(p.kind, CP_PICK_EXACT);
    assert_non_null(strstr(p.why, "exact"));
}

static void test_isa_before_caches(void **state) {
    (void)state;
    clear_dir();
    table_for("a_avx2_samecache.json", big16, HASWELLISH, "aaaaaaaaaaaaaaaa");
    table_for("b_avx512_smallcache.json", small4, HASWELLISH | AVX512F, "bbbbbbbbbbbbbbbb");
    table_for("c_avx512_only.json", big16, AVX512F | SSE42, "cccccccccccccccc");
    cp_bundle_pick p;
    /* An AVX-512 machine: b shares 5 features (a 4, c 2) despite its caches. */
    assert_string_equal(pick(big16, HASWELLISH | AVX512F, "ffffffffffffffff", &p),
                        "b_avx512_smallcache.json");
    assert_int_equal(p.kind, CP_PICK_NEAREST);
    /* An AVX2 machine: b and c need AVX-512, so only a fits. */
    assert_string_equal(pick(big16, HASWELLISH, "ffffffffffffffff", &p),
                        "a_avx2_samecache.json");
}

static void test_caches_then_cpus(void **state) {
    (void)state;
    clear_dir();
    table_for("a_small.json", small4, HASWELLISH, "aaaaaaaaaaaaaaaa");
    table_for("b_big8.json", big8, HASWELLISH, "bbbbbbbbbbbbbbbb");
    table_for("c_big16.json", big16, HASWELLISH, "cccccccccccccccc");
    cp_bundle_pick p;
    /* A big16 machine: b and c have its caches (distance 0), c its 16 CPUs. */
    assert_string_equal(pick(big16, HASWELLISH, "ffffffffffffffff", &p), "c_big16.json");
    /* A big8 machine: b. */
    assert_string_equal(pick(big8, HASWELLISH, "ffffffffffffffff", &p), "b_big8.json");
    /* A small4 machine: a (caches first, CPUs equal anyway). */
    assert_string_equal(pick(small4, HASWELLISH, "ffffffffffffffff", &p), "a_small.json");
    /* Equal on every rule: the file name that sorts first. */
    table_for("0_twin_of_c.json", big16, HASWELLISH, "dddddddddddddddd");
    assert_string_equal(pick(big16, HASWELLISH, "ffffffffffffffff", &p), "0_twin_of_c.json");
    /* Caches before CPUs: a big16 machine takes the 8-CPU table with its
     * caches over the 16-CPU table with small ones. */
    clear_dir();
    table_for("x_big8.json", big8, HASWELLISH, "aaaaaaaaaaaaaaaa");
    table_for("y_small16.json", small16, HASWELLISH, "bbbbbbbbbbbbbbbb");
    assert_string_equal(pick(big16, HASWELLISH, "ffffffffffffffff", &p), "x_big8.json");
}

static void test_no_match(void **state) {
    (void)state;
    clear_dir();
    table_for("a.json", big16, HASWELLISH, "aaaaaaaaaaaaaaaa");
    table_for("b.json", big16, HASWELLISH | AVX512F, "bbbbbbbbbbbbbbbb");
    cp_bundle_pick p;
    assert_string_equal(pick(big16, SSE42 | AVX, "ffffffffffffffff", &p), "");
    assert_int_equal(p.kind, CP_PICK_NONE);
    assert_non_null(strstr(p.why, "none"));
}

static void test_bundle_errors(void **state) {
    (void)state;
    clear_dir();
    cp_bundle *b;
    char msg[512];
    /* an empty bundle, then a file that is not a table */
    assert_int_equal(cp_bundle_open(dir, &b, msg, sizeof msg), CP_ENOTFOUND);
    char path[128];
    snprintf(path, sizeof path, "%s/broken.json", dir);
    FILE *f = fopen(path, "w");
    assert_non_null(f);
    fputs("{\"format\": \"convpick-tuning-table\", \"version\": 2", f);
    fclose(f);
    assert_int_not_equal(cp_bundle_open(dir, &b, msg, sizeof msg), CP_OK);
    assert_non_null(strstr(msg, "broken.json"));
}

/* The picks of every test above, from a bundle file packed from the
 * directory: the same answers. */
static void test_bundle_file_picks(void **state) {
    use_file = 1;
    test_exact_fingerprint_first(state);
    test_isa_before_caches(state);
    test_caches_then_cpus(state);
    test_no_match(state);
    use_file = 0;
}

/* Writes text to the bundle file path, opens it, expects st and the message
 * to contain want. */
static void expect_bad(const char *text, size_t len, cp_status want_st, const char *want) {
    FILE *f = fopen(packed, "wb");
    assert_non_null(f);
    assert_int_equal(fwrite(text, 1, len, f), len);
    fclose(f);
    cp_bundle *b = NULL;
    char msg[512] = "";
    const cp_status st = cp_bundle_open(packed, &b, msg, sizeof msg);
    printf("  %s\n", msg);
    assert_null(b);
    assert_int_equal(st, want_st);
    char full[256];
    snprintf(full, sizeof full, "%s%s", packed, want);
    assert_non_null(strstr(msg, full));
}

/* Framing errors.  The table used is a real one (a.json below), whose line
 * count n the expected line numbers add. */
static void test_bundle_file_errors(void **state) {
    (void)state;
    clear_dir();
    table_for("a.json", big16, HASWELLISH, "aaaaaaaaaaaaaaaa");
    char path[128];
    snprintf(path, sizeof path, "%s/a.json", dir);
    FILE *f = fopen(path, "rb");
    assert_non_null(f);
    static char tab[1 << 16];
    const size_t tlen = fread(tab, 1, sizeof tab, f);
    fclose(f);
    assert_true(tlen > 0 && tlen < sizeof tab);
    size_t lines = 0; /* newlines in the table */
    for (size_t i = 0; i < tlen; i++) lines += tab[i] == '\n';
    static char buf[1 << 17];
    char want[160];
#define FRAME(...) (size_t) snprintf(buf, sizeof buf, __VA_ARGS__)
    /* line 1 */
    expect_bad("convpick-tuning-table 1\nend\n", 26, CP_EFORMAT,
               ":1: not a convpick table bundle");
    expect_bad("convpick-table-bundle 2\nend\n", 28, CP_EVERSION,
               ":1: bundle version '2' is not supported");
    /* the frame line */
    size_t n = FRAME("convpick-table-bundle 1\ntabel a.json 3\n");
    expect_bad(buf, n, CP_EFORMAT, ":2: expected 'table NAME BYTES' or 'end', found 'tabel a.json 3'");
    n = FRAME("convpick-table-bundle 1\ntable ../a.json 3\n");
    expect_bad(buf, n, CP_EFORMAT, ":2: table name '../a.json': expected a plain file name");
    n = FRAME("convpick-table-bundle 1\ntable a.json 3x\n");
    expect_bad(buf, n, CP_EFORMAT, ":2: table 'a.json': size '3x' is not a byte count");
    /* sizes that do not fit the bytes */
    n = FRAME("convpick-table-bundle 1\ntable a.json %zu\n%.*s\nend\n", tlen + 100, (int)tlen, tab);
    snprintf(want, sizeof want, ":2: table 'a.json': %zu bytes declared, only %zu left", tlen + 100,
             tlen + 5);
    expect_bad(buf, n, CP_EFORMAT, want);
    /* (the table file ends in a newline: two bytes short ends the frame on its "}") */
    n = FRAME("convpick-table-bundle 1\ntable a.json %zu\n%.*s\nend\n", tlen - 2, (int)tlen, tab);
    expect_bad(buf, n, CP_EFORMAT, ":2: table 'a.json': its");
    /* order, ending, trailing bytes: lines after a table count its lines */
    n = FRAME("convpick-table-bundle 1\ntable b.json %zu\n%.*s\ntable a.json %zu\n%.*s\nend\n",
              tlen, (int)tlen, tab, tlen, (int)tlen, tab);
    snprintf(want, sizeof want, ":%zu: table 'a.json' after 'b.json'", 2 + lines + 2);
    expect_bad(buf, n, CP_EFORMAT, want);
    n = FRAME("convpick-table-bundle 1\ntable a.json %zu\n%.*s\n", tlen, (int)tlen, tab);
    snprintf(want, sizeof want, ":%zu: no 'end' line", 2 + lines + 2);
    expect_bad(buf, n, CP_EFORMAT, want);
    n = FRAME("convpick-table-bundle 1\ntable a.json %zu\n%.*s\nend\nx", tlen, (int)tlen, tab);
    snprintf(want, sizeof want, ":%zu: 1 bytes after the 'end' line", 2 + lines + 3);
    expect_bad(buf, n, CP_EFORMAT, want);
    /* no tables; a table that is not one (named FILE:NAME, its own message) */
    expect_bad("convpick-table-bundle 1\nend\n", 28, CP_ENOTFOUND, ": no tables in the bundle");
    n = FRAME("convpick-table-bundle 1\ntable a.json 7\n{\"a\":1}\nend\n");
    expect_bad(buf, n, CP_EFORMAT, ":a.json: format: not a convpick-tuning-table");
    /* and the well-formed file loads */
    n = FRAME("convpick-table-bundle 1\ntable a.json %zu\n%.*s\nend\n", tlen, (int)tlen, tab);
    f = fopen(packed, "wb");
    assert_non_null(f);
    assert_int_equal(fwrite(buf, 1, n, f), n);
    fclose(f);
    cp_bundle *b;
    char msg[512];
    assert_int_equal(cp_bundle_open(packed, &b, msg, sizeof msg), CP_OK);
    assert_int_equal(cp_bundle_count(b), 1);
    assert_string_equal(cp_bundle_device(b, 0)->fingerprint, "aaaaaaaaaaaaaaaa");
    cp_bundle_free(b);
#undef FRAME
}

/* pack refuses two tables of one device, and writes nothing then. */
static void test_pack_refusals(void **state) {
    (void)state;
    clear_dir();
    unlink(packed);
    table_for("a.json", big16, HASWELLISH, "aaaaaaaaaaaaaaaa");
    table_for("b.json", big8, HASWELLISH, "aaaaaaaaaaaaaaaa");
    const char *in[] = {dir};
    size_t n;
    char msg[512];
    assert_int_equal(cph_bundle_pack(in, 1, packed, &n, msg, sizeof msg), CP_EFORMAT);
    printf("  %s\n", msg);
    assert_non_null(strstr(msg, "two tables of device aaaaaaaaaaaaaaaa"));
    assert_int_equal(access(packed, F_OK), -1);
}

int main(void) {
    snprintf(dir, sizeof dir, "/tmp/cp_bundle_XXXXXX");
    if (!mkdtemp(dir)) return 1;
    snprintf(packed, sizeof packed, "%s.bundle", dir); /* beside, not in, the directory */
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_exact_fingerprint_first),
        cmocka_unit_test(test_isa_before_caches),
        cmocka_unit_test(test_caches_then_cpus),
        cmocka_unit_test(test_no_match),
        cmocka_unit_test(test_bundle_errors),
        cmocka_unit_test(test_bundle_file_picks),
        cmocka_unit_test(test_bundle_file_errors),
        cmocka_unit_test(test_pack_refusals),
    };
    const int failures = cmocka_run_group_tests(tests, NULL, NULL);
    clear_dir();
    rmdir(dir);
    unlink(packed);
    return cpt_suite_status(failures, sizeof tests / sizeof tests[0]);
}
