/* The shared options of the command line (options.h): one error line, one
 * getopt loop step, the value parsers and the help blocks. */
#define _POSIX_C_SOURCE 200809L /* strdup */
#include "algos/core/cpa.h"
#include "harness/cli/options.h"

#include <ctype.h>
#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdlib.h>
#include <string.h>

#include "convpick/plugin.h"
#include "harness/cli/cli.h"
#include "harness/machine/membudget.h"
#include "harness/machine/pool.h"
#include "harness/model/onnx_import.h"
#include "harness/select/layer_spec.h"
#include "harness/select/shape_spec.h"
#include "harness/select/shapefile.h"
#include "harness/select/suites.h"

int cph_opt_error(const char *cmd, const char *opt, const char *fmt, ...) {
    char prefix[128];
    snprintf(prefix, sizeof prefix, "convpick %s: %s%s", cmd, opt ? opt : "", opt ? ": " : "");
    va_list ap;
    va_start(ap, fmt);
    cph_vreport(prefix, fmt, ap);
    va_end(ap);
    return CPH_EXIT_USAGE;
}

const char *cph_opt_name(const struct option *longopts, int code, char *buf, size_t cap) {
    for (const struct option *o = longopts; o->name; o++)
        if (o->val == code) {
            snprintf(buf, cap, "--%s", o->name);
            return buf;
        }
    snprintf(buf, cap, "-%c", isprint(code) ? code : '?');
    return buf;
}

int cph_opt_plugin(const char *cmd, const char *path) {
    for (size_t i = 0; i < cp_plugin_count(); i++)
        if (strcmp(cp_plugin_path(cp_plugin_at(i)), path) == 0) return 0;
    char msg[512];
    if (cp_plugin_load(path, NULL, msg, sizeof msg) != CP_OK)
        return cph_opt_error(cmd, "--plugin", "%s", msg);
    return 0;
}

/* The --plugin options of argv, loaded before getopt reads any option (on the
 * first step of a parse, optind <= 1; loading a path twice is a no-op, so
 * getopt meeting the same --plugin later changes nothing). */
static int plugins_first(const char *cmd, int argc, char **argv, const struct option *longopts) {
    int takes = 0;
    for (const struct option *o = longopts; o->name; o++) takes |= o->val == CPH_OPT_PLUGIN;
    if (!takes || optind > 1) return 0;
    for (int i = 1; i < argc && strcmp(argv[i], "--") != 0; i++) {
        const char *path = NULL;
        if (strcmp(argv[i], "--plugin") == 0 && i + 1 < argc)
            path = argv[++i];
        else if (strncmp(argv[i], "--plugin=", 9) == 0)
            path = argv[i] + 9;
        if (path && cph_opt_plugin(cmd, path)) return CPH_OPT_BAD;
    }
    return 0;
}

int cph_opt_next(const char *cmd, int argc, char **argv, const struct option *longopts) {
    if (plugins_first(cmd, argc, argv, longopts)) return CPH_OPT_BAD;
    opterr = 0; /* the one line is ours */
    optopt = 0;
    const int opt = getopt_long(argc, argv, ":h", longopts, NULL);
    if (opt != '?' && opt != ':') return opt;
    char name[64];
    const char *given = optind > 0 && optind <= argc ? argv[optind - 1] : "?";
    if (opt == ':') {
        cph_opt_error(cmd, cph_opt_name(longopts, optopt, name, sizeof name), "missing value");
    } else if (optopt && strncmp(given, "--", 2) == 0) {
        /* A known long flag given "=VALUE". */
        cph_opt_error(cmd, cph_opt_name(longopts, optopt, name, sizeof name), "takes no value");
    } else if (optopt) {
        cph_opt_error(cmd, NULL, "unknown option '-%c'", isprint(optopt) ? optopt : '?');
    } else {
        const size_t len = strcspn(given, "=");
        /* getopt_long takes any unambiguous prefix; say when it was one of several. */
        char names[256] = "";
        size_t off = 0, n = 0;
        for (const struct option *o = longopts; len > 2 && o->name && off < sizeof names; o++)
            if (strncmp(given, "--", 2) == 0 && strncmp(o->name, given + 2, len - 2) == 0) {
                const int w = snprintf(names + off, sizeof names - off, "%s--%s", n ? ", " : "",
                                       o->name);
                off += w > 0 ? (size_t)w : 0;
                n++;
            }
        if (n > 1)
            cph_opt_error(cmd, NULL, "ambiguous option '%.*s' (%s)", (int)(len < 60 ? len : 60),
                          given, names);
        else
            cph_opt_error(cmd, NULL, "unknown option '%.*s'", (int)(len < 60 ? len : 60), given);
    }
    return CPH_OPT_BAD;
}

int cph_opt_double(const char *cmd, const char *opt, const char *arg, double lo, double hi,
                   const char *what, double *out) {
    char *end = NULL;
    errno = 0;
    const double v = strtod(arg, &end);
    if (errno || end == arg || *end || !isfinite(v) || !(v >= lo && v <= hi))
        return cph_opt_error(cmd, opt, "'%s' is not %s", arg, what);
    *out = v;
    return 0;
}

int cph_opt_int(const char *cmd, const char *opt, const char *arg, long long lo, long long hi,
                const char *what, long long *out) {
    char *end = NULL;
    errno = 0;
    const long long v = isdigit((unsigned char)arg[0]) ? strtoll(arg, &end, 10) : 0;
    if (!end || *end || errno || v < lo || v > hi)
        return cph_opt_error(cmd, opt, "'%s' is not %s", arg, what);
    *out = v;
    return 0;
}

int cph_opt_flip(const char *cmd, const char *arg, int allow_both, cp_flip *flips, int *nflips) {
    if (strcmp(arg, "no") == 0) {
        flips[0] = CP_XCORR;
        *nflips = 1;
    } else if (strcmp(arg, "yes") == 0) {
        flips[0] = CP_CONV;
        *nflips = 1;
    } else if (allow_both && strcmp(arg, "both") == 0) {
        flips[0] = CP_XCORR;
        flips[1] = CP_CONV;
        *nflips = 2;
    } else {
        return cph_opt_error(cmd, "--flip", "'%s' is not %s", arg,
                             allow_both ? "no, yes or both" : "no or yes");
    }
    return 0;
}

/* msg without a leading "PREFIX" the lower layer put there (it names the
 * option or value the error line already names). */
static const char *unprefixed(const char *msg, const char *prefix) {
    const size_t n = strlen(prefix);
    return strncmp(msg, prefix, n) == 0 ? msg + n : msg;
}

int cph_opt_threads_read(const char *cmd, const char *arg, int cores, int *out, int max) {
    char msg[256];
    const int n = cph_parse_threads(arg, cores, out, max, msg, sizeof msg);
    if (n < 1) return -cph_opt_error(cmd, "--threads", "%s", unprefixed(msg, "threads: "));
    return n;
}

int cph_opt_threads(const char *cmd, const char *arg) {
    /* The syntax now; the range once the core count is known. */
    int counts[256];
    char msg[256];
    if (cph_parse_threads(arg, 1 << 16, counts, 256, msg, sizeof msg) < 1 &&
        !strstr(msg, "is outside"))
        return cph_opt_error(cmd, "--threads", "%s", unprefixed(msg, "threads: "));
    return 0;
}

int cph_opt_max_memory(const char *cmd, const char *arg, uint64_t *out) {
    char msg[256];
    if (cph_mem_parse(arg, strchr(arg, '%') ? cph_mem_machine_bytes() : 0, out, msg, sizeof msg) !=
        CP_OK)
        return cph_opt_error(cmd, "--max-memory", "%s", unprefixed(msg, "--max-memory "));
    return 0;
}

static int add_algos(const char *cmd, cph_selection *sel, const char *arg) {
    char *buf = strdup(arg);
    if (!buf) return cph_opt_error(cmd, "--algo", "out of memory");
    int rc = 0;
    char *save = NULL;
    for (char *p = buf; p && !rc; p = save) {
        char *comma = strchr(p, ',');
        save = comma ? comma + 1 : NULL;
        if (comma) *comma = '\0';
        const char *name = cpa_trim(p);
        const cp_algo *a = cp_algo_find(name);
        if (!a) {
            char known[512] = "";
            size_t off = 0;
            for (size_t i = 0; i < cp_algo_count() && off < sizeof known; i++) {
                const int w = snprintf(known + off, sizeof known - off, "%s%s", i ? ", " : "",
                                       cp_algo_at(i)->name);
                if (w < 0) break;
                off += (size_t)w;
            }
            rc = cph_opt_error(cmd, "--algo", "unknown algorithm '%s' (known: %s)", name, known);
            break;
        }
        int dup = 0;
        for (size_t i = 0; i < sel->nalgos; i++) dup |= sel->algos[i] == a;
        if (dup) continue;
        if (sel->nalgos == CPH_SELECTION_MAX_ALGOS)
            rc = cph_opt_error(cmd, "--algo", "more than %d algorithms", CPH_SELECTION_MAX_ALGOS);
        else
            sel->algos[sel->nalgos++] = a;
    }
    free(buf);
    return rc;
}

int cph_opt_selection(const char *cmd, cph_selection *sel, int opt, const char *arg) {
    char msg[512];
    switch (opt) {
    case CPH_OPT_SHAPE: {
        cp_shape s;
        char name[CPH_LAYER_NAME_MAX + 1];
        int count = 1;
        if (cph_parse_layer(arg, NULL, name, &count, &s, msg, sizeof msg) != CP_OK)
            return cph_opt_error(cmd, "--shape", "'%.60s%s': %s", arg,
                                 strlen(arg) > 60 ? "..." : "", msg);
        if (!name[0]) snprintf(name, sizeof name, "shape%zu", sel->layers.n + 1);
        if (cph_layers_add(&sel->layers, name, &s, count) != CP_OK)
            return cph_opt_error(cmd, "--shape", "out of memory or count overflow");
        return 0;
    }
    case CPH_OPT_MODEL:
        if (sel->nmodels == CPH_SELECTION_MAX_MODELS)
            return cph_opt_error(cmd, "--onnx", "more than %d models", CPH_SELECTION_MAX_MODELS);
        sel->models[sel->nmodels++] = arg;
        return 0;
    case CPH_OPT_BATCH: {
        long long n = 0;
        if (cph_opt_int(cmd, "--batch", arg, 1, 65536, "an integer in [1, 65536]", &n))
            return CPH_EXIT_USAGE;
        sel->batch = n;
        return 0;
    }
    case CPH_OPT_INPUT_SIZE: {
        char *end = NULL;
        errno = 0;
        const long long h = isdigit((unsigned char)arg[0]) ? strtoll(arg, &end, 10) : 0;
        const char *wp = end && *end == ',' ? end + 1 : NULL;
        const long long w = wp && isdigit((unsigned char)*wp) ? strtoll(wp, &end, 10) : 0;
        if (!wp || *end || errno || h < 1 || w < 1 || h > 1000000 || w > 1000000)
            return cph_opt_error(cmd, "--input-size", "'%s' is not H,W (two integers in [1, 1000000])",
                                 arg);
        sel->input_h = h;
        sel->input_w = w;
        return 0;
    }
    case CPH_OPT_SHAPES:
        if (cph_load_shape_file(arg, &sel->layers, msg, sizeof msg) != CP_OK)
            return cph_opt_error(cmd, "--shapes", "%s", msg);
        return 0;
    case CPH_OPT_SUITE:
        if (cph_suite_load(arg, &sel->layers, msg, sizeof msg) != CP_OK)
            return cph_opt_error(cmd, "--suite", "%s", msg);
        return 0;
    case CPH_OPT_ALGO:
        return add_algos(cmd, sel, arg);
    case CPH_OPT_FLIP:
        return cph_opt_flip(cmd, arg, 1, sel->flips, &sel->nflips);
    case CPH_OPT_SEED: {
        errno = 0;
        char *end = NULL;
        const unsigned long long v = isdigit((unsigned char)arg[0]) ? strtoull(arg, &end, 10) : 0;
        if (!end || *end || errno == ERANGE)
            return cph_opt_error(cmd, "--seed", "'%s' is not an integer in [0, 2^64)", arg);
        sel->seed = (uint64_t)v;
        return 0;
    }
    default:
        return cph_opt_error(cmd, NULL, "internal: option code %d is not a selection option", opt);
    }
}

static int timing_option(const char *cmd, cph_timing_opts *t, int opt, const char *arg) {
    double v = 0;
    long long n = 0;
    switch (opt) {
    case CPH_OPT_TARGET_CI:
        if (cph_opt_double(cmd, "--target-ci", arg, 0.01, 100.0, "a percentage in [0.01, 100]", &v))
            return CPH_EXIT_USAGE;
        t->target_rel_ci = v / 100.0;
        return 0;
    case CPH_OPT_MAX_SECONDS:
        if (cph_opt_double(cmd, "--max-seconds", arg, 1e-6, 1e6, "a number of seconds > 0",
                           &t->max_seconds))
            return CPH_EXIT_USAGE;
        return 0;
    case CPH_OPT_MAX_SAMPLES:
        if (cph_opt_int(cmd, "--max-samples", arg, 1, 10000000, "an integer in [1, 10000000]", &n))
            return CPH_EXIT_USAGE;
        t->max_samples = (size_t)n;
        if (t->min_samples > t->max_samples) t->min_samples = t->max_samples;
        return 0;
    case CPH_OPT_COLD:
        t->cold = 1;
        return 0;
    default:
        return cph_opt_error(cmd, NULL, "internal: option code %d is not a timing option", opt);
    }
}

int cph_opt_shared(const cph_opt_dest *d, int opt, const char *arg) {
    if (opt == CPH_OPT_BAD) return CPH_EXIT_USAGE;
    if (opt >= CPH_OPT_SHAPE && opt <= CPH_OPT_SEED && d->sel)
        return cph_opt_selection(d->cmd, d->sel, opt, arg);
    if (opt >= CPH_OPT_TARGET_CI && opt <= CPH_OPT_COLD && d->timing)
        return timing_option(d->cmd, d->timing, opt, arg);
    if (opt == CPH_OPT_THREADS && d->threads) {
        *d->threads = arg;
        return cph_opt_threads(d->cmd, arg);
    }
    if (opt == CPH_OPT_PLUGIN) return cph_opt_plugin(d->cmd, arg);
    if (opt == CPH_OPT_ISOLATE && d->isolate) {
        *d->isolate = 1;
        return 0;
    }
    if (opt == CPH_OPT_MAX_MEMORY && d->max_memory)
        return cph_opt_max_memory(d->cmd, arg, d->max_memory);
    return cph_opt_error(d->cmd, NULL, "internal: option code %d has no destination", opt);
}

int cph_opt_models(const char *cmd, cph_selection *sel) {
    char msg[1024];
    const cph_onnx_opts o = {sel->batch, sel->input_h, sel->input_w};
    for (size_t i = 0; i < sel->nmodels; i++)
        if (cph_onnx_import(sel->models[i], &o, &sel->layers, NULL, msg, sizeof msg) != CP_OK)
            return cph_opt_error(cmd, "--onnx", "%s", msg);
    sel->nmodels = 0;
    if (sel->batch > 0 && cph_selection_set_batch(sel, sel->batch) != CP_OK)
        return cph_opt_error(cmd, "--batch", "out of memory");
    return 0;
}

int cph_opt_selection_finish(const char *cmd, cph_selection *sel, const cp_flip *default_flips,
                             int ndefault) {
    char msg[256];
    if (cph_opt_models(cmd, sel)) return CPH_EXIT_USAGE;
    if (cph_selection_finish(sel, default_flips, ndefault, msg, sizeof msg) != CP_OK)
        return cph_opt_error(cmd, NULL, "%s", msg);
    return 0;
}

int cph_opt_no_operands(const char *cmd, int argc, char **argv) {
    if (optind < argc)
        return cph_opt_error(cmd, NULL, "unexpected argument '%s' (see convpick %s --help)",
                             argv[optind], cmd);
    return 0;
}

void cph_help_selection(FILE *f, const char *default_flip) {
    fputs("shape selection (give at least one of --shape, --shapes, --suite, --onnx):\n"
          "  --shape [NAME:]SPEC a layer, e.g. n=1,c=64,h=56,w=56,k=64,r=3,s=3,stride=1,pad=1\n"
          "                      (keys: n c h w k r s stride[_h|_w]\n"
          "                      pad[_h|_w|_top|_left|_bottom|_right] dilation[_h|_w] groups;\n"
          "                      pad=valid|same|full; count=N: times in the network);\n"
          "                      repeatable\n"
          "  --shapes FILE       layers from a file: one spec a line, optional 'name:' first,\n"
          "                      '#' comments\n"
          "  --suite NAME        a built-in network: resnet50, vgg16, mobilenet_v1, demo\n"
          "  --onnx FILE         the Conv layers of an ONNX model (convpick model writes\n"
          "                      them as a shape file); repeatable\n"
          "  --batch N           every layer's batch size n, a model's symbolic one too\n"
          "                      (default: each layer's own)\n"
          "  --input-size H,W    an ONNX input's symbolic height and width (default: none,\n"
          "                      a symbolic size is refused)\n"
          "  --algo A,B          only these algorithms (default: all; see convpick algos)\n",
          f);
    if (default_flip)
        fprintf(f,
                "  --flip F            the kernel orientation: no (cross-correlation, what a\n"
                "                      network layer computes), yes (true convolution, the\n"
                "                      kernel read flipped) or both (default: %s)\n",
                default_flip);
    cph_help_plugin(f);
    fputs("  --seed N            seed of the random tensors (default: 1)\n\n", f);
}

void cph_help_timing(FILE *f, double max_seconds) {
    fprintf(f,
            "  --threads LIST      thread counts, e.g. 1,2 or 1-4 or all (default: 1)\n"
            "  --target-ci PCT     stop sampling when the 95 %% CI of the median is within\n"
            "                      +-PCT %% of it (default: 2)\n"
            "  --max-seconds S     cap on one measurement, warm-up included (default: %g)\n"
            "  --max-samples N     cap on the samples of one measurement (default: 1000)\n"
            "  --cold              stream 2x the last-level cache before every sample\n"
            "                      (default: warm caches)\n",
            max_seconds);
}

void cph_help_max_memory(FILE *f) {
    fputs("  --max-memory B|P%   refuse a layer whose buffers and workspace need more than B\n"
          "                      bytes (suffix K, M or G) or P % of the machine's memory\n"
          "                      (default: 50%)\n",
          f);
}

void cph_help_plugin(FILE *f) {
    fputs("  --plugin FILE       load the algorithms of a plugin (a shared library, see\n"
          "                      convpick/plugin.h); repeatable (default: none)\n",
          f);
}

void cph_help_isolate(FILE *f) {
    fputs("  --isolate           run each plugin algorithm's checking run in a child\n"
          "                      process: a crash fails that algorithm, not the command\n"
          "                      (default: in this process)\n",
          f);
}

void cph_help_end(FILE *f, const char *exit_status) {
    fprintf(f, "  -h, --help          this text\n\nexit status: %s\n", exit_status);
}
