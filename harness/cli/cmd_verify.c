/* convpick verify: every selected algorithm against the fp64 oracle, per layer
 * and flip, judged by each algorithm's own tolerance.
 *
 * The oracle is plain double loops and by far the slowest part, so it runs
 * once per layer x flip and its reference is shared by every algorithm.  The
 * tensors are random in [-1, 1) from the seed, the layer index and the flip,
 * so a FAIL can be reproduced with the same --seed. */
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "harness/cli/cli.h"
#include "harness/measure/data.h"
#include "harness/machine/membudget.h"
#include "harness/cli/options.h"
#include "harness/select/shape_spec.h"
#include "harness/tune/checkrun.h"

static void usage(FILE *f) {
    fputs("usage: convpick verify SELECTION [OPTIONS]\n\n"
          "Runs every selected algorithm on random tensors for each layer and orientation\n"
          "and compares it with the fp64 oracle; PASS when the error relative to sum|x||w|\n"
          "is within the algorithm's tolerance (see convpick algos).\n\n",
          f);
    cph_help_selection(f, "both");
    fputs("options:\n", f);
    cph_help_max_memory(f);
    cph_help_isolate(f);
    cph_help_end(f, "0 all applicable checks passed, 1 a check failed, 2 bad usage or input");
}

/* Derives independent seeds per layer, flip and tensor. */
static uint64_t tensor_seed(uint64_t seed, size_t layer, int flip, int tensor) {
    uint64_t st = seed ^ ((uint64_t)layer << 20) ^ ((uint64_t)flip << 8) ^ (uint64_t)tensor;
    return cph_rng_next(&st);
}

typedef struct {
    int passed, failed, na;
    int name_w, algo_w;
    int isolate; /* --isolate: plugin algorithms checked in a child process */
} tally;

static void row(const tally *t, const char *layer, cp_flip flip, const cp_algo *a,
                const char *rest) {
    printf("%-*s  %-4s  %-*s  %s\n", t->name_w, layer, cph_flip_word(flip),
           t->algo_w, a->name, rest);
}

/* Checks one algorithm on one layer x flip against the shared reference. */
static void check_algo(tally *t, const cph_layer *L, cp_flip flip, const cp_algo *a,
                       const float *x, const float *w, const float *bias, const double *ref,
                       const double *mag, float *y) {
    char why[256] = "", line[512];
    if (!a->supports(&L->shape, flip, why, sizeof why)) {
        snprintf(line, sizeof line, "%-10s %-10s %-9s n/a     %s", "-", "-", "-", why);
        row(t, L->name, flip, a, line);
        t->na++;
        return;
    }
    const cp_cache_sizes caches = cp_cache_sizes_fallback();
    const size_t ny = cp_shape_output_elems(&L->shape);
    /* The output is poisoned first, so that an algorithm that skips elements fails. */
    const cph_check_run cr = {a, &L->shape, flip, NULL, &caches, 1, x, w, bias, NULL, t->isolate};
    cp_error e;
    if (cph_check_error(&cr, ref, mag, y, ny, &e, why, sizeof why) == CP_OK) {
        const int ok = cph_error_within_tolerance(a, &e, why, sizeof why);
        char extra[64] = "";
        if (e.nonfinite) snprintf(extra, sizeof extra, "  (%zu non-finite outputs)", e.nonfinite);
        snprintf(line, sizeof line, "%-10.3e %-10.3e %-9.1e %s%s", e.abs_err, e.rel_err,
                 a->tolerance, ok ? "PASS" : "FAIL", extra);
        row(t, L->name, flip, a, line);
        if (ok)
            t->passed++;
        else
            t->failed++;
        return;
    }
    snprintf(line, sizeof line, "%-10s %-10s %-9.1e %-7s %s", "-", "-", a->tolerance, "FAIL", why);
    row(t, L->name, flip, a, line);
    t->failed++;
}

/* One layer: tensors and the oracle per flip, then every algorithm. */
static int verify_layer(tally *t, const cph_selection *sel, size_t li) {
    const cph_layer *L = &sel->layers.v[li];
    const size_t nx = cp_shape_input_elems(&L->shape), nw = cp_shape_weight_elems(&L->shape),
                 ny = cp_shape_output_elems(&L->shape), nb = (size_t)L->shape.k;
    float *x = malloc(nx * sizeof *x), *w = malloc(nw * sizeof *w), *b = malloc(nb * sizeof *b);
    float *y = malloc(ny * sizeof *y);
    double *ref = malloc(ny * sizeof *ref), *mag = malloc(ny * sizeof *mag);
    int rc = 0;
    if (!x || !w || !b || !y || !ref || !mag) {
        cph_err("verify: %s: cannot allocate the tensors", L->name);
        rc = -1;
        goto out;
    }
    for (int mi = 0; mi < sel->nflips; mi++) {
        const cp_flip flip = sel->flips[mi];
        int any = 0;
        for (size_t ai = 0; ai < sel->nalgos; ai++)
            any |= sel->algos[ai]->supports(&L->shape, flip, NULL, 0);
        cph_fill_uniform(x, nx, tensor_seed(sel->seed, li, (int)flip, 0));
        cph_fill_uniform(w, nw, tensor_seed(sel->seed, li, (int)flip, 1));
        cph_fill_uniform(b, nb, tensor_seed(sel->seed, li, (int)flip, 2));
        /* No algorithm applies: skip the (slow) oracle. */
        if (any) cp_oracle_run(&L->shape, flip, x, w, b, ref, mag);
        for (size_t ai = 0; ai < sel->nalgos; ai++)
            check_algo(t, L, flip, sel->algos[ai], x, w, b, ref, mag, y);
    }
out:
    free(x);
    free(w);
    free(b);
    free(y);
    free(ref);
    free(mag);
    return rc;
}

typedef struct verify_opts {
    cph_selection sel;
    uint64_t budget; /* 0: the default, found only when needed */
    int isolate;
} verify_opts;

/* Returns -1 to go on, else the exit code (the error already reported). */
static int parse(int argc, char **argv, verify_opts *o) {
    static const struct option longopts[] = {
        CPH_OPTS_SELECTION, CPH_OPT_MAX_MEMORY_ENTRY, CPH_OPT_ISOLATE_ENTRY, CPH_OPTS_HELP_END,
    };
    const cph_opt_dest dest = {"verify", &o->sel, NULL, NULL, &o->budget, &o->isolate};
    int opt;
    while ((opt = cph_opt_next("verify", argc, argv, longopts)) != -1) {
        if (opt == 'h') {
            usage(stdout);
            return CPH_EXIT_OK;
        }
        const int rc = cph_opt_shared(&dest, opt, optarg);
        if (rc) return rc;
    }
    static const cp_flip both[] = {CP_XCORR, CP_CONV};
    if (cph_opt_no_operands("verify", argc, argv) ||
        cph_opt_selection_finish("verify", &o->sel, both, 2))
        return CPH_EXIT_USAGE;
    return -1;
}

/* Every layer against the oracle; the exit code. */
static int verify(const verify_opts *o) {
    const cph_selection *s = &o->sel;
    char mmsg[512];
    if (cph_mem_check_selection(s, 1, 1, o->budget ? o->budget : cph_mem_default(), mmsg,
                                sizeof mmsg) != CP_OK) {
        cph_err("verify: %s", mmsg);
        return CPH_EXIT_USAGE;
    }
    int rc = CPH_EXIT_OK;
    tally t = {0, 0, 0, 5, 4, o->isolate};
    for (size_t i = 0; i < s->layers.n; i++) {
        int len = (int)strlen(s->layers.v[i].name);
        if (len > t.name_w) t.name_w = len;
    }
    for (size_t i = 0; i < s->nalgos; i++) {
        int len = (int)strlen(s->algos[i]->name);
        if (len > t.algo_w) t.algo_w = len;
    }
    printf("verify: %zu layer(s), %zu algorithm(s), seed %llu\n", s->layers.n, s->nalgos,
           (unsigned long long)s->seed);
    cph_layers_print(stdout, &s->layers);
    printf("\n%-*s  %-4s  %-*s  %-10s %-10s %-9s %s\n", t.name_w, "layer", "flip", t.algo_w,
           "algo", "max_abs", "max_rel", "tolerance", "result");
    for (size_t i = 0; i < s->layers.n && rc == CPH_EXIT_OK; i++) {
        if (verify_layer(&t, s, i) != 0) rc = CPH_EXIT_FAIL;
        fflush(stdout);
    }
    printf("\nverify: %d passed, %d failed, %d not applicable\n", t.passed, t.failed, t.na);
    if (t.failed) rc = CPH_EXIT_FAIL;
    return rc;
}

int cph_cmd_verify(int argc, char **argv) {
    verify_opts o;
    memset(&o, 0, sizeof o);
    cph_selection_init(&o.sel);
    int rc = parse(argc, argv, &o);
    if (rc < 0) rc = verify(&o);
    cph_selection_free(&o.sel);
    return rc;
}
