/* convpick diff with a fixed control (docs/diff.md, "The control"), and bench
 * results with trials and a control read back through the one reader.
 *
 * Outside references:
 *  - SciPy 1.10.1 scipy.stats.mannwhitneyu (two-sided, method='auto') and
 *    NumPy 1.24.2 numpy.median of the pairwise log differences (the
 *    Hodges-Lehmann ratio), on invented bench results written by
 *    scripts/gen_drift_fixtures.py (tests/data/drift_*.bench.json): the
 *    control's combined series, every row with NEW divided by the control's
 *    ratio when it drifted, and the network's trials; the values are in
 *    tests/data/drift_fixtures.txt.
 *  - The invented scenarios themselves: every time 1.15x slower in NEW
 *    (control included) must read as drift and no regression; the control
 *    unchanged and one row 1.15x slower must be that row's regression
 *    (what the drift correction is for: issue 11, item 6).
 *  - The same script's layer fixtures (tests/data/layer_*.bench.json,
 *    drift_ctl.bench.json, values in tests/data/layer_fixtures.txt): the
 *    rows' common shift, each chosen row's layer correction and its SciPy
 *    Mann-Whitney p and NumPy Hodges-Lehmann ratio after it; and the
 *    invented truths: a control that moved alone corrects nothing, a layer
 *    that moved as a whole is not a regression, one algorithm slower on one
 *    layer is, and every row slower everywhere (shared code) is not hidden.
 *  - Jansson's own parse of a file bench wrote, for the round trip: every
 *    row's trial medians and every control trial as the reader returns them. */
#define _POSIX_C_SOURCE 200809L
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
#include <jansson.h>

#include "harness/diff/diff_report.h"
#include "harness/io/results_read.h"

#define DATA CP_TEST_DATA

/* One line of drift_fixtures.txt. */
typedef struct fx {
    char what[16], scen[16], layer[32];
    double p, hl;
} fx;

static size_t read_fixtures(fx *v, size_t cap) {
    FILE *f = fopen(DATA "/drift_fixtures.txt", "r");
    assert_non_null(f);
    char line[512];
    size_t n = 0;
    while (fgets(line, sizeof line, f)) {
        if (line[0] == '#' || line[0] == '\n') continue;
        assert_true(n < cap);
        fx *x = &v[n];
        memset(x, 0, sizeof *x);
        if (strncmp(line, "row ", 4) == 0)
            assert_int_equal(sscanf(line, "%15s %15s %31s %lf %lf", x->what, x->scen, x->layer,
                                    &x->p, &x->hl),
                             5);
        else
            assert_int_equal(sscanf(line, "%15s %15s %lf %lf", x->what, x->scen, &x->p, &x->hl), 4);
        n++;
    }
    fclose(f);
    assert_int_equal(n, 10);
    return n;
}

static void near(double got, double want, double rel, const char *what) {
    if (!(fabs(got - want) <= rel * fabs(want) + 1e-300))
        fail_msg("%s: got %.17g, SciPy/NumPy %.17g", what, got, want);
}

/* diff BASE NEW at alpha 0.01, tolerance 5 %, the chosen rows (the defaults). */
static void build(const char *next_file, cph_results *b, cph_results *n, cph_diff *d) {
    char msg[512];
    if (cph_results_read(DATA "/drift_base.bench.json", b, msg, sizeof msg) != CP_OK)
        fail_msg("%s", msg);
    if (cph_results_read(next_file, n, msg, sizeof msg) != CP_OK) fail_msg("%s", msg);
    assert_int_equal(cph_diff_build(b, n, 0.01, 0.05, CPH_DIFF_CHOSEN_ONLY, d), 0);
}

static void done(cph_results *b, cph_results *n, cph_diff *d) {
    cph_diff_free(d);
    cph_results_free(b);
    cph_results_free(n);
}

static void check_against(const cph_diff *d, const char *scen, const fx *v, size_t nv) {
    char what[96];
    size_t rows = 0;
    for (size_t i = 0; i < nv; i++) {
        if (strcmp(v[i].scen, scen) != 0) continue;
        snprintf(what, sizeof what, "%s %s %s", v[i].what, scen, v[i].layer);
        if (strcmp(v[i].what, "control") == 0) {
            assert_true(d->control.compared);
            near(d->control.cmp.mwu.p, v[i].p, 1e-9, what);
            near(d->control.cmp.ratio, v[i].hl, 1e-12, what);
        } else if (strcmp(v[i].what, "network") == 0) {
            assert_true(d->network.compared);
            near(d->network.cmp.mwu.p, v[i].p, 1e-9, what);
            near(d->network.cmp.ratio, v[i].hl, 1e-12, what);
        } else {
            const cph_diff_pair *p = NULL;
            for (size_t k = 0; k < d->npairs; k++)
                if (strcmp(d->pairs[k].base->layer, v[i].layer) == 0) p = &d->pairs[k];
            assert_non_null(p);
            assert_true(p->compared);
            near(p->cmp.mwu.p, v[i].p, 1e-9, what);
            near(p->cmp.ratio, v[i].hl, 1e-12, what);
            rows++;
        }
    }
    assert_int_equal(rows, 3);
}

/* The control and every row 1.15x slower: drift, no regression. */
static void test_drift_everywhere(void **state) {
    (void)state;
    fx v[16];
    const size_t nv = read_fixtures(v, 16);
    cph_results b, n;
    cph_diff d;
    build(DATA "/drift_all.bench.json", &b, &n, &d);
    assert_true(b.has_control);
    assert_true(n.has_control);
    assert_int_equal(b.control[0].n, 10);
    assert_int_equal(b.trials, 1);
    assert_true(d.chosen_rows_only);
    assert_int_equal(d.npairs, 3);
    assert_int_equal(d.control.verdict, CPH_SHIFT_SLOWER);
    assert_true(d.control.drift);
    near(d.control.factor, d.control.cmp.ratio, 0.0, "factor = the control's HL ratio");
    check_against(&d, "all", v, nv);
    assert_int_equal(d.counts[CPH_SHIFT_SLOWER], 0);
    char text[512];
    cph_diff_control_text(&d, text, sizeof text);
    assert_non_null(strstr(text, "the control ran 1.15x slower in NEW"));
    assert_non_null(strstr(text, "machine-wide drift"));
    done(&b, &n, &d);
}

/* The control unchanged, the row of "mid" 1.15x slower: its regression. */
static void test_one_row_slower(void **state) {
    (void)state;
    fx v[16];
    const size_t nv = read_fixtures(v, 16);
    cph_results b, n;
    cph_diff d;
    build(DATA "/drift_row.bench.json", &b, &n, &d);
    assert_false(d.control.drift);
    assert_int_equal(d.control.verdict, CPH_SHIFT_UNCHANGED);
    near(d.control.factor, 1.0, 0.0, "no correction without drift");
    check_against(&d, "row", v, nv);
    assert_int_equal(d.counts[CPH_SHIFT_SLOWER], 1);
    assert_string_equal(d.pairs[0].base->layer, "mid"); /* worst first */
    assert_int_equal(d.pairs[0].verdict, CPH_SHIFT_SLOWER);
    assert_int_equal(d.network.verdict, CPH_SHIFT_SLOWER);
    done(&b, &n, &d);
}

/* A control on one side only: today's behaviour (no correction), noted. */
static void test_one_side_without_control(void **state) {
    (void)state;
    cph_results b, n;
    cph_diff d;
    build(DATA "/drift_all.bench.json", &b, &n, &d);
    cph_diff_free(&d);
    for (int s = 0; s < CPH_RESULTS_CONTROL_SERIES; s++) {
        free(n.control[s].v);
        n.control[s].v = NULL;
        n.control[s].n = 0;
    }
    n.has_control = 0;
    assert_int_equal(cph_diff_build(&b, &n, 0.01, 0.05, CPH_DIFF_CHOSEN_ONLY, &d), 0);
    assert_int_equal(d.control.sides, 1);
    assert_false(d.control.drift);
    char text[512];
    cph_diff_control_text(&d, text, sizeof text);
    assert_non_null(strstr(text, "only BASE carries a control"));
    done(&b, &n, &d);
}

/* One "row" line of layer_fixtures.txt, or the scenario's rowshift/control. */
typedef struct lfx {
    char scen[16], layer[32];
    double local, p, hl;
} lfx;

static double layer_fixture(const char *what, const char *scen, const char *layer, lfx *out) {
    FILE *f = fopen(DATA "/layer_fixtures.txt", "r");
    assert_non_null(f);
    char line[512], w[16], sc[16], ly[32];
    double v = NAN;
    while (fgets(line, sizeof line, f)) {
        if (sscanf(line, "%15s %15s", w, sc) != 2 || strcmp(w, what) || strcmp(sc, scen)) continue;
        if (strcmp(what, "row") == 0) {
            assert_int_equal(sscanf(line, "%*s %*s %31s %lf %lf %lf", ly, &out->local, &out->p,
                                    &out->hl),
                             4);
            if (strcmp(ly, layer) != 0) continue;
            v = out->hl;
        } else if (strcmp(what, "rowshift") == 0) {
            assert_int_equal(sscanf(line, "%*s %*s %lf", &v), 1);
        } else {
            assert_int_equal(sscanf(line, "%*s %*s %lf %lf", &out->p, &out->hl), 2);
            v = out->hl;
        }
        break;
    }
    fclose(f);
    if (!isfinite(v)) fail_msg("no %s %s %s in layer_fixtures.txt", what, scen, layer);
    return v;
}

static void build_from(const char *base_file, const char *next_file, cph_results *b,
                       cph_results *n, cph_diff *d) {
    char msg[512];
    if (cph_results_read(base_file, b, msg, sizeof msg) != CP_OK) fail_msg("%s", msg);
    if (cph_results_read(next_file, n, msg, sizeof msg) != CP_OK) fail_msg("%s", msg);
    assert_int_equal(cph_diff_build(b, n, 0.01, 0.05, CPH_DIFF_CHOSEN_ONLY, d), 0);
}

/* Every chosen row against the fixtures: its layer correction, p and HL. */
static void check_layer_rows(const cph_diff *d, const char *scen) {
    static const char *const layers[3] = {"front", "mid", "back"};
    char what[96];
    lfx x;
    near(d->rows_shift, layer_fixture("rowshift", scen, "", &x), 1e-12, "rows' common shift");
    assert_int_equal(d->npairs, 3);
    for (int i = 0; i < 3; i++) {
        const cph_diff_pair *p = NULL;
        for (size_t k = 0; k < d->npairs; k++)
            if (strcmp(d->pairs[k].base->layer, layers[i]) == 0) p = &d->pairs[k];
        assert_non_null(p);
        layer_fixture("row", scen, layers[i], &x);
        snprintf(what, sizeof what, "%s %s", scen, layers[i]);
        assert_int_equal(p->layer_others, 2);
        near(p->local, x.local, 1e-12, what);
        assert_true(p->compared);
        near(p->cmp.mwu.p, x.p, 1e-9, what);
        near(p->cmp.ratio, x.hl, 1e-12, what);
    }
}

static const cph_diff_pair *pair_of(const cph_diff *d, const char *layer) {
    for (size_t k = 0; k < d->npairs; k++)
        if (strcmp(d->pairs[k].base->layer, layer) == 0) return &d->pairs[k];
    fail_msg("no pair for %s", layer);
    return NULL;
}

/* The control alone 0.87x, the rows unchanged: nothing corrected. */
static void test_control_moved_alone(void **state) {
    (void)state;
    cph_results b, n;
    cph_diff d;
    lfx x;
    build(DATA "/drift_ctl.bench.json", &b, &n, &d);
    assert_int_equal(d.control.verdict, CPH_SHIFT_FASTER);
    near(d.control.cmp.ratio, layer_fixture("control", "ctl", "", &x), 1e-12, "control HL");
    near(d.control.cmp.mwu.p, x.p, 1e-9, "control p");
    near(d.rows_shift, layer_fixture("rowshift", "ctl", "", &x), 1e-12, "rows' common shift");
    assert_false(d.control.drift);
    near(d.control.factor, 1.0, 0.0, "no correction");
    for (size_t k = 0; k < d.npairs; k++) {
        layer_fixture("row", "ctl", d.pairs[k].base->layer, &x);
        near(d.pairs[k].cmp.ratio, x.hl, 1e-12, d.pairs[k].base->layer);
        assert_int_not_equal(d.pairs[k].verdict, CPH_SHIFT_SLOWER);
    }
    char text[512];
    cph_diff_control_text(&d, text, sizeof text);
    assert_non_null(strstr(text, "a drift the rows did not go through is not corrected"));
    done(&b, &n, &d);
}

/* Every row of "mid" 1.3x: that layer's state, not a regression. */
static void test_layer_moved_as_a_whole(void **state) {
    (void)state;
    cph_results b, n;
    cph_diff d;
    build_from(DATA "/layer_base.bench.json", DATA "/layer_state.bench.json", &b, &n, &d);
    check_layer_rows(&d, "state");
    assert_true(pair_of(&d, "mid")->local > 1.2);
    assert_int_equal(d.counts[CPH_SHIFT_SLOWER], 0);
    done(&b, &n, &d);
}

/* Only mid's chosen algorithm 1.15x: its regression, the layer unchanged. */
static void test_one_algorithm_slower(void **state) {
    (void)state;
    cph_results b, n;
    cph_diff d;
    build_from(DATA "/layer_base.bench.json", DATA "/layer_algo.bench.json", &b, &n, &d);
    check_layer_rows(&d, "algo");
    assert_int_equal(d.counts[CPH_SHIFT_SLOWER], 1);
    assert_int_equal(pair_of(&d, "mid")->verdict, CPH_SHIFT_SLOWER);
    done(&b, &n, &d);
}

/* Every row of every layer 1.2x, the control unchanged (a change in shared
 * code): every chosen row a regression, none explained away by its layer. */
static void test_shared_slowdown_not_hidden(void **state) {
    (void)state;
    cph_results b, n;
    cph_diff d;
    build_from(DATA "/layer_base.bench.json", DATA "/layer_shared.bench.json", &b, &n, &d);
    check_layer_rows(&d, "shared");
    assert_false(d.control.drift);
    assert_int_equal(d.counts[CPH_SHIFT_SLOWER], 3);
    done(&b, &n, &d);
}

/* Every row of front and back 1.2x, mid unchanged: the common shift is
 * 1.2x, mid's layer lies below it, and mid's own row did not move: the
 * correction must not make mid a regression (it goes only the way the row
 * moved); front and back are regressions. */
static void test_correction_never_makes_a_regression(void **state) {
    (void)state;
    cph_results b, n;
    cph_diff d;
    build_from(DATA "/layer_base.bench.json", DATA "/layer_most.bench.json", &b, &n, &d);
    check_layer_rows(&d, "most");
    assert_true(d.rows_shift > 1.15);
    assert_int_not_equal(pair_of(&d, "mid")->verdict, CPH_SHIFT_SLOWER);
    assert_int_equal(pair_of(&d, "front")->verdict, CPH_SHIFT_SLOWER);
    assert_int_equal(pair_of(&d, "back")->verdict, CPH_SHIFT_SLOWER);
    done(&b, &n, &d);
}

/* bench --json with trials and the control, read back through the reader:
 * the same numbers as jansson's own parse of the file. */
static void test_bench_round_trip(void **state) {
    (void)state;
    char dir[] = "/tmp/cp_drift_XXXXXX", path[256], cmd[1024], msg[512];
    assert_non_null(mkdtemp(dir));
    snprintf(path, sizeof path, "%s/b.json", dir);
    snprintf(cmd, sizeof cmd,
             "%s bench --shape n=1,c=4,h=8,w=8,k=4,r=3,pad=1 --algo direct,im2col_gemm "
             "--no-roofs --max-seconds 0.02 --rounds 4 --trial-samples 2 --json %s > /dev/null",
             CP_CLI, path);
    assert_int_equal(system(cmd), 0);
    cph_results r;
    if (cph_results_read(path, &r, msg, sizeof msg) != CP_OK) fail_msg("%s", msg);
    json_error_t err;
    json_t *doc = json_load_file(path, 0, &err);
    assert_non_null(doc);
    json_t *res = json_object_get(doc, "results");
    size_t ok = 0;
    for (size_t i = 0; i < json_array_size(res); i++) {
        json_t *e = json_array_get(res, i);
        if (strcmp(json_string_value(json_object_get(e, "status")), "ok") != 0) continue;
        assert_true(ok < r.nitems);
        const cph_result_item *it = &r.items[ok++];
        json_t *s = json_object_get(json_object_get(e, "measurement"), "samples");
        assert_int_equal(it->nsamples, json_array_size(s));
        assert_int_equal(it->nsamples, 4); /* one trial median per round */
        assert_int_equal(it->trials, 1);
        for (size_t k = 0; k < it->nsamples; k++)
            assert_true(it->samples[k] == json_real_value(json_array_get(s, k)));
    }
    assert_int_equal(ok, r.nitems);
    assert_true(ok >= 3); /* direct, im2col_gemm, sgemm */
    assert_int_equal(r.trials, 1);
    assert_true(r.has_control);
    json_t *ctl = json_object_get(doc, "control");
    for (int s = 0; s < CPH_RESULTS_CONTROL_SERIES; s++) {
        char key[16];
        snprintf(key, sizeof key, "%s_s", cph_results_control_names[s]);
        json_t *t = json_object_get(ctl, key);
        assert_int_equal(r.control[s].n, 4);
        assert_int_equal(r.control[s].n, json_array_size(t));
        for (size_t k = 0; k < r.control[s].n; k++)
            assert_true(r.control[s].v[k] == json_real_value(json_array_get(t, k)));
    }
    json_decref(doc);
    cph_results_free(&r);
    unlink(path);
    rmdir(dir);
}

int main(void) {
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_drift_everywhere),
        cmocka_unit_test(test_one_row_slower),
        cmocka_unit_test(test_one_side_without_control),
        cmocka_unit_test(test_control_moved_alone),
        cmocka_unit_test(test_layer_moved_as_a_whole),
        cmocka_unit_test(test_one_algorithm_slower),
        cmocka_unit_test(test_shared_slowdown_not_hidden),
        cmocka_unit_test(test_correction_never_makes_a_regression),
        cmocka_unit_test(test_bench_round_trip),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
