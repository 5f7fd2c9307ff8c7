/* convpick cache: measures whether true convolution (the kernel read
 * flipped) costs more in cache behaviour than cross-correlation, and whether
 * flipping the weights once up front removes that cost (cache_study.h).
 *
 * --trace-only runs one variant on one layer for comparison with an outside
 * simulator (tests/cli/cli_cachegrind.sh): without --plain it prints our
 * simulator's counts for the traced copy; with --plain it runs the plain
 * (untraced) kernel once after flushing the caches and prints nothing else
 * of substance, so that a run under valgrind's cachegrind sees the kernel's
 * own traffic; --skip-kernel does everything but the kernel call. */
#define _POSIX_C_SOURCE 200809L /* strdup, strtok */
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "harness/cache/cache_report.h"
#include "harness/cache/cache_study.h"
#include "harness/cache/cache_traced.h"
#include "harness/cli/cli.h"
#include "harness/cli/options.h"
#include "harness/measure/data.h"
#include "harness/machine/machine.h"
#include "harness/io/rawfile.h"
#include "harness/select/selection.h"

static void usage(FILE *f) {
    fputs("usage: convpick cache SELECTION [OPTIONS]\n\n"
          "Compares cross-correlation (xcorr), true convolution with the kernel read\n"
          "reversed in the loops (flipidx) and true convolution with the weights flipped\n"
          "once (preflip) for direct (loop order 0 = n,k,p,q,c,r,s and 1 = n,k,c,r,s,p,q)\n"
          "and blocked (portable tile kernel, traced; AVX2 tile kernel, timed only).\n"
          "Each variant is checked against the fp64 oracle, timed on one thread, counted by\n"
          "hardware counters when the machine has them, and its traced build is run through\n"
          "a cache simulator on the first K' output channels of the layer.  --flip is not\n"
          "taken: each variant has its own orientation; --algo direct and/or blocked\n"
          "select the families.\n\n",
          f);
    cph_help_selection(f, NULL);
    fputs("options:\n"
          "  --family F,G        only these variant families: direct, direct.o0, direct.o1,\n"
          "                      blocked, blocked.ref, blocked.avx2 (default: all)\n"
          "  --cache-geometry G  simulated levels NAME=SIZE:WAYS:LINE,... L1 first, SIZE with\n"
          "                      K/M/G (powers of two), WAYS a number or 'full', e.g.\n"
          "                      L1=32K:8:64,L2=512K:8:64,L3=32M:16:64 (default: this\n"
          "                      machine's data caches from hwloc)\n"
          "  --max-accesses N    access budget per traced run; K' is the largest multiple of\n"
          "                      6 output channels whose estimate fits (default: 30000000)\n"
          "  --channels K        simulate exactly the first K output channels instead\n"
          "                      (default: from --max-accesses)\n"
          "  --time-cap S        seconds of timing per variant (default: 2)\n"
          "  --rounds N          timing rounds per variant, interleaved within a family;\n"
          "                      the samples of all rounds are pooled (default: 5)\n"
          "  --no-time           do not time (default: time)\n"
          "  --json FILE         write the study as JSON, replaced atomically (default: none)\n"
          "  --svg FILE          write a bar chart of misses per output, replaced atomically\n"
          "                      (default: none)\n"
          "  --trace-only V      one variant (e.g. direct.o1.flipidx) on one layer: print the\n"
          "                      simulator's counts for its traced build (default: the study)\n"
          "  --plain             with --trace-only: flush the caches, run the plain kernel once\n"
          "                      (default: off)\n"
          "  --skip-kernel       with --plain: everything except the kernel call (default: off)\n",
          f);
    cph_help_end(f, "0 done, 1 a variant failed its oracle check, 2 bad usage or input");
}

enum {
    OPT_GEOM = 1,
    OPT_MAXACC,
    OPT_CHANNELS,
    OPT_TIMECAP,
    OPT_NOTIME,
    OPT_JSON,
    OPT_SVG,
    OPT_TRACE,
    OPT_PLAIN,
    OPT_SKIP,
    OPT_FAMILY,
    OPT_ROUNDS
};

typedef struct {
    const char *geom, *json, *svg, *trace, *family;
    int plain, skip, algo_given;
} cache_cli;

/* Levels from hwloc: the data/unified caches, L1 first. */
static cp_status geom_from_machine(const cph_machine *m, cph_cache_geom *g, int *n, char *msg,
                                   size_t cap) {
    *n = 0;
    for (int i = 0; i < m->ncaches && *n < CPH_SIM_MAX_LEVELS; i++) {
        const cph_cache_level *c = &m->caches[i];
        cph_cache_geom *l = &g[*n];
        memset(l, 0, sizeof *l);
        snprintf(l->name, sizeof l->name, "L%d", c->level);
        l->size = c->size;
        l->line = c->line ? c->line : 64;
        if (c->assoc == -1)
            l->ways = (int64_t)(l->size / l->line);
        else if (c->assoc <= 0) {
            cph_warn("cache: hwloc gives no associativity for L%d; simulating 8 ways "
                     "(give --cache-geometry to choose)", c->level);
            l->ways = 8;
        } else
            l->ways = c->assoc;
        if (cph_geom_check(l, msg, cap) != CP_OK) return CP_EINVAL;
        (*n)++;
    }
    if (*n == 0) {
        snprintf(msg, cap, "hwloc reports no data cache; give --cache-geometry");
        return CP_EINVAL;
    }
    return CP_OK;
}

static int split_list(char *s, const char **out, size_t max) {
    size_t n = 0;
    for (char *t = strtok(s, ","); t && n < max; t = strtok(NULL, ",")) out[n++] = t;
    return (int)n;
}

/* A buffer that starts `lines` cache lines past a 2 MiB boundary, so that
 * its address modulo 2 MiB (hence its set in any cache whose size / ways is
 * at most 2 MiB) is the same in every run, under valgrind or not.  Distinct
 * offsets keep the tensors from all starting in set 0. */
typedef struct {
    void *base;
    void *p;
} placed;

static int place(placed *b, size_t bytes, size_t lines) {
    const size_t align = (size_t)2 << 20, off = lines * 64;
    const size_t total = (bytes + off + align - 1) / align * align;
    b->base = aligned_alloc(align, total ? total : align);
    b->p = b->base ? (char *)b->base + off : NULL;
    return b->base != NULL;
}

/* --trace-only: one variant, one layer, as described at the top.  The
 * algorithm is driven through its interface (prepare, run) rather than a
 * plan so that every buffer it touches is placed as above: the comparison
 * with cachegrind then sees the same addresses modulo the set span. */
static int trace_only(const cache_cli *c, const cph_study_opts *o, const cph_layer *L) {
    const cph_variant *v = cph_variant_find(c->trace);
    if (!v) {
        return cph_opt_error("cache", "--trace-only",
                             "'%s': unknown variant (e.g. direct.o0.xcorr, direct.o1.flipidx, "
                             "blocked.ref.preflip)", c->trace);
    }
    if (!c->plain && !v->traced) {
        return cph_opt_error("cache", "--trace-only",
                             "'%s': this variant has no traced build (use --plain)", v->id);
    }
    const cp_algo *a = c->plain ? cp_algo_find(v->algo) : v->traced;
    cp_shape s = L->shape;
    if (!c->plain && o->channels > 0 && o->channels < s.k) s.k = o->channels;
    if (!a || !a->supports(&s, v->flip, NULL, 0)) {
        return cph_opt_error("cache", "--trace-only", "'%s': not applicable to layer %s", v->id,
                             L->name);
    }
    char msg[512];
    cp_params p;
    cp_algo_defaults(a, &L->shape, &o->caches, &p);
    const int pi = cp_algo_param_index(a, v->param);
    if (pi >= 0) p.v[pi] = v->param_value;
    if (cp_params_check(a, &p, msg, sizeof msg) != CP_OK) {
        return cph_opt_error("cache", "--trace-only", "'%s': %s", v->id, msg);
    }
    const size_t nx = cp_shape_input_elems(&s), nw = cp_shape_weight_elems(&s);
    const size_t ny = cp_shape_output_elems(&s);
    const size_t npre = a->prepared_size ? a->prepared_size(&s, v->flip, &p) : 0;
    const size_t nws = a->workspace_size ? a->workspace_size(&s, v->flip, &p, 1) : 0;
    size_t flush_bytes = 0;
    for (int i = 0; i < o->nlevels; i++)
        if (o->geom[i].size > flush_bytes) flush_bytes = o->geom[i].size;
    flush_bytes *= 4;
    placed bx = {0}, bw = {0}, by = {0}, bp = {0}, bs = {0};
    unsigned char *flush = c->plain ? malloc(flush_bytes) : NULL;
    int rc = CPH_EXIT_FAIL;
    cph_cachesim sim;
    memset(&sim, 0, sizeof sim);
    if (!place(&bx, nx * sizeof(float), 0) || !place(&bw, nw * sizeof(float), 17) ||
        !place(&by, ny * sizeof(float), 41) || (npre && !place(&bp, npre, 73)) ||
        (nws && !place(&bs, nws, 101)) || (c->plain && !flush)) {
        cph_err("cache: out of memory");
        goto out;
    }
    float *x = bx.p, *w = bw.p, *y = by.p;
    uint64_t seed = o->seed;
    cph_fill_uniform(x, nx, cph_rng_next(&seed));
    cph_fill_uniform(w, nw, cph_rng_next(&seed));
    memset(y, 0, ny * sizeof *y);
    if (npre && a->prepare(&s, v->flip, &p, w, bp.p) != CP_OK) {
        cph_err("cache: preparing the weights failed");
        goto out;
    }
    const cp_run_args ra = {&s, v->flip, &p, x, npre ? bp.p : (const void *)w, NULL, y,
                            nws ? bs.p : NULL, NULL};
    if (c->plain) {
        /* Stream 4x the largest level: with LRU every set then holds only
         * flush lines, the state a cold simulator starts from. */
        memset(flush, 1, flush_bytes);
        volatile unsigned sum = 0;
        for (size_t i = 0; i < flush_bytes; i += 64) sum += flush[i];
        (void)sum;
        if (!c->skip && a->run(&ra) != CP_OK) {
            cph_err("cache: the kernel failed");
            goto out;
        }
        printf("plain %s %s\n", v->id, c->skip ? "skipped" : "ran");
        rc = CPH_EXIT_OK;
        goto out;
    }
    if (cph_sim_init(&sim, o->geom, o->nlevels, msg, sizeof msg) != CP_OK) {
        cph_err("cache: %s", msg);
        goto out;
    }
    cph_trace_to(&sim);
    const cp_status st = a->run(&ra);
    cph_trace_to(NULL);
    if (st == CP_OK) {
        printf("trace %s refs %llu loads %llu stores %llu outputs %zu\n", v->id,
               (unsigned long long)sim.refs, (unsigned long long)sim.loads,
               (unsigned long long)sim.stores, ny);
        for (int i = 0; i < sim.nlevels; i++)
            printf("level %s accesses %llu misses %llu read_misses %llu\n", sim.lv[i].g.name,
                   (unsigned long long)sim.lv[i].c.accesses,
                   (unsigned long long)sim.lv[i].c.misses,
                   (unsigned long long)sim.lv[i].c.read_misses);
        rc = CPH_EXIT_OK;
    } else {
        cph_err("cache: the traced kernel failed");
    }
out:
    cph_sim_free(&sim);
    free(bx.base);
    free(bw.base);
    free(by.base);
    free(bp.base);
    free(bs.base);
    free(flush);
    return rc;
}

/* The 1-minute load average, or -1. */
static double loadavg1(void) {
    FILE *f = fopen("/proc/loadavg", "r");
    double v = -1.0;
    if (f) {
        if (fscanf(f, "%lf", &v) != 1) v = -1.0;
        fclose(f);
    }
    return v;
}

static int write_text(const char *path, const char *text, const char *what) {
    char msg[512];
    if (cph_write_atomic(path, text, strlen(text), msg, sizeof msg) != CP_OK) {
        cph_err("cache: %s: %s", what, msg);
        return 0;
    }
    return 1;
}

static int study(const cache_cli *c, cph_study_opts *o, const cph_selection *sel,
                 const char *geom_source, const cph_machine *m) {
    const char *fam[8];
    size_t nfam = 0;
    char *fbuf = c->family ? strdup(c->family) : NULL;
    if (fbuf) nfam = (size_t)split_list(fbuf, fam, 8);
    for (size_t i = 0; c->algo_given && !c->family && i < sel->nalgos; i++) {
        const char *nm = sel->algos[i]->name;
        const char *f = strncmp(nm, "direct", 6) == 0 ? "direct"
                        : strncmp(nm, "blocked", 7) == 0 ? "blocked" : NULL;
        if (!f) {
            free(fbuf);
            return cph_opt_error("cache", "--algo", "'%s': the cache study covers direct and "
                                 "blocked only", nm);
        }
        int dup = 0;
        for (size_t j = 0; j < nfam; j++) dup |= strcmp(fam[j], f) == 0;
        if (!dup && nfam < 8) fam[nfam++] = f;
    }
    cph_counters ctr;
    cph_counters_open(&ctr);
    o->use_counters = ctr.any;
    o->counters = &ctr;
    cph_layer_result *res = calloc(sel->layers.n, sizeof *res);
    json_t *mj = cph_machine_to_json(m, NULL);
    cph_cache_report rep = {o, geom_source, ctr.any ? NULL : ctr.reason, res, 0, mj,
                            {loadavg1(), -1.0}};
    int rc = CPH_EXIT_OK;
    if (!res) {
        cph_err("cache: out of memory");
        rc = CPH_EXIT_FAIL;
        goto out;
    }
    cph_cache_report_header(stdout, &rep);
    for (size_t i = 0; i < sel->layers.n; i++) {
        char msg[256];
        if (cph_study_layer(o, &sel->layers.v[i], nfam ? fam : NULL, nfam, &res[i], msg,
                            sizeof msg) != CP_OK) {
            cph_err("cache: %s", msg);
            rc = CPH_EXIT_FAIL;
            goto out;
        }
        rep.nlayers = i + 1;
        cph_cache_report_layer(stdout, &rep, &res[i]);
        fflush(stdout);
        for (size_t j = 0; j < res[i].nres; j++)
            if (res[i].res[j].supported && !res[i].res[j].pass) rc = CPH_EXIT_FAIL;
    }
    rep.load[1] = loadavg1();
    if (c->json) {
        json_t *j = cph_cache_report_json(&rep);
        char *text = j ? json_dumps(j, JSON_INDENT(2) | JSON_PRESERVE_ORDER) : NULL;
        json_decref(j);
        if (!text || !write_text(c->json, text, "--json")) rc = CPH_EXIT_FAIL;
        free(text);
    }
    if (c->svg) {
        char *text = cph_cache_report_svg(&rep);
        if (!text || !write_text(c->svg, text, "--svg")) rc = CPH_EXIT_FAIL;
        free(text);
    }
    if (rc == CPH_EXIT_FAIL) printf("\ncache: a variant failed its oracle check or a write failed\n");
out:
    json_decref(mj);
    free(res);
    free(fbuf);
    cph_counters_close(&ctr);
    return rc;
}

typedef struct cache_opts {
    cache_cli c;
    cph_study_opts o;
    cph_selection sel;
} cache_opts;

/* --family: every name known, at least one. */
static int check_families(const char *list) {
    static const char *const known[] = {"direct", "direct.o0", "direct.o1", "blocked",
                                        "blocked.ref", "blocked.avx2"};
    char *buf = strdup(list);
    const char *f[8];
    const int n = buf ? split_list(buf, f, 8) : 0;
    int rc = n == 0 ? cph_opt_error("cache", "--family", "empty list") : 0;
    for (int i = 0; i < n && !rc; i++) {
        int ok = 0;
        for (size_t k = 0; k < sizeof known / sizeof known[0]; k++) ok |= !strcmp(f[i], known[k]);
        if (!ok)
            rc = cph_opt_error("cache", "--family",
                               "unknown family '%s' (direct, direct.o0, direct.o1, blocked, "
                               "blocked.ref, blocked.avx2)", f[i]);
    }
    free(buf);
    return rc;
}

/* Returns -1 to go on, else the exit code (the error already reported). */
static int parse(int argc, char **argv, cache_opts *co) {
    static const struct option longopts[] = {
        CPH_OPTS_SELECTION,
        {"cache-geometry", required_argument, NULL, OPT_GEOM},
        {"max-accesses", required_argument, NULL, OPT_MAXACC},
        {"channels", required_argument, NULL, OPT_CHANNELS},
        {"time-cap", required_argument, NULL, OPT_TIMECAP},
        {"no-time", no_argument, NULL, OPT_NOTIME},
        {"json", required_argument, NULL, OPT_JSON},
        {"svg", required_argument, NULL, OPT_SVG},
        {"trace-only", required_argument, NULL, OPT_TRACE},
        {"plain", no_argument, NULL, OPT_PLAIN},
        {"skip-kernel", no_argument, NULL, OPT_SKIP},
        {"family", required_argument, NULL, OPT_FAMILY},
        {"rounds", required_argument, NULL, OPT_ROUNDS},
        CPH_OPTS_HELP_END,
    };
    const cph_opt_dest dest = {"cache", &co->sel, NULL, NULL, NULL};
    cache_cli *c = &co->c;
    cph_study_opts *o = &co->o;
    int opt, rc;
    long long n;
    while ((opt = cph_opt_next("cache", argc, argv, longopts)) != -1) {
        rc = 0;
        switch (opt) {
        case 'h': usage(stdout); return CPH_EXIT_OK;
        case OPT_GEOM: c->geom = optarg; break;
        case OPT_MAXACC:
            rc = cph_opt_int("cache", "--max-accesses", optarg, 1, INT64_MAX,
                             "a positive integer", &n);
            o->max_accesses = (uint64_t)n;
            break;
        case OPT_CHANNELS:
            rc = cph_opt_int("cache", "--channels", optarg, 1, 1 << 30,
                             "a positive integer up to 2^30", &n);
            o->channels = (int64_t)n;
            break;
        case OPT_TIMECAP:
            rc = cph_opt_double("cache", "--time-cap", optarg, 1e-9, 3600.0,
                                "a number of seconds in (0, 3600]", &o->time_cap);
            break;
        case OPT_NOTIME: o->time = 0; break;
        case OPT_ROUNDS:
            rc = cph_opt_int("cache", "--rounds", optarg, 1, 1000, "an integer in [1, 1000]", &n);
            o->rounds = (int)n;
            break;
        case OPT_JSON: c->json = optarg; break;
        case OPT_SVG: c->svg = optarg; break;
        case OPT_TRACE: c->trace = optarg; break;
        case OPT_PLAIN: c->plain = 1; break;
        case OPT_SKIP: c->skip = 1; break;
        case OPT_FAMILY: c->family = optarg; break;
        case CPH_OPT_FLIP:
            return cph_opt_error("cache", "--flip",
                                 "not taken: each variant has its own orientation (see --help)");
        default:
            if (opt == CPH_OPT_ALGO) c->algo_given = 1;
            rc = cph_opt_shared(&dest, opt, optarg);
        }
        if (rc) return rc;
    }
    if (cph_opt_no_operands("cache", argc, argv)) return CPH_EXIT_USAGE;
    if ((c->plain || c->skip) && !c->trace)
        return cph_opt_error("cache", c->plain ? "--plain" : "--skip-kernel", "needs --trace-only");
    if (c->skip && !c->plain) return cph_opt_error("cache", "--skip-kernel", "needs --plain");
    if (c->family && check_families(c->family)) return CPH_EXIT_USAGE;
    static const cp_flip no_flip[] = {CP_XCORR};
    if (cph_opt_selection_finish("cache", &co->sel, no_flip, 1)) return CPH_EXIT_USAGE;
    if (c->trace && co->sel.layers.n != 1)
        return cph_opt_error("cache", "--trace-only", "needs exactly one layer (got %zu)",
                             co->sel.layers.n);
    o->seed = co->sel.seed;
    return -1;
}

/* The machine, the simulated geometry, then the study or the one trace. */
static int cache_run(cache_opts *co) {
    char msg[512];
    cph_machine m;
    if (cph_machine_detect(&m, NULL, msg, sizeof msg) != CP_OK) {
        cph_err("cache: %s", msg);
        return CPH_EXIT_FAIL;
    }
    cph_study_opts *o = &co->o;
    o->caches = cph_machine_caches(&m);
    char ctx[96];
    snprintf(ctx, sizeof ctx, "'%.80s'", co->c.geom ? co->c.geom : "");
    const cp_status st =
        co->c.geom ? cph_geom_parse(co->c.geom, ctx, o->geom, &o->nlevels, msg, sizeof msg)
                   : geom_from_machine(&m, o->geom, &o->nlevels, msg, sizeof msg);
    int rc;
    if (st != CP_OK) {
        if (co->c.geom) {
            rc = cph_opt_error("cache", "--cache-geometry", "%s", msg);
        } else {
            cph_err("cache: %s", msg);
            rc = CPH_EXIT_USAGE;
        }
    } else if (co->c.trace) {
        rc = trace_only(&co->c, o, &co->sel.layers.v[0]);
    } else {
        rc = study(&co->c, o, &co->sel, co->c.geom ? "--cache-geometry" : "hwloc", &m);
    }
    cph_machine_free(&m);
    return rc;
}

int cph_cmd_cache(int argc, char **argv) {
    cache_opts co;
    memset(&co, 0, sizeof co);
    cph_selection_init(&co.sel);
    co.o.max_accesses = 30000000;
    co.o.time = 1;
    co.o.time_cap = 2.0;
    co.o.rounds = 5;
    int rc = parse(argc, argv, &co);
    if (rc < 0) rc = cache_run(&co);
    cph_selection_free(&co.sel);
    return rc;
}
