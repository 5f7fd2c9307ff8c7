/* convpick cache: measures whether true convolution (the kernel read
 * flipped) costs more in cache behaviour than cross-correlation, and whether
 * flipping the weights once up front removes that cost (cache_study.h).
 *
 * --trace-only runs one variant on one layer for comparison with an outside
 * simulator (tests/cli_cachegrind.sh): without --plain it prints our
 * simulator's counts for the traced copy; with --plain it runs the plain
 * (untraced) kernel once after flushing the caches and prints nothing else
 * of substance, so that a run under valgrind's cachegrind sees the kernel's
 * own traffic; --skip-kernel does everything but the kernel call. */
#define _POSIX_C_SOURCE 200809L /* strdup, strtok */
#include <getopt.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "harness/cache/cache_report.h"
#include "harness/cache/cache_study.h"
#include "harness/cache/cache_traced.h"
#include "harness/cli/cli.h"
#include "harness/measure/data.h"
#include "harness/machine/machine.h"
#include "harness/io/rawfile.h"
#include "harness/select/select.h"

static void usage(FILE *f) {
    fprintf(f,
            "usage: convpick cache [OPTIONS]\n\n"
            "Compares cross-correlation (xcorr), true convolution with the kernel read\n"
            "reversed in the loops (flipidx) and true convolution with the weights flipped\n"
            "once (preflip) for direct (loop order 0 = n,k,p,q,c,r,s and 1 = n,k,c,r,s,p,q)\n"
            "and blocked (portable tile kernel, traced; AVX2 tile kernel, timed only).\n"
            "Each variant is checked against the fp64 oracle, timed on one thread, counted by\n"
            "hardware counters when the machine has them, and its traced build is run through\n"
            "a cache simulator on the first K' output channels of the layer.\n\n"
            "options:\n%s"
            "                    (--algo: direct and/or blocked select the families; --mode is\n"
            "                    not used: each variant has its own)\n"
            "  --family F,G      only these variant families: direct, direct.o0, direct.o1,\n"
            "                    blocked, blocked.ref, blocked.avx2 (default: all)\n"
            "  --cache-geometry G  simulated levels NAME=SIZE:WAYS:LINE,... L1 first, SIZE with\n"
            "                    K/M/G (powers of two), WAYS a number or 'full', e.g.\n"
            "                    L1=32K:8:64,L2=512K:8:64,L3=32M:16:64 (default: this machine's\n"
            "                    data caches from hwloc)\n"
            "  --max-accesses N  access budget per traced run; K' is the largest multiple of 6\n"
            "                    output channels whose estimate fits (default 30000000)\n"
            "  --channels K      simulate exactly the first K output channels instead\n"
            "  --time-cap S      seconds of timing per variant (default 2.0)\n"
            "  --rounds N        timing rounds per variant, interleaved within a family\n"
            "                    (default 5); the samples of all rounds are pooled\n"
            "  --no-time         do not time\n"
            "  --json FILE       write the study as JSON (replaced atomically)\n"
            "  --svg FILE        write a bar chart of misses per output (replaced atomically)\n"
            "  --trace-only V    one variant (e.g. direct.o1.flipidx) on one layer: print the\n"
            "                    simulator's counts for its traced build\n"
            "  --plain           with --trace-only: flush the caches, run the plain kernel once\n"
            "  --skip-kernel     with --plain: everything except the kernel call\n"
            "  -h, --help        this text\n\n"
            "exit status: 0 done, 1 a variant failed its oracle check, 2 bad usage or input\n",
            cph_selection_help);
}

enum {
    OPT_GEOM = 2000,
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

static int parse_u64(const char *s, uint64_t *out) {
    char *end = NULL;
    if (!s || !*s || *s == '-') return 0;
    unsigned long long v = strtoull(s, &end, 10);
    if (*end) return 0;
    *out = v;
    return 1;
}

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
        cph_err("--trace-only %s: unknown variant (e.g. direct.o0.xcorr, direct.o1.flipidx, "
                "blocked.ref.preflip)", c->trace);
        return CPH_EXIT_USAGE;
    }
    if (!c->plain && !v->traced) {
        cph_err("--trace-only %s: this variant has no traced build (use --plain)", v->id);
        return CPH_EXIT_USAGE;
    }
    const cp_algo *a = c->plain ? cp_algo_find(v->algo) : v->traced;
    cp_shape s = L->shape;
    if (!c->plain && o->channels > 0 && o->channels < s.k) s.k = o->channels;
    if (!a || !a->supports(&s, v->flip, NULL, 0)) {
        cph_err("--trace-only %s: not applicable to layer %s", v->id, L->name);
        return CPH_EXIT_USAGE;
    }
    char msg[512];
    cp_params p;
    cp_algo_defaults(a, &L->shape, &o->caches, &p);
    const int pi = cp_algo_param_index(a, v->param);
    if (pi >= 0) p.v[pi] = v->param_value;
    if (cp_params_check(a, &p, msg, sizeof msg) != CP_OK) {
        cph_err("--trace-only %s: %s", v->id, msg);
        return CPH_EXIT_USAGE;
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
            cph_err("--algo %s: the cache study covers direct and blocked only", nm);
            free(fbuf);
            return CPH_EXIT_USAGE;
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

int cph_cmd_cache(int argc, char **argv) {
    static const struct option longopts[] = {
        CPH_SELECTION_LONGOPTS,
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
        {"help", no_argument, NULL, 'h'},
        {NULL, 0, NULL, 0},
    };
    cph_selection sel;
    cph_selection_init(&sel);
    cache_cli c;
    memset(&c, 0, sizeof c);
    cph_study_opts o;
    memset(&o, 0, sizeof o);
    o.max_accesses = 30000000;
    o.time = 1;
    o.time_cap = 2.0;
    o.rounds = 5;
    char msg[512];
    int opt, rc = CPH_EXIT_USAGE;
    uint64_t u;
    opterr = 0;
    while ((opt = getopt_long(argc, argv, "h", longopts, NULL)) != -1) {
        switch (opt) {
        case 'h':
            usage(stdout);
            cph_selection_free(&sel);
            return CPH_EXIT_OK;
        case OPT_GEOM: c.geom = optarg; break;
        case OPT_MAXACC:
            if (!parse_u64(optarg, &o.max_accesses) || o.max_accesses == 0) {
                cph_err("--max-accesses %s: expected a positive integer", optarg);
                goto out;
            }
            break;
        case OPT_CHANNELS:
            if (!parse_u64(optarg, &u) || u == 0 || u > (1u << 30)) {
                cph_err("--channels %s: expected a positive integer", optarg);
                goto out;
            }
            o.channels = (int64_t)u;
            break;
        case OPT_TIMECAP: {
            char *end = NULL;
            o.time_cap = strtod(optarg, &end);
            if (*end || !(o.time_cap > 0.0) || o.time_cap > 3600.0) {
                cph_err("--time-cap %s: expected seconds in (0, 3600]", optarg);
                goto out;
            }
            break;
        }
        case OPT_NOTIME: o.time = 0; break;
        case OPT_ROUNDS:
            if (!parse_u64(optarg, &u) || u == 0 || u > 1000) {
                cph_err("--rounds %s: expected an integer in 1..1000", optarg);
                goto out;
            }
            o.rounds = (int)u;
            break;
        case OPT_JSON: c.json = optarg; break;
        case OPT_SVG: c.svg = optarg; break;
        case OPT_TRACE: c.trace = optarg; break;
        case OPT_PLAIN: c.plain = 1; break;
        case OPT_SKIP: c.skip = 1; break;
        case OPT_FAMILY: c.family = optarg; break;
        case CPH_OPT_FLIP:
            cph_err("--mode: the cache study fixes the mode of each variant (see --help)");
            goto out;
        default:
            if (opt == CPH_OPT_ALGO) c.algo_given = 1;
            if (opt < CPH_OPT_SHAPE) {
                cph_selection_free(&sel);
                return cph_usage_error("cache");
            }
            if (cph_selection_option(&sel, opt, optarg, msg, sizeof msg) != CP_OK) {
                cph_err("%s", msg);
                goto out;
            }
        }
    }
    if (optind < argc) {
        cph_err("cache: unexpected argument '%s' (see convpick cache --help)", argv[optind]);
        goto out;
    }
    if ((c.plain || c.skip) && !c.trace) {
        cph_err("--plain and --skip-kernel need --trace-only");
        goto out;
    }
    if (c.skip && !c.plain) {
        cph_err("--skip-kernel needs --plain");
        goto out;
    }
    if (c.family) {
        static const char *const known[] = {"direct", "direct.o0", "direct.o1", "blocked",
                                            "blocked.ref", "blocked.avx2"};
        char *buf = strdup(c.family);
        const char *f[8];
        const int n = buf ? split_list(buf, f, 8) : 0;
        int bad = n == 0;
        for (int i = 0; i < n && !bad; i++) {
            int ok = 0;
            for (size_t k = 0; k < sizeof known / sizeof known[0]; k++) ok |= !strcmp(f[i], known[k]);
            if (!ok) {
                cph_err("--family %s: unknown family (direct, direct.o0, direct.o1, blocked, "
                        "blocked.ref, blocked.avx2)", f[i]);
                bad = 1;
            }
        }
        if (n == 0) cph_err("--family: empty list");
        free(buf);
        if (bad) goto out;
    }
    static const cp_flip xc[] = {CP_XCORR};
    if (cph_selection_finish(&sel, xc, 1, msg, sizeof msg) != CP_OK) {
        cph_err("cache: %s", msg);
        goto out;
    }
    if (c.trace && sel.layers.n != 1) {
        cph_err("--trace-only needs exactly one layer (got %zu)", sel.layers.n);
        goto out;
    }
    o.seed = sel.seed;
    cph_machine m;
    if (cph_machine_detect(&m, NULL, msg, sizeof msg) != CP_OK) {
        cph_err("cache: %s", msg);
        rc = CPH_EXIT_FAIL;
        goto out;
    }
    o.caches = cph_machine_caches(&m);
    const char *src = "--cache-geometry";
    cp_status st = c.geom ? cph_geom_parse(c.geom, "--cache-geometry", o.geom, &o.nlevels, msg,
                                           sizeof msg)
                          : geom_from_machine(&m, o.geom, &o.nlevels, msg, sizeof msg);
    if (!c.geom) src = "hwloc";
    if (st != CP_OK) {
        cph_err("%s", msg);
        cph_machine_free(&m);
        goto out;
    }
    if (c.trace)
        rc = trace_only(&c, &o, &sel.layers.v[0]);
    else
        rc = study(&c, &o, &sel, src, &m);
    cph_machine_free(&m);
out:
    cph_selection_free(&sel);
    return rc;
}
