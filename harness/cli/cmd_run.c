/* convpick run: computes one layer from raw float32 files with a chosen
 * algorithm, so that any algorithm can be checked against an outside tool
 * (NumPy, SciPy) on the user's own data. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "harness/cli/cli.h"
#include "harness/cli/options.h"
#include "harness/machine/membudget.h"
#include "harness/io/rawfile.h"
#include "harness/select/shape_spec.h"

static void usage(FILE *f) {
    fputs("usage: convpick run --shape SPEC --algo A --input X.f32 --weights W.f32\n"
          "                    [--bias B.f32] --output Y.f32 [OPTIONS]\n\n"
          "Computes one layer with algorithm A (default parameters) from raw little-endian\n"
          "float32 files: input N x C x H x W (NCHW), weights K x C/groups x R x S (KCRS),\n"
          "bias K values; writes the output N x K x P x Q (NCHW), replacing Y.f32 atomically.\n"
          "Non-finite inputs (NaN, Inf) are computed with and reported in a warning.\n\n"
          "the layer:\n"
          "  --shape SPEC        the layer (syntax as in convpick verify --help; required)\n"
          "  --algo A            the algorithm (see convpick algos; required)\n"
          "  --flip F            the kernel orientation: no (cross-correlation, what a\n"
          "                      network layer computes) or yes (true convolution, the\n"
          "                      kernel read flipped) (default: no)\n\n"
          "options:\n"
          "  --input FILE        input activations (required)\n"
          "  --weights FILE      weights (required)\n"
          "  --bias FILE         bias (default: none)\n"
          "  --output FILE       where to write the output (required)\n",
          f);
    cph_help_max_memory(f);
    cph_help_plugin(f);
    cph_help_end(f, "0 written, 1 the computation or the write failed, 2 bad usage or input");
}

enum { OPT_INPUT = 1, OPT_WEIGHTS, OPT_BIAS, OPT_OUTPUT };

typedef struct {
    const char *spec, *algo, *input, *weights, *bias, *output, *flip_arg, *max_memory;
    cp_flip flip;
    uint64_t budget; /* 0: the default */
} run_opts;

/* One warning per tensor that holds NaN or Inf: they propagate, never crash. */
static void warn_nonfinite(const char *what, const char *path, const float *v, size_t n) {
    const cph_nonfinite nf = cph_count_nonfinite(v, n);
    if (nf.nan || nf.inf)
        cph_warn("run: %s %s holds %zu NaN and %zu infinite values of %zu; they propagate to "
                 "the output", what, path, nf.nan, nf.inf, n);
}

static int run_layer(const run_opts *o) {
    char msg[512];
    cp_shape s;
    if (cph_parse_shape(o->spec, NULL, &s, msg, sizeof msg) != CP_OK)
        return cph_opt_error("run", "--shape", "'%s': %s", o->spec, msg);
    const cp_algo *a = cp_algo_find(o->algo);
    if (!a)
        return cph_opt_error("run", "--algo", "unknown algorithm '%s' (see convpick algos)",
                             o->algo);
    cp_flip flip = o->flip;
    char why[256] = "";
    if (!a->supports(&s, flip, why, sizeof why)) {
        cph_err("run: %s does not support this layer with --flip %s: %s", a->name,
                cph_flip_word(flip), why);
        return CPH_EXIT_USAGE;
    }
    const uint64_t budget = o->budget;
    const cp_cache_sizes caches = cp_cache_sizes_fallback();
    const cph_mem_need need = cph_mem_layer_need(&s, &flip, 1, &a, 1, 1, 0, &caches);
    if (cph_mem_check("the layer", &need, budget ? budget : cph_mem_default(), msg, sizeof msg) !=
        CP_OK) {
        cph_err("run: %s", msg);
        return CPH_EXIT_USAGE;
    }
    int rc = CPH_EXIT_USAGE;
    float *x = NULL, *w = NULL, *b = NULL, *y = NULL;
    cp_plan *plan = NULL;
    if (cph_read_f32(o->input, "input", cp_shape_input_elems(&s), &x, msg, sizeof msg) != CP_OK ||
        cph_read_f32(o->weights, "weights", cp_shape_weight_elems(&s), &w, msg, sizeof msg) !=
            CP_OK ||
        (o->bias && cph_read_f32(o->bias, "bias", (size_t)s.k, &b, msg, sizeof msg) != CP_OK)) {
        cph_err("%s", msg);
        goto out;
    }
    warn_nonfinite("input", o->input, x, cp_shape_input_elems(&s));
    warn_nonfinite("weights", o->weights, w, cp_shape_weight_elems(&s));
    if (b) warn_nonfinite("bias", o->bias, b, (size_t)s.k);
    cp_status st = cp_plan_create(a, &s, flip, NULL, &caches, 1, w, &plan, msg, sizeof msg);
    if (st != CP_OK) {
        cph_err("%s", msg);
        rc = st == CP_ENOMEM ? CPH_EXIT_FAIL : CPH_EXIT_USAGE;
        goto out;
    }
    const size_t ny = cp_shape_output_elems(&s);
    y = malloc(ny ? ny * sizeof *y : 1);
    if (!y) {
        cph_err("run: cannot allocate %zu output values", ny);
        rc = CPH_EXIT_FAIL;
        goto out;
    }
    st = cp_plan_run(plan, x, b, y, NULL);
    if (st != CP_OK) {
        cph_err("run: %s failed: %s", a->name, cp_status_str(st));
        rc = CPH_EXIT_FAIL;
        goto out;
    }
    const cph_nonfinite ynf = cph_count_nonfinite(y, ny);
    if (ynf.nan || ynf.inf)
        cph_warn("run: the output holds %zu NaN and %zu infinite values of %zu", ynf.nan, ynf.inf,
                 ny);
    if (cph_write_f32_atomic(o->output, y, ny, msg, sizeof msg) != CP_OK) {
        cph_err("%s", msg);
        rc = CPH_EXIT_FAIL;
        goto out;
    }
    rc = CPH_EXIT_OK;
out:
    cp_plan_destroy(plan);
    free(x);
    free(w);
    free(b);
    free(y);
    return rc;
}

/* Returns -1 to go on, else the exit code (the error already reported). */
static int parse(int argc, char **argv, run_opts *o) {
    static const struct option longopts[] = {
        {"shape", required_argument, NULL, CPH_OPT_SHAPE},
        {"algo", required_argument, NULL, CPH_OPT_ALGO},
        {"flip", required_argument, NULL, CPH_OPT_FLIP},
        {"input", required_argument, NULL, OPT_INPUT},
        {"weights", required_argument, NULL, OPT_WEIGHTS},
        {"bias", required_argument, NULL, OPT_BIAS},
        {"output", required_argument, NULL, OPT_OUTPUT},
        CPH_OPT_MAX_MEMORY_ENTRY,
        CPH_OPT_PLUGIN_ENTRY,
        CPH_OPTS_HELP_END,
    };
    int opt;
    while ((opt = cph_opt_next("run", argc, argv, longopts)) != -1) {
        const char **slot = NULL;
        switch (opt) {
        case 'h': usage(stdout); return CPH_EXIT_OK;
        case CPH_OPT_PLUGIN:
            if (cph_opt_plugin("run", optarg)) return CPH_EXIT_USAGE;
            continue;
        case CPH_OPT_SHAPE: slot = &o->spec; break;
        case CPH_OPT_ALGO: slot = &o->algo; break;
        case CPH_OPT_FLIP: slot = &o->flip_arg; break;
        case OPT_INPUT: slot = &o->input; break;
        case OPT_WEIGHTS: slot = &o->weights; break;
        case OPT_BIAS: slot = &o->bias; break;
        case OPT_OUTPUT: slot = &o->output; break;
        case CPH_OPT_MAX_MEMORY: slot = &o->max_memory; break;
        default: return CPH_EXIT_USAGE;
        }
        if (*slot) {
            char name[64];
            return cph_opt_error("run", cph_opt_name(longopts, opt, name, sizeof name),
                                 "given twice");
        }
        *slot = optarg;
        int n, rc = 0;
        if (opt == CPH_OPT_FLIP) rc = cph_opt_flip("run", optarg, 0, &o->flip, &n);
        if (opt == CPH_OPT_MAX_MEMORY) rc = cph_opt_max_memory("run", optarg, &o->budget);
        if (rc) return rc;
    }
    if (cph_opt_no_operands("run", argc, argv)) return CPH_EXIT_USAGE;
    const struct { const char *name, *v; } need[] = {
        {"--shape", o->spec}, {"--algo", o->algo}, {"--input", o->input},
        {"--weights", o->weights}, {"--output", o->output}};
    for (size_t i = 0; i < sizeof need / sizeof need[0]; i++)
        if (!need[i].v)
            return cph_opt_error("run", need[i].name, "required (see convpick run --help)");
    return -1;
}

int cph_cmd_run(int argc, char **argv) {
    run_opts o;
    memset(&o, 0, sizeof o);
    const int rc = parse(argc, argv, &o);
    return rc >= 0 ? rc : run_layer(&o);
}
