/* Tuning tables: writer -> loader round trip, one clear error per class of
 * malformed table, the lookup rules of convpick/table.h, and the atomic
 * write.  The machine is invented (filled by hand), so nothing depends on the
 * test machine.  Malformed tables are made by editing the committed fixture
 * tests/data/tiny.table.json with jansson. */
#define _POSIX_C_SOURCE 200809L
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>

#include <cmocka.h>

#include <dirent.h>
#include <errno.h>
#include <jansson.h>
#include <math.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

#include "convpick/convpick.h"
#include "harness/io/rawfile.h"
#include "harness/io/table_write.h"

#define FIXTURE CP_TEST_DATA "/tiny.table.json"
/* The same table in version 1; tiny.table.json was made from it by
 * scripts/fixture_v1_to_v2.py, the migration written out in Python. */
#define FIXTURE_V1 CP_TEST_DATA "/tiny.v1.table.json"

static char tmpdir[256];

static int setup(void **state) {
    (void)state;
    snprintf(tmpdir, sizeof tmpdir, "/tmp/cp_test_table.XXXXXX");
    return mkdtemp(tmpdir) ? 0 : -1;
}

static int teardown(void **state) {
    (void)state;
    DIR *d = opendir(tmpdir);
    if (d) {
        struct dirent *e;
        char p[600];
        while ((e = readdir(d)))
            if (strcmp(e->d_name, ".") && strcmp(e->d_name, "..")) {
                snprintf(p, sizeof p, "%s/%s", tmpdir, e->d_name);
                chmod(p, 0700);
                if (unlink(p) != 0) rmdir(p);
            }
        closedir(d);
    }
    rmdir(tmpdir);
    return 0;
}

static const char *tpath(const char *name) {
    static char p[4][600];
    static int k;
    k = (k + 1) % 4;
    snprintf(p[k], sizeof p[k], "%s/%s", tmpdir, name);
    return p[k];
}

/* An invented two-core machine (values of the fixture's device). */
static void fake_machine(cph_machine *m) {
    memset(m, 0, sizeof *m);
    snprintf(m->vendor, sizeof m->vendor, "AuthenticAMD");
    snprintf(m->model, sizeof m->model, "Invented test processor");
    m->family = 25;
    m->model_id = 1;
    m->stepping = 1;
    m->packages = m->numa_nodes = 1;
    m->cores = m->pus = 2;
    m->memory_bytes = (size_t)8 << 30;
    const size_t sizes[3] = {32768, 524288, 33554432};
    for (int i = 0; i < 3; i++) {
        m->caches[i].level = i + 1;
        snprintf(m->caches[i].kind, sizeof m->caches[i].kind, "%s", i ? "unified" : "data");
        m->caches[i].size = sizes[i];
        m->caches[i].line = 64;
        m->caches[i].assoc = i == 2 ? 16 : 8;
        m->caches[i].instances = i == 2 ? 1 : 2;
        m->caches[i].cores_sharing = i == 2 ? 2 : 1;
    }
    m->ncaches = 3;
    m->sse42 = m->avx = m->avx2 = m->fma = 1;
    snprintf(m->blas_version, sizeof m->blas_version, "OpenBLAS test");
    snprintf(m->blas_core, sizeof m->blas_core, "Zen");
    snprintf(m->compiler, sizeof m->compiler, "GNU test");
    snprintf(m->build_flags, sizeof m->build_flags, "-O3");
    cp_device_fingerprint(m->fingerprint);
    m->synthetic = 1;
}

static void fake_settings(cph_table_settings *s) {
    memset(s, 0, sizeof *s);
    s->target_rel_ci = 0.02;
    s->confidence = 0.95;
    s->max_seconds = 2.0;
    s->warmup = 2;
    s->min_samples = 10;
    s->max_samples = 1000;
    s->max_rel_err = 1e-4;
    s->budget_seconds = 20;
    s->max_candidates = 8;
    s->seed = 1;
    s->threads[0] = 1;
    s->threads[1] = 2;
    s->nthreads = 2;
}

static cp_shape shape3x3(int64_t c, int64_t hw, int64_t k) {
    cp_shape s = cp_shape_init();
    s.c = c;
    s.h = s.w = hw;
    s.k = k;
    s.r = s.s = 3;
    s.pad_top = s.pad_left = s.pad_bottom = s.pad_right = 1;
    return s;
}

/* An algorithm with tunable parameters, if this build registers one. */
static const cp_algo *algo_with_params(void) {
    for (size_t i = 0; i < cp_algo_count(); i++)
        if (cp_algo_at(i)->nparams > 0) return cp_algo_at(i);
    return NULL;
}

static void fill_entry(cp_table_entry *e, cp_candidate *cands, double *samples, const char *name,
                       cp_shape s, cp_flip flip, int threads) {
    memset(e, 0, sizeof *e);
    snprintf(e->name, sizeof e->name, "%s", name);
    e->shape = s;
    e->flip = flip;
    e->threads = threads;
    e->algo = cp_algo_find("direct");
    e->timing = (cp_timing){1.25e-4, 1.2e-4, 1.3e-4, 33, 0};
    e->runner_up = cp_algo_find("direct_flipidx");
    e->margin = 0.0625;
    e->margin_in_noise = 1;
    memset(cands, 0, 3 * sizeof *cands);
    snprintf(cands[0].algo, sizeof cands[0].algo, "direct");
    cands[0].timing = e->timing;
    cands[0].rel_err = 1.5e-7;
    cands[0].samples = samples;
    cands[0].nsamples = 3;
    snprintf(cands[1].algo, sizeof cands[1].algo, "direct_flipidx");
    cands[1].timing = (cp_timing){1.328125e-4, 1.3e-4, 1.4e-4, 20, 1};
    cands[1].rel_err = 0.5;
    cands[1].disqualified = 1;
    snprintf(cands[2].algo, sizeof cands[2].algo, "direct");
    cands[2].failed = 1;
    cands[2].rel_err = NAN;
    e->ncandidates = 3;
    e->candidates = cands;
}

static void round_trip(int with_params) {
    cph_machine m;
    cph_table_settings st;
    fake_machine(&m);
    fake_settings(&st);
    char msg[512] = "";
    cph_table_doc *d;
    assert_int_equal(cph_table_doc_new(&m, &st, &d, msg, sizeof msg), CP_OK);
    cp_table_entry e[2];
    cp_candidate c[2][3];
    double samples[3] = {1.2e-4, 1.25e-4, 1.3e-4};
    fill_entry(&e[0], c[0], samples, "first", shape3x3(8, 12, 16), CP_XCORR, 1);
    fill_entry(&e[1], c[1], samples, "second", shape3x3(16, 6, 16), CP_CONV, 2);
    e[1].shape.stride_h = 2;
    e[1].runner_up = NULL;
    const cp_algo *pa = with_params ? algo_with_params() : NULL;
    if (pa) { /* parameters survive the trip too */
        cp_algo_defaults(pa, &e[1].shape, NULL, &e[1].params);
        e[1].algo = pa;
        snprintf(c[1][0].algo, sizeof c[1][0].algo, "%s", pa->name);
        c[1][0].params = e[1].params;
    }
    const char *notes[3] = {"", "rel_err above 1e-4", "plan creation failed"};
    cph_entry_notes n = {.candidate_notes = notes, .planned = 3, .measured = 1, .failed = 1,
                         .disqualified = 1, .seconds = 0.75};
    for (int i = 0; i < 2; i++) assert_int_equal(cph_table_doc_put(d, &e[i], &n, msg, sizeof msg), CP_OK);
    const char *p = tpath("rt.json");
    assert_int_equal(cph_table_doc_write(d, p, msg, sizeof msg), CP_OK);
    cph_table_doc_free(d);

    cp_table *t;
    cp_status ls = cp_table_load(p, CP_TABLE_STRICT_DEVICE, &t, msg, sizeof msg);
    if (ls != CP_OK) fail_msg("%s", msg);
    assert_int_equal(cp_table_count(t), 2);
    assert_true(cp_table_device_matches(t));
    assert_string_equal(cp_table_fingerprint(t), m.fingerprint);
    cp_cache_sizes cs = cp_table_caches(t);
    assert_int_equal(cs.l1d, 32768);
    assert_int_equal(cs.l2, 524288);
    assert_int_equal(cs.l3, 33554432);
    assert_int_equal(cs.line, 64);
    char key[17];
    cph_table_settings_key(&st, key);
    for (size_t i = 0; i < 2; i++) {
        const cp_table_entry *g = cp_table_entry_at(t, i);
        assert_string_equal(g->name, e[i].name);
        assert_true(cp_shape_equal(&g->shape, &e[i].shape));
        assert_int_equal(g->flip, e[i].flip);
        assert_int_equal(g->threads, e[i].threads);
        assert_ptr_equal(g->algo, e[i].algo);
        assert_memory_equal(&g->params, &e[i].params, sizeof g->params);
        assert_memory_equal(&g->timing, &e[i].timing, sizeof g->timing);
        assert_ptr_equal(g->runner_up, e[i].runner_up);
        if (g->runner_up) {
            assert_memory_equal(&g->runner_up_params, &e[i].runner_up_params,
                                sizeof g->runner_up_params);
            assert_true(g->margin == e[i].margin);
            assert_int_equal(g->margin_in_noise, 1);
        }
        assert_string_equal(cp_table_settings_key(t, i), key);
        assert_int_equal(g->ncandidates, 3);
        for (size_t j = 0; j < 3; j++) {
            const cp_candidate *a = &g->candidates[j], *b = &e[i].candidates[j];
            assert_string_equal(a->algo, b->algo);
            assert_memory_equal(&a->params, &b->params, sizeof a->params);
            assert_int_equal(a->disqualified, b->disqualified);
            assert_int_equal(a->failed, b->failed);
            if (b->failed) {
                assert_true(isnan(a->rel_err));
            } else {
                assert_true(a->rel_err == b->rel_err);
                assert_memory_equal(&a->timing, &b->timing, sizeof a->timing);
            }
            assert_int_equal(a->nsamples, b->nsamples);
            for (size_t k = 0; k < a->nsamples; k++) assert_true(a->samples[k] == b->samples[k]);
        }
    }
    cp_table_free(t);

    /* Fields only the writer knows, read back with jansson. */
    json_error_t err;
    json_t *root = json_load_file(p, 0, &err);
    assert_non_null(root);
    json_t *dev = json_object_get(root, "device");
    assert_string_equal(json_string_value(json_object_get(json_object_get(dev, "cpu"), "vendor")),
                        "AuthenticAMD");
    assert_int_equal(json_integer_value(json_object_get(json_object_get(dev, "topology"), "cores")), 2);
    assert_int_equal(json_array_size(json_object_get(dev, "isa")), 4);
    json_t *set = json_object_get(root, "settings");
    assert_true(json_is_false(json_object_get(json_object_get(set, "timing"), "cold")));
    assert_int_equal(json_array_size(json_object_get(set, "threads")), 2);
    const char *created = json_string_value(json_object_get(root, "created"));
    assert_non_null(created);
    assert_int_equal(strlen(created), 20); /* YYYY-MM-DDTHH:MM:SSZ */
    json_t *c1 = json_array_get(json_object_get(json_array_get(json_object_get(root, "entries"), 0), "candidates"), 2);
    assert_string_equal(json_string_value(json_object_get(c1, "note")), "plan creation failed");
    assert_string_equal(json_string_value(json_object_get(c1, "status")), "failed");
    json_decref(root);
}

static void test_round_trip(void **state) {
    (void)state;
    round_trip(0);
}

/* Same with a chosen algorithm that has tunable parameters. */
static void test_round_trip_params(void **state) {
    (void)state;
    if (!algo_with_params()) skip(); /* no registered algorithm has parameters in this build */
    round_trip(1);
}

static void test_resume(void **state) {
    (void)state;
    cph_machine m;
    cph_table_settings st;
    fake_machine(&m);
    fake_settings(&st);
    char msg[512];
    cph_table_doc *d;
    assert_int_equal(cph_table_doc_new(&m, &st, &d, msg, sizeof msg), CP_OK);
    cp_table_entry e;
    cp_candidate c[3];
    double samples[3] = {1, 2, 3};
    fill_entry(&e, c, samples, "a", shape3x3(4, 8, 4), CP_XCORR, 1);
    assert_int_equal(cph_table_doc_put(d, &e, NULL, msg, sizeof msg), CP_OK);
    const char *p = tpath("resume.json");
    assert_int_equal(cph_table_doc_write(d, p, msg, sizeof msg), CP_OK);
    cph_table_doc_free(d);

    assert_int_equal(cph_table_doc_open(p, &m, &st, &d, msg, sizeof msg), CP_OK);
    char key[17];
    cph_table_settings_key(&st, key);
    assert_string_equal(cph_table_doc_settings_key(d), key);
    assert_int_equal(cph_table_doc_count(d), 1);
    assert_int_equal(cph_table_doc_find(d, &e.shape, CP_XCORR, 1), CPH_TABLE_SAME);
    assert_int_equal(cph_table_doc_find(d, &e.shape, CP_XCORR, 2), CPH_TABLE_ABSENT);
    assert_int_equal(cph_table_doc_find(d, &e.shape, CP_CONV, 1), CPH_TABLE_ABSENT);
    /* same key again replaces; another shape appends */
    snprintf(e.name, sizeof e.name, "a2");
    assert_int_equal(cph_table_doc_put(d, &e, NULL, msg, sizeof msg), CP_OK);
    assert_int_equal(cph_table_doc_count(d), 1);
    e.shape.k = 8;
    assert_int_equal(cph_table_doc_put(d, &e, NULL, msg, sizeof msg), CP_OK);
    assert_int_equal(cph_table_doc_count(d), 2);
    cph_table_doc_free(d);

    st.max_rel_err = 1e-3; /* other settings: the entry is stale */
    assert_int_equal(cph_table_doc_open(p, &m, &st, &d, msg, sizeof msg), CP_OK);
    assert_int_equal(cph_table_doc_find(d, &e.shape, CP_XCORR, 1), CPH_TABLE_ABSENT);
    e.shape.k = 4;
    assert_int_equal(cph_table_doc_find(d, &e.shape, CP_XCORR, 1), CPH_TABLE_STALE);
    cph_table_doc_free(d);

    snprintf(m.fingerprint, sizeof m.fingerprint, "0123456789abcdef");
    assert_int_equal(cph_table_doc_open(p, &m, &st, &d, msg, sizeof msg), CP_EDEVICE);
    assert_non_null(strstr(msg, "0123456789abcdef"));
}

/* --- malformed tables ---------------------------------------------------- */

static json_t *fixture(void) {
    json_error_t err;
    json_t *r = json_load_file(FIXTURE, 0, &err);
    if (!r) fail_msg("%s:%d: %s", FIXTURE, err.line, err.text);
    return r;
}

static json_t *entry0(json_t *root) { return json_array_get(json_object_get(root, "entries"), 0); }

/* Writes root (consumed) and loads it: returns the status, message in msg. */
static cp_status load_doc(json_t *root, const char *name, char *msg, size_t cap) {
    const char *p = tpath(name);
    assert_int_equal(json_dump_file(root, p, JSON_INDENT(1)), 0);
    json_decref(root);
    cp_table *t = NULL;
    cp_status st = cp_table_load(p, 0, &t, msg, cap);
    cp_table_free(t);
    return st;
}

static void expect(cp_status got, cp_status want, const char *msg, const char *needle) {
    if (got != want || !strstr(msg, needle))
        fail_msg("status %d (want %d), message '%s' lacks '%s'", got, want, msg, needle);
}

static void test_fixture_loads(void **state) {
    (void)state;
    char msg[512] = "";
    cp_table *t;
    cp_status st = cp_table_load(FIXTURE, 0, &t, msg, sizeof msg);
    if (st != CP_OK) fail_msg("%s", msg);
    assert_int_equal(cp_table_count(t), 2);
    assert_string_equal(cp_table_entry_at(t, 1)->name, "block1");
    assert_int_equal(cp_table_entry_at(t, 1)->candidates[1].failed, 1);
    cp_table_free(t);
}

/* --- version 1 ---------------------------------------------------------- */

static void same_entry(const cp_table_entry *a, const cp_table_entry *b) {
    assert_string_equal(a->name, b->name);
    assert_true(cp_shape_equal(&a->shape, &b->shape));
    assert_int_equal(a->flip, b->flip);
    assert_int_equal(a->threads, b->threads);
    assert_ptr_equal(a->algo, b->algo);
    assert_memory_equal(&a->params, &b->params, sizeof a->params);
    assert_memory_equal(&a->timing, &b->timing, sizeof a->timing);
    assert_ptr_equal(a->runner_up, b->runner_up);
    assert_int_equal(a->ncandidates, b->ncandidates);
    for (size_t j = 0; j < a->ncandidates; j++) {
        assert_string_equal(a->candidates[j].algo, b->candidates[j].algo);
        assert_int_equal(a->candidates[j].failed, b->candidates[j].failed);
        assert_memory_equal(&a->candidates[j].timing, &b->candidates[j].timing, sizeof(cp_timing));
    }
}

/* A version-1 table loads, migrated, exactly as its version-2 rewrite by the
 * Python migration (scripts/fixture_v1_to_v2.py) does: mode "conv" became
 * flipped true, the timing fields moved under "stats". */
static void test_v1_fixture_migrates(void **state) {
    (void)state;
    char msg[512] = "";
    cp_table *a, *b;
    if (cp_table_load(FIXTURE_V1, 0, &a, msg, sizeof msg) != CP_OK) fail_msg("%s", msg);
    if (cp_table_load(FIXTURE, 0, &b, msg, sizeof msg) != CP_OK) fail_msg("%s", msg);
    assert_int_equal(cp_table_count(a), 2);
    assert_int_equal(cp_table_count(b), 2);
    for (size_t i = 0; i < 2; i++) same_entry(cp_table_entry_at(a, i), cp_table_entry_at(b, i));
    assert_int_equal(cp_table_entry_at(a, 1)->flip, CP_CONV); /* "mode": "conv" in the file */
    assert_true(cp_table_entry_at(a, 0)->timing.median == 1.2e-4); /* "median_s" in the file */
    assert_string_equal(cp_table_settings_key(a, 0), "7d0c1b2a3e4f5061");
    cp_table_free(a);
    cp_table_free(b);
}

/* The parameter renamed in version 2: a version-1 entry of the blocked
 * algorithm with "ukernel": 1 loads as tile_isa = 1 (its values, from
 * algos/blocked.c: 0 = best the CPU has, 1 = portable C). */
static void test_v1_ukernel_is_tile_isa(void **state) {
    (void)state;
    char msg[512] = "";
    json_error_t err;
    json_t *r = json_load_file(FIXTURE_V1, 0, &err);
    assert_non_null(r);
    json_t *ch = json_object_get(entry0(r), "choice");
    json_object_set_new(ch, "algo", json_string("blocked"));
    json_object_set_new(ch, "params", json_pack("{s:i}", "ukernel", 1));
    json_object_set_new(entry0(r), "candidates", json_array());
    const char *p = tpath("v1_ukernel.json");
    assert_int_equal(json_dump_file(r, p, JSON_INDENT(1)), 0);
    json_decref(r);
    cp_table *t;
    if (cp_table_load(p, 0, &t, msg, sizeof msg) != CP_OK) fail_msg("%s", msg);
    const cp_table_entry *e = cp_table_entry_at(t, 0);
    const int i = cp_algo_param_index(e->algo, "tile_isa");
    assert_true(i >= 0);
    assert_int_equal(e->params.v[i], 1);
    cp_table_free(t);
}

/* --resume of a version-1 table: the document is rewritten in version 2, its
 * entries kept (and migrated), none in the old spelling. */
static void test_v1_resume_writes_v2(void **state) {
    (void)state;
    char msg[512] = "";
    cph_machine m;
    fake_machine(&m);
    snprintf(m.fingerprint, sizeof m.fingerprint, "00000000000f1a7e"); /* the fixture's device */
    cph_table_settings st;
    fake_settings(&st);
    const char *p = tpath("resume_v1.json");
    json_error_t err;
    json_t *r = json_load_file(FIXTURE_V1, 0, &err);
    assert_non_null(r);
    assert_int_equal(json_dump_file(r, p, JSON_INDENT(1)), 0);
    json_decref(r);
    cph_table_doc *d;
    if (cph_table_doc_open(p, &m, &st, &d, msg, sizeof msg) != CP_OK) fail_msg("%s", msg);
    assert_int_equal(cph_table_doc_count(d), 2);
    if (cph_table_doc_write(d, p, msg, sizeof msg) != CP_OK) fail_msg("%s", msg);
    cph_table_doc_free(d);
    r = json_load_file(p, 0, &err);
    assert_non_null(r);
    assert_int_equal(json_integer_value(json_object_get(r, "version")), 2);
    json_t *e1 = json_array_get(json_object_get(r, "entries"), 1);
    assert_true(json_is_true(json_object_get(e1, "flipped")));
    assert_null(json_object_get(e1, "mode"));
    assert_non_null(json_object_get(json_object_get(e1, "timing"), "stats"));
    json_decref(r);
    cp_table *t;
    if (cp_table_load(p, 0, &t, msg, sizeof msg) != CP_OK) fail_msg("%s", msg);
    assert_int_equal(cp_table_count(t), 2);
    cp_table_free(t);
}

static void test_truncated(void **state) {
    (void)state;
    FILE *f = fopen(FIXTURE, "rb");
    assert_non_null(f);
    char buf[1500];
    size_t n = fread(buf, 1, sizeof buf, f);
    fclose(f);
    assert_int_equal(n, sizeof buf); /* the fixture is longer than this */
    const char *p = tpath("trunc.json");
    f = fopen(p, "wb");
    fwrite(buf, 1, n, f);
    fclose(f);
    char msg[512], want[600];
    cp_table *t;
    assert_int_equal(cp_table_load(p, 0, &t, msg, sizeof msg), CP_EFORMAT);
    /* jansson reports the end of the input: path:LINE:COLUMN: text */
    snprintf(want, sizeof want, "%s:", p);
    assert_true(strncmp(msg, want, strlen(want)) == 0);
    int line = 0, col = 0;
    assert_int_equal(sscanf(msg + strlen(want), "%d:%d:", &line, &col), 2);
    assert_true(line > 10);
}

static void test_empty_and_directory_and_missing(void **state) {
    (void)state;
    char msg[512];
    cp_table *t;
    const char *p = tpath("empty.json");
    FILE *f = fopen(p, "wb");
    fclose(f);
    expect(cp_table_load(p, 0, &t, msg, sizeof msg), CP_EFORMAT, msg, "empty file");
    expect(cp_table_load(tmpdir, 0, &t, msg, sizeof msg), CP_EIO, msg, "is a directory");
    expect(cp_table_load(tpath("absent.json"), 0, &t, msg, sizeof msg), CP_EIO, msg,
           "No such file or directory");
}

static void test_wrong_types(void **state) {
    (void)state;
    char msg[512];
    json_t *r = fixture();
    json_object_set_new(json_object_get(json_array_get(json_object_get(r, "entries"), 1), "shape"),
                        "k", json_string("8"));
    expect(load_doc(r, "type1.json", msg, sizeof msg), CP_EFORMAT, msg,
           "entries[1].shape.k: expected integer, found a string");
    r = fixture();
    json_object_set_new(json_object_get(json_object_get(entry0(r), "timing"), "stats"), "noisy",
                        json_integer(0));
    expect(load_doc(r, "type2.json", msg, sizeof msg), CP_EFORMAT, msg,
           "entries[0].timing.stats.noisy: expected boolean");
    r = fixture();
    json_object_set_new(r, "entries", json_object());
    expect(load_doc(r, "type3.json", msg, sizeof msg), CP_EFORMAT, msg, "entries: expected array");
    r = fixture();
    json_object_set_new(entry0(r), "flipped", json_string("conv"));
    expect(load_doc(r, "type4.json", msg, sizeof msg), CP_EFORMAT, msg,
           "entries[0].flipped: expected boolean, found a string");
}

static void test_version_and_format(void **state) {
    (void)state;
    char msg[512];
    json_t *r = fixture();
    json_object_set_new(r, "version", json_integer(7));
    expect(load_doc(r, "v7.json", msg, sizeof msg), CP_EVERSION, msg, "version: 7 is not supported");
    r = fixture();
    json_object_set_new(r, "format", json_string("some-other-table"));
    expect(load_doc(r, "fmt.json", msg, sizeof msg), CP_EFORMAT, msg, "format: 'some-other-table'");
    r = json_array();
    expect(load_doc(r, "arr.json", msg, sizeof msg), CP_EFORMAT, msg, "top level");
}

static void test_missing_fields(void **state) {
    (void)state;
    char msg[512];
    json_t *r = fixture();
    json_object_del(entry0(r), "timing");
    expect(load_doc(r, "miss1.json", msg, sizeof msg), CP_EFORMAT, msg,
           "entries[0].timing: missing (expected object)");
    r = fixture();
    json_object_del(json_object_get(r, "device"), "fingerprint");
    expect(load_doc(r, "miss2.json", msg, sizeof msg), CP_EFORMAT, msg, "device.fingerprint: missing");
    r = fixture();
    json_object_del(json_array_get(json_object_get(entry0(r), "candidates"), 1), "status");
    expect(load_doc(r, "miss3.json", msg, sizeof msg), CP_EFORMAT, msg,
           "entries[0].candidates[1].status: missing");
    r = fixture();
    json_object_del(r, "format");
    expect(load_doc(r, "miss4.json", msg, sizeof msg), CP_EFORMAT, msg, "format: missing");
}

/* A table written before an algorithm gained a parameter lacks it: the entry
 * loads, and the parameter takes the algorithm's default for the entry's shape
 * and the table's cache sizes (the rule in docs/table-format.md). */
static void test_missing_param_takes_default(void **state) {
    (void)state;
    char msg[512];
    json_t *r = fixture();
    json_t *choice = json_object_get(entry0(r), "choice");
    json_object_set_new(choice, "algo", json_string("im2col_gemm"));
    json_object_set_new(choice, "params", json_object()); /* row_block absent */
    const char *p = tpath("oldparams.json");
    assert_int_equal(json_dump_file(r, p, JSON_INDENT(1)), 0);
    json_decref(r);
    cp_table *t = NULL;
    if (cp_table_load(p, 0, &t, msg, sizeof msg) != CP_OK) fail_msg("%s", msg);
    const cp_table_entry *e = cp_table_entry_at(t, 0);
    const cp_algo *a = cp_algo_find("im2col_gemm");
    assert_ptr_equal(e->algo, a);
    cp_cache_sizes caches = cp_table_caches(t);
    cp_params want;
    cp_algo_defaults(a, &e->shape, &caches, &want);
    assert_true(want.v[0] >= 1); /* a default that zero-filling would not give */
    assert_int_equal(e->params.v[0], want.v[0]);
    cp_table_free(t);
    /* A parameter the algorithm does not have is still an error. */
    r = fixture();
    json_object_set_new(json_object_get(json_object_get(entry0(r), "choice"), "params"), "bogus",
                        json_integer(1));
    expect(load_doc(r, "badparam.json", msg, sizeof msg), CP_EFORMAT, msg,
           "entries[0].choice.params.bogus: direct has no parameter of that name");
}

static void test_huge_numbers(void **state) {
    (void)state;
    char msg[512];
    cp_table *t;
    /* beyond int64: jansson refuses it while parsing, with line and column */
    const char *p = tpath("huge1.json");
    FILE *f = fopen(p, "wb");
    fputs("{\"format\": \"convpick-tuning-table\",\n \"version\": 99999999999999999999}\n", f);
    fclose(f);
    expect(cp_table_load(p, 0, &t, msg, sizeof msg), CP_EFORMAT, msg, ":2:");
    assert_non_null(strstr(msg, "too big"));
    /* in int64 but a shape whose tensors overflow */
    json_t *r = fixture();
    json_object_set_new(json_object_get(entry0(r), "shape"), "k", json_integer((json_int_t)1 << 62));
    expect(load_doc(r, "huge2.json", msg, sizeof msg), CP_EFORMAT, msg, "entries[0].shape: invalid shape");
    /* beyond int for threads */
    r = fixture();
    json_object_set_new(entry0(r), "threads", json_integer((json_int_t)1 << 40));
    expect(load_doc(r, "huge3.json", msg, sizeof msg), CP_EFORMAT, msg,
           "entries[0].threads: 1099511627776 is outside");
    r = fixture();
    json_object_set_new(json_object_get(json_object_get(entry0(r), "timing"), "stats"), "n",
                        json_integer((json_int_t)1 << 33));
    expect(load_doc(r, "huge4.json", msg, sizeof msg), CP_EFORMAT, msg, "entries[0].timing.stats.n:");
}

static void test_unknown_algorithm_and_duplicates(void **state) {
    (void)state;
    char msg[512];
    json_t *r = fixture();
    json_object_set_new(json_object_get(entry0(r), "choice"), "algo", json_string("nosuch"));
    expect(load_doc(r, "algo.json", msg, sizeof msg), CP_ENOTFOUND, msg,
           "entries[0].choice.algo: unknown algorithm 'nosuch'");
    r = fixture();
    json_object_set_new(json_object_get(entry0(r), "choice"), "params", json_pack("{s:i}", "zz", 3));
    expect(load_doc(r, "param.json", msg, sizeof msg), CP_EFORMAT, msg,
           "entries[0].choice.params.zz: direct has no parameter");
    r = fixture();
    json_t *ents = json_object_get(r, "entries");
    json_array_append_new(ents, json_deep_copy(json_array_get(ents, 0)));
    expect(load_doc(r, "dup.json", msg, sizeof msg), CP_EFORMAT, msg,
           "entries[2]: same shape, flipped and threads as entries[0]");
}

static void test_strict_device(void **state) {
    (void)state;
    char msg[512];
    cp_table *t;
    expect(cp_table_load(FIXTURE, CP_TABLE_STRICT_DEVICE, &t, msg, sizeof msg), CP_EDEVICE, msg,
           "00000000000f1a7e is not this machine's");
    assert_int_equal(cp_table_load(FIXTURE, 0, &t, msg, sizeof msg), CP_OK);
    assert_false(cp_table_device_matches(t));
    cp_table_free(t);
}

/* --- lookup --------------------------------------------------------------- */

static void test_lookup_rules(void **state) {
    (void)state;
    char msg[512];
    cp_table *t;
    assert_int_equal(cp_table_load(FIXTURE, 0, &t, msg, sizeof msg), CP_OK);
    cp_choice c;
    cp_shape stem = shape3x3(3, 16, 8);

    assert_int_equal(cp_table_lookup(t, &stem, CP_XCORR, 1, &c, msg, sizeof msg), CP_OK);
    assert_int_equal(c.match, CP_MATCH_EXACT);
    assert_string_equal(c.algo->name, "direct");
    assert_string_equal(c.entry->name, "stem");
    assert_string_equal(cp_match_str(c.match), "exact");
    /* threads <= 0: any thread count */
    assert_int_equal(cp_table_lookup(t, &stem, CP_XCORR, 0, &c, msg, sizeof msg), CP_OK);
    assert_int_equal(c.match, CP_MATCH_EXACT);
    /* another thread count: the nearest compatible is the same shape (FLOPs ratio 1) */
    assert_int_equal(cp_table_lookup(t, &stem, CP_XCORR, 2, &c, msg, sizeof msg), CP_OK);
    assert_int_equal(c.match, CP_MATCH_NEAREST);
    assert_string_equal(c.entry->name, "stem");

    /* conv mode, another size: nearest is block1 (the only conv entry), approximate */
    cp_shape big = shape3x3(8, 32, 8);
    assert_int_equal(cp_table_lookup(t, &big, CP_CONV, 1, &c, msg, sizeof msg), CP_OK);
    assert_int_equal(c.match, CP_MATCH_NEAREST);
    assert_string_equal(c.entry->name, "block1");
    assert_string_equal(c.algo->name, "direct_flipidx");
    assert_string_equal(cp_match_str(c.match), "approximate");
    assert_non_null(strstr(c.why, "nearest"));
    /* xcorr of that size: nearer (in log FLOPs) to stem? stem 2*8*3*9*256=110592, asked
     * 2*8*8*9*1024=1179648; block1 is conv, so stem is the only xcorr candidate. */
    assert_int_equal(cp_table_lookup(t, &big, CP_XCORR, 1, &c, msg, sizeof msg), CP_OK);
    assert_string_equal(c.entry->name, "stem");

    /* a 1x1 kernel matches no entry: default */
    cp_shape one = cp_shape_init();
    one.c = 16;
    one.h = one.w = 8;
    one.k = 8;
    one.r = one.s = 1;
    assert_int_equal(cp_table_lookup(t, &one, CP_XCORR, 1, &c, msg, sizeof msg), CP_OK);
    assert_int_equal(c.match, CP_MATCH_DEFAULT);
    assert_string_equal(c.algo->name, "im2col_gemm");
    assert_null(c.entry);
    /* stride differs: default too */
    cp_shape s2 = stem;
    s2.stride_h = s2.stride_w = 2;
    assert_int_equal(cp_table_lookup(t, &s2, CP_XCORR, 1, &c, msg, sizeof msg), CP_OK);
    assert_int_equal(c.match, CP_MATCH_DEFAULT);
    /* no table at all: default */
    assert_int_equal(cp_table_lookup(NULL, &stem, CP_XCORR, 1, &c, msg, sizeof msg), CP_OK);
    assert_int_equal(c.match, CP_MATCH_DEFAULT);
    /* invalid shape */
    cp_shape bad = stem;
    bad.c = 0;
    assert_int_equal(cp_table_lookup(t, &bad, CP_XCORR, 1, &c, msg, sizeof msg), CP_EINVAL);

    /* dispatch: plan from the table and run it */
    float w[8 * 3 * 9], x[3 * 16 * 16], y[8 * 16 * 16];
    for (size_t i = 0; i < sizeof w / sizeof w[0]; i++) w[i] = (float)((int)(i % 7) - 3) / 8.0f;
    for (size_t i = 0; i < sizeof x / sizeof x[0]; i++) x[i] = (float)((int)(i % 5) - 2) / 4.0f;
    cp_plan *plan;
    cp_status ps = cp_table_plan(t, &stem, CP_XCORR, 1, w, &plan, &c, msg, sizeof msg);
    if (ps != CP_OK) fail_msg("%s", msg);
    assert_string_equal(cp_plan_algo(plan)->name, "direct");
    assert_int_equal(cp_plan_run(plan, x, NULL, y, NULL), CP_OK);
    /* and what it computed is the layer: the fp64 oracle (convpick/oracle.h),
     * within the dispatched algorithm's own tolerance */
    assert_int_equal(cp_shape_output_elems(&stem), sizeof y / sizeof y[0]);
    static double ref[8 * 16 * 16], mag[8 * 16 * 16];
    cp_oracle_run(&stem, CP_XCORR, x, w, NULL, ref, mag);
    const cp_error err = cp_error_measure(y, ref, mag, sizeof y / sizeof y[0]);
    assert_int_equal(err.nonfinite, 0);
    assert_true(err.rel_err <= cp_plan_algo(plan)->tolerance);
    cp_plan_destroy(plan);
    cp_table_free(t);
}

/* --- atomic write ---------------------------------------------------------- */

static int dir_has_tmp(void) {
    DIR *d = opendir(tmpdir);
    struct dirent *e;
    int found = 0;
    while (d && (e = readdir(d)))
        if (e->d_name[0] == '.' && strcmp(e->d_name, ".") && strcmp(e->d_name, ".."))
            found = 1; /* cph_write_atomic's temporary files are .NAME.XXXXXX */
    if (d) closedir(d);
    return found;
}

static char *slurp(const char *p) {
    FILE *f = fopen(p, "rb");
    if (!f) return NULL;
    static char buf[1 << 16];
    size_t n = fread(buf, 1, sizeof buf - 1, f);
    buf[n] = '\0';
    fclose(f);
    return strdup(buf);
}

static void test_atomic_write_failures(void **state) {
    (void)state;
    char msg[512];
    const char *p = tpath("keep.json");
    assert_int_equal(cph_write_atomic(p, "{\"old\": 1}", 10, msg, sizeof msg), CP_OK);
    char *before = slurp(p);
    assert_string_equal(before, "{\"old\": 1}");

    /* 1. a directory that does not exist */
    expect(cph_write_atomic(tpath("nodir/t.json"), "x", 1, msg, sizeof msg), CP_EIO, msg,
           "No such file or directory");
    /* 2. the target is a directory: the temp file is made, the rename fails and
     * the temp file must be removed */
    const char *dp = tpath("adir");
    assert_int_equal(mkdir(dp, 0700), 0);
    expect(cph_write_atomic(dp, "x", 1, msg, sizeof msg), CP_EIO, msg, "rename");
    assert_false(dir_has_tmp());
    /* 3. the write itself fails (file size limit): the old table is intact */
    struct rlimit old, lim;
    getrlimit(RLIMIT_FSIZE, &old);
    lim = old;
    lim.rlim_cur = 4;
    void (*prev)(int) = signal(SIGXFSZ, SIG_IGN);
    assert_int_equal(setrlimit(RLIMIT_FSIZE, &lim), 0);
    cp_status st = cph_write_atomic(p, "{\"new\": 2, \"padding\": \"0123456789\"}", 35, msg, sizeof msg);
    setrlimit(RLIMIT_FSIZE, &old);
    signal(SIGXFSZ, prev);
    expect(st, CP_EIO, msg, "File too large");
    char *after = slurp(p);
    assert_string_equal(after, before);
    assert_false(dir_has_tmp());
    free(before);
    free(after);
}

/* 4. a read-only directory.  Root writes into one anyway, so as root the
 * write is made with the effective user id of an unprivileged user (65534,
 * "nobody" on Debian) and restored right after; where that is impossible the
 * case is skipped, never passed. */
static void test_atomic_write_readonly_dir(void **state) {
    (void)state;
    char msg[512] = "";
    const char *ro = tpath("ro");
    assert_int_equal(mkdir(ro, 0555), 0);
    char rp[700];
    snprintf(rp, sizeof rp, "%s/t.json", ro);
    const int as_root = geteuid() == 0;
    if (as_root) {
        if (chmod(tmpdir, 0711) != 0) skip(); /* the unprivileged user must reach ro/ */
        if (seteuid(65534) != 0) {
            chmod(tmpdir, 0700);
            skip();
        }
    }
    const cp_status st = cph_write_atomic(rp, "x", 1, msg, sizeof msg);
    if (as_root) {
        assert_int_equal(seteuid(0), 0);
        chmod(tmpdir, 0700);
    }
    expect(st, CP_EIO, msg, "Permission denied");
    assert_false(dir_has_tmp());
}

/* --- a large table loads fast ----------------------------------------------- */

static void test_large_table(void **state) {
    (void)state;
    /* Correctness of a large table only: load speed is a benchmark's business,
     * not a unit test's (shared, noisy machines; sanitizer builds). */
    const size_t n = 5000;
    json_t *r = fixture();
    json_t *ents = json_object_get(r, "entries");
    json_t *tmpl = json_deep_copy(json_array_get(ents, 0));
    json_array_clear(ents);
    for (size_t i = 0; i < n; i++) {
        json_t *e = json_deep_copy(tmpl);
        json_t *sh = json_object_get(e, "shape");
        /* distinct shapes: c in 1..100, h in 8..1007 */
        json_object_set_new(sh, "c", json_integer((json_int_t)(1 + i % 100)));
        json_object_set_new(sh, "h", json_integer((json_int_t)(8 + i / 100)));
        json_array_append_new(ents, e);
    }
    json_decref(tmpl);
    const char *p = tpath("large.json");
    assert_int_equal(json_dump_file(r, p, JSON_COMPACT), 0);
    json_decref(r);
    struct stat sb;
    stat(p, &sb);
    struct timespec t0, t1;
    char msg[512];
    cp_table *t;
    clock_gettime(CLOCK_MONOTONIC, &t0);
    cp_status st = cp_table_load(p, 0, &t, msg, sizeof msg);
    clock_gettime(CLOCK_MONOTONIC, &t1);
    if (st != CP_OK) fail_msg("%s", msg);
    double sec = (double)(t1.tv_sec - t0.tv_sec) + 1e-9 * (double)(t1.tv_nsec - t0.tv_nsec);
    print_message("%zu entries (%lld MB, 2 candidates each) loaded in %.3f s\n",
                  n, (long long)(sb.st_size >> 20), sec);
    assert_int_equal(cp_table_count(t), n);
    /* exact lookups are a binary search */
    cp_shape s = shape3x3(37, 8 + 23, 8);
    s.w = 16;
    clock_gettime(CLOCK_MONOTONIC, &t0);
    const cp_table_entry *e = NULL;
    for (int i = 0; i < 10000; i++) e = cp_table_find(t, &s, CP_XCORR, 1);
    clock_gettime(CLOCK_MONOTONIC, &t1);
    assert_non_null(e);
    assert_int_equal(e->shape.c, 37);
    assert_int_equal(e->shape.h, 31);
    print_message("10000 exact lookups in %.4f s\n",
                  (double)(t1.tv_sec - t0.tv_sec) + 1e-9 * (double)(t1.tv_nsec - t0.tv_nsec));
    cp_table_free(t);
}

/* `test_table --write-sample PATH`: writes a table with the writer (invented
 * machine, this machine's fingerprint) for the shell tests (schema check,
 * examples) to read. */
static int write_sample(const char *path) {
    cph_machine m;
    cph_table_settings st;
    fake_machine(&m);
    fake_settings(&st);
    char msg[512];
    cph_table_doc *d;
    if (cph_table_doc_new(&m, &st, &d, msg, sizeof msg) != CP_OK) goto bad;
    cp_table_entry e;
    cp_candidate c[3];
    double samples[3] = {1.2e-4, 1.25e-4, 1.3e-4};
    const char *notes[3] = {"", "rel_err above max_rel_err", "invented failure"};
    cph_entry_notes n = {.candidate_notes = notes, .planned = 3, .measured = 2, .failed = 1,
                         .disqualified = 1, .seconds = 0.75};
    fill_entry(&e, c, samples, "s1", shape3x3(4, 10, 8), CP_XCORR, 1);
    if (cph_table_doc_put(d, &e, &n, msg, sizeof msg) != CP_OK) goto bad;
    fill_entry(&e, c, samples, "s2", shape3x3(8, 6, 4), CP_CONV, 1);
    e.algo = cp_algo_find("direct_flipidx");
    e.runner_up = NULL;
    if (cph_table_doc_put(d, &e, &n, msg, sizeof msg) != CP_OK) goto bad;
    if (cph_table_doc_write(d, path, msg, sizeof msg) != CP_OK) goto bad;
    cph_table_doc_free(d);
    return 0;
bad:
    fprintf(stderr, "test_table: %s\n", msg);
    return 1;
}

int main(int argc, char **argv) {
    if (argc == 3 && strcmp(argv[1], "--write-sample") == 0) return write_sample(argv[2]);
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_round_trip),
        cmocka_unit_test(test_round_trip_params),
        cmocka_unit_test(test_resume),
        cmocka_unit_test(test_fixture_loads),
        cmocka_unit_test(test_v1_fixture_migrates),
        cmocka_unit_test(test_v1_ukernel_is_tile_isa),
        cmocka_unit_test(test_v1_resume_writes_v2),
        cmocka_unit_test(test_truncated),
        cmocka_unit_test(test_empty_and_directory_and_missing),
        cmocka_unit_test(test_wrong_types),
        cmocka_unit_test(test_version_and_format),
        cmocka_unit_test(test_missing_fields),
        cmocka_unit_test(test_missing_param_takes_default),
        cmocka_unit_test(test_huge_numbers),
        cmocka_unit_test(test_unknown_algorithm_and_duplicates),
        cmocka_unit_test(test_strict_device),
        cmocka_unit_test(test_lookup_rules),
        cmocka_unit_test(test_atomic_write_failures),
        cmocka_unit_test(test_atomic_write_readonly_dir),
        cmocka_unit_test(test_large_table),
    };
    return cmocka_run_group_tests(tests, setup, teardown);
}
