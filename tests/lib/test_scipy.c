/* convpick against SciPy: the oracle and every registered algorithm that
 * supports a case, checked on outputs of SciPy's scipy.signal.correlate2d
 * (-> CP_XCORR) and scipy.signal.convolve2d (-> CP_CONV, same unflipped
 * weights) in modes valid, same and full.  Source of every expected number:
 * SciPy (Debian python3-scipy 1.10), through scripts/gen_scipy_fixtures.py,
 * committed as tests/data/scipy_fixtures.txt.  Depthwise cases (g = c) are
 * one SciPy call per channel, strided ones SciPy's output subsampled
 * (y[::st, ::st]); the depthwise algorithm must run and match them exactly.
 *
 * Mapping SciPy's modes to our pads (per axis, kernel size R):
 *   valid: no padding.
 *   full:  R-1 on both sides (our CP_PAD_FULL).
 *   same:  SciPy returns the centre of the full output, starting at full
 *          index R/2 (integer division) for correlate2d but (R-1)/2 for
 *          convolve2d (found by comparing SciPy 1.10's same and full outputs
 *          for R = 2, 3, 4, 5).  Full index i is our output with pad R-1 on
 *          top, so the offset o corresponds to pad_top = R-1-o:
 *            correlate2d: pad_top = (R-1)/2, pad_bottom = R/2
 *                         = our CP_PAD_SAME (extra row at the bottom);
 *            convolve2d:  pad_top = R/2, pad_bottom = (R-1)/2
 *                         = the extra row at the TOP, unlike CP_PAD_SAME.
 *          For odd R both are (R-1)/2.  So convolve2d's same mode with an
 *          even kernel is tested through explicit pads, and the test asserts
 *          that it differs from CP_PAD_SAME there. */
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>

#include "convpick/algo.h"
#include "convpick/oracle.h"
#include "tests/support/conv.h"

#define FIXTURES CP_TEST_DATA "/scipy_fixtures.txt"

typedef struct {
    char name[64], op[16], flip[8];
    int line;
    cp_shape shape;
    int64_t p, q;
    double *x, *w, *y;
    size_t nx, nw, ny;
} fixture;

static int64_t key_value(const char *hdr, const char *key, const char *where) {
    char pat[32];
    snprintf(pat, sizeof pat, " %s=", key);
    const char *at = strstr(hdr, pat);
    if (!at) fail_msg("%s: header has no %s=", where, key);
    return strtoll(at + strlen(pat), NULL, 10);
}

/* Reads "TAG v v v ..." with exactly n numbers. */
static double *read_numbers(FILE *f, const char *tag, size_t n, const char *where) {
    static char buf[1 << 16];
    if (!fgets(buf, sizeof buf, f)) fail_msg("%s: missing %s line", where, tag);
    size_t tl = strlen(tag);
    if (strncmp(buf, tag, tl) != 0 || buf[tl] != ' ')
        fail_msg("%s: expected a '%s' line", where, tag);
    double *v = malloc(n * sizeof *v);
    assert_non_null(v);
    char *p = buf + tl, *end;
    for (size_t i = 0; i < n; i++) {
        v[i] = strtod(p, &end);
        if (end == p) fail_msg("%s: %s line has %zu numbers, want %zu", where, tag, i, n);
        p = end;
    }
    while (*p == ' ' || *p == '\n') p++;
    if (*p) fail_msg("%s: %s line has more than %zu numbers", where, tag, n);
    return v;
}

static size_t load_fixtures(fixture **out) {
    FILE *f = fopen(FIXTURES, "r");
    if (!f) fail_msg("cannot open %s", FIXTURES);
    size_t n = 0, cap = 0;
    fixture *v = NULL;
    char hdr[512];
    int line = 0;
    while (fgets(hdr, sizeof hdr, f)) {
        line++;
        if (hdr[0] == '#' || hdr[0] == '\n') continue;
        char where[128];
        snprintf(where, sizeof where, "%s:%d", FIXTURES, line);
        if (strncmp(hdr, "case ", 5) != 0) fail_msg("%s: expected a case line", where);
        if (n == cap) {
            cap = cap ? 2 * cap : 32;
            v = realloc(v, cap * sizeof *v);
            assert_non_null(v);
        }
        fixture *fx = &v[n++];
        memset(fx, 0, sizeof *fx);
        fx->line = line;
        if (sscanf(hdr, "case %63s op=%15s mode=%7s", fx->name, fx->op, fx->flip) != 3)
            fail_msg("%s: cannot read name, op and mode", where);
        cp_shape *s = &fx->shape;
        *s = cpt_shape(1, key_value(hdr, "c", where), key_value(hdr, "h", where),
                       key_value(hdr, "w", where), key_value(hdr, "k", where),
                       key_value(hdr, "r", where), key_value(hdr, "s", where));
        fx->p = key_value(hdr, "p", where);
        fx->q = key_value(hdr, "q", where);
        s->groups = key_value(hdr, "g", where);
        s->stride_h = s->stride_w = key_value(hdr, "st", where);
        if (s->groups < 1 || s->c % s->groups || s->k % s->groups || s->stride_h < 1)
            fail_msg("%s: bad g= or st=", where);
        fx->nx = (size_t)(s->c * s->h * s->w);
        fx->nw = (size_t)(s->k * (s->c / s->groups) * s->r * s->s);
        fx->ny = (size_t)(s->k * fx->p * fx->q);
        fx->x = read_numbers(f, "x", fx->nx, where);
        fx->w = read_numbers(f, "w", fx->nw, where);
        fx->y = read_numbers(f, "y", fx->ny, where);
        line += 3;
    }
    fclose(f);
    *out = v;
    return n;
}

static void free_fixtures(fixture *v, size_t n) {
    for (size_t i = 0; i < n; i++) {
        free(v[i].x);
        free(v[i].w);
        free(v[i].y);
    }
    free(v);
}

/* Sets our pads for SciPy's mode (mapping in the header comment). */
static void scipy_pads(fixture *fx) {
    cp_shape *s = &fx->shape;
    const int64_t R = s->r, S = s->s;
    if (strcmp(fx->flip, "valid") == 0) {
        cp_shape_set_padding(s, CP_PAD_VALID);
    } else if (strcmp(fx->flip, "full") == 0) {
        cp_shape_set_padding(s, CP_PAD_FULL);
        assert_int_equal(s->pad_top, R - 1);
        assert_int_equal(s->pad_right, S - 1);
    } else if (strcmp(fx->flip, "same") == 0) {
        cp_shape ours = *s; /* CP_PAD_SAME at stride 1 (strided cases subsample SciPy's) */
        ours.stride_h = ours.stride_w = 1;
        cp_shape_set_padding(&ours, CP_PAD_SAME);
        ours.stride_h = s->stride_h;
        ours.stride_w = s->stride_w;
        if (strcmp(fx->op, "correlate2d") == 0) {
            s->pad_top = (R - 1) / 2; s->pad_bottom = R / 2;
            s->pad_left = (S - 1) / 2; s->pad_right = S / 2;
            /* correlate2d's same is our CP_PAD_SAME. */
            assert_true(cp_shape_equal(s, &ours));
        } else {
            s->pad_top = R / 2; s->pad_bottom = (R - 1) / 2;
            s->pad_left = S / 2; s->pad_right = (S - 1) / 2;
            /* convolve2d's same agrees with CP_PAD_SAME exactly when both
             * kernel sizes are odd. */
            assert_int_equal(cp_shape_equal(s, &ours), (R % 2 == 1 && S % 2 == 1));
        }
    } else {
        fail_msg("%s:%d: unknown mode %s", FIXTURES, fx->line, fx->flip);
    }
}

/* Outputs whose receptive field is all zeros (mag 0: zero data or padding
 * under every tap) make cp_error_measure's error infinite for any rounding
 * at all.  Algorithms that round only within the receptive field give them
 * exactly 0; F(4x4,3x3) computes a whole 6x6 tile at once with transforms
 * that are inexact in float (entries 1/6, 1/24), so such an output gets the
 * rounding of its tile's other values (measured 6e-8).  For those outputs
 * alone the error is taken relative to the largest magnitude in the layer
 * (the scale of the tile that rounded), every other output as before. */
static void zero_field_measure(cp_error *e, const float *y, const double *ref,
                               const double *mag, size_t n) {
    if (e->nonfinite || e->rel_err != INFINITY) return;
    double top = 0.0;
    for (size_t i = 0; i < n; i++) top = mag[i] > top ? mag[i] : top;
    e->rel_err = 0.0;
    for (size_t i = 0; i < n; i++) {
        const double d = fabs((double)y[i] - ref[i]);
        const double scale = mag[i] > 0.0 ? mag[i] : top;
        const double rel = scale > 0.0 ? d / scale : d > 0.0 ? INFINITY : 0.0;
        if (rel > e->rel_err) {
            e->rel_err = rel;
            e->worst = i;
        }
    }
}

static void test_against_scipy(void **state) {
    (void)state;
    fixture *fxs;
    const size_t nfx = load_fixtures(&fxs);
    size_t algo_runs = 0, multi = 0, seen[2][3] = {{0}}, depthwise_ran = 0, depthwise_fx = 0;
    const char *flips[3] = {"valid", "same", "full"};
    for (size_t i = 0; i < nfx; i++) {
        fixture *fx = &fxs[i];
        scipy_pads(fx);
        const cp_shape *s = &fx->shape;
        const cp_flip flip = strcmp(fx->op, "convolve2d") == 0 ? CP_CONV : CP_XCORR;
        if (flip == CP_XCORR && strcmp(fx->op, "correlate2d") != 0)
            fail_msg("%s:%d: unknown op %s", FIXTURES, fx->line, fx->op);
        for (int m = 0; m < 3; m++)
            if (strcmp(fx->flip, flips[m]) == 0) seen[flip][m]++;
        if (s->c > 1) multi++;
        char msg[256];
        if (cp_shape_validate(s, msg, sizeof msg) != CP_SHAPE_OK)
            fail_msg("%s:%d: %s", FIXTURES, fx->line, msg);
        /* Our output size formula agrees with SciPy's output shape. */
        assert_int_equal(cp_shape_out_h(s), fx->p);
        assert_int_equal(cp_shape_out_w(s), fx->q);

        float *x = malloc(fx->nx * sizeof *x), *w = malloc(fx->nw * sizeof *w);
        float *y = malloc(fx->ny * sizeof *y);
        double *ref = malloc(fx->ny * sizeof *ref), *mag = malloc(fx->ny * sizeof *mag);
        assert_true(x && w && y && ref && mag);
        for (size_t j = 0; j < fx->nx; j++) x[j] = (float)fx->x[j];
        for (size_t j = 0; j < fx->nw; j++) w[j] = (float)fx->w[j];

        /* The oracle: exact (dyadic data, every sum exact in double). */
        cp_oracle_run(s, flip, x, w, NULL, ref, mag);
        for (size_t j = 0; j < fx->ny; j++)
            if (ref[j] != fx->y[j])
                fail_msg("%s:%d %s %s %s: oracle[%zu] = %.17g, SciPy %.17g", FIXTURES,
                         fx->line, fx->name, fx->op, fx->flip, j, ref[j], fx->y[j]);

        /* Every registered algorithm that supports the case, within its own
         * tolerance relative to sum |x||w|; direct exactly (the data make
         * every float32 partial sum exact). */
        int direct_ran = 0;
        depthwise_ran = 0;
        for (size_t a = 0; a < cp_algo_count(); a++) {
            const cp_algo *al = cp_algo_at(a);
            if (!al->supports(s, flip, NULL, 0)) continue;
            if (cpt_run_plan(al, s, flip, x, w, NULL, y, msg, sizeof msg) != CP_OK)
                fail_msg("%s on %s %s %s: %s", al->name, fx->name, fx->op, fx->flip, msg);
            cp_error e = cp_error_measure(y, fx->y, mag, fx->ny);
            zero_field_measure(&e, y, fx->y, mag, fx->ny);
            if (e.nonfinite || e.rel_err > al->tolerance)
                fail_msg("%s on %s %s %s: rel_err %.3g > %.3g (nonfinite %zu) at %zu: %.9g vs "
                         "SciPy %.9g", al->name, fx->name, fx->op, fx->flip, e.rel_err,
                         al->tolerance, e.nonfinite, e.worst, (double)y[e.worst],
                         fx->y[e.worst]);
            if (strcmp(al->name, "direct") == 0) {
                direct_ran = 1;
                assert_true(e.abs_err == 0.0);
            }
            /* The depthwise kernel against SciPy's per-channel correlate2d /
             * convolve2d: exact too (dyadic data, 25 taps at most). */
            if (strcmp(al->name, "depthwise") == 0) {
                depthwise_ran++;
                if (e.abs_err != 0.0)
                    fail_msg("depthwise on %s %s %s: abs_err %.3g, want 0", fx->name, fx->op,
                             fx->flip, e.abs_err);
            }
            algo_runs++;
        }
        assert_true(direct_ran);
        if (s->groups > 1) {
            depthwise_fx++;
            if (!depthwise_ran) fail_msg("depthwise refused %s %s %s", fx->name, fx->op, fx->flip);
        }
        free(x); free(w); free(y); free(ref); free(mag);
    }
    /* The file covers both ops in all three modes and multi-channel sums. */
    for (int o = 0; o < 2; o++)
        for (int m = 0; m < 3; m++)
            if (!seen[o][m]) fail_msg("no fixture for op %d mode %s", o, flips[m]);
    assert_true(multi > 0);
    assert_true(depthwise_fx > 0);
    printf("scipy: %zu fixtures, %zu (algorithm, fixture) checks\n", nfx, algo_runs);
    free_fixtures(fxs, nfx);
}

int main(void) {
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_against_scipy),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
