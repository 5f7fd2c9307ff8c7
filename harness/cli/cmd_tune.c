/* convpick tune: per layer x mode x thread count, time every applicable
 * algorithm and its parameter candidates within a budget, choose, and write the
 * tuning table after each layer (atomically), so that a killed run loses at
 * most the layer in flight and --resume measures only what is missing. */
#define _POSIX_C_SOURCE 200809L
#include <errno.h>
#include <getopt.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "harness/cli/cli.h"
#include "harness/machine/machine.h"
#include "harness/machine/membudget.h"
#include "harness/machine/pool.h"
#include "harness/measure/progress.h"
#include "harness/io/rawfile.h"
#include "harness/select/select.h"
#include "harness/io/table_write.h"
#include "harness/tune/tuner.h"

static volatile sig_atomic_t stop_requested = 0;

static void on_signal(int sig) {
    (void)sig;
    stop_requested = 1;
}

static void usage(FILE *f) {
    fprintf(f,
            "usage: convpick tune SELECTION --out FILE [OPTIONS]\n\n"
            "Times every algorithm that supports each layer (and a budgeted search over its\n"
            "parameters), checks each candidate against the fp64 oracle once, picks the fastest\n"
            "accurate one and writes the tuning table after every layer.\n\n"
            "%s\n"
            "options:\n"
            "  --out FILE          the tuning table to write (required)\n"
            "  --resume            keep FILE's entries; measure only layers missing or measured\n"
            "                      with other settings\n"
            "  --force             replace an existing FILE\n"
            "  --threads LIST      thread counts: 1,2 or all or 1-4 (default 1)\n"
            "  --budget SECONDS    time per layer x mode x threads for all candidates (default 10);\n"
            "                      every algorithm's defaults are measured even past it\n"
            "  --max-rel-err X     disqualify candidates whose error exceeds X (default 1e-4)\n"
            "  --target-ci PCT     stop sampling when the 95%% CI of the median is within\n"
            "                      +-PCT %% (default 2)\n"
            "  --max-seconds S     cap on one candidate's measurement (default 1)\n"
            "  --max-candidates N  parameter sets per algorithm (default 16)\n"
            "  --max-samples N     cap on samples per measurement (default 1000)\n"
            "  --cold              flush the caches before every sample (default: warm)\n"
            "%s"
            "  --quiet             no progress on stderr\n"
            "  --help\n"
            "Modes default to xcorr. Exit: 0 done, 1 a layer had no qualifying candidate,\n"
            "2 bad input, 130 interrupted (the table holds every finished layer).\n",
            cph_selection_help, cph_membudget_help);
}

static int parse_double(const char *opt, const char *arg, double lo, double *out) {
    char *end;
    errno = 0;
    double v = strtod(arg, &end);
    if (errno || end == arg || *end || !(v >= lo)) {
        cph_err("tune: %s '%s': expected a number >= %g", opt, arg, lo);
        return 0;
    }
    *out = v;
    return 1;
}

typedef struct {
    cph_progress *pr;
    int layer_i, nlayers;
    double eta_per_layer;
    int left_layers;
} progress_ctx;

static void on_candidate(void *arg, const cph_tune_progress *p) {
    progress_ctx *c = arg;
    char text[256];
    snprintf(text, sizeof text, "candidate %d/%d %s%s%s%s", p->candidate, p->ncandidates, p->algo,
             p->params[0] ? " (" : "", p->params, p->params[0] ? ")" : "");
    double left = c->eta_per_layer > 0 ? c->eta_per_layer * c->left_layers : -1.0;
    cph_progress_line(c->pr, c->layer_i, c->nlayers, p->layer, text, left);
}

int cph_cmd_tune(int argc, char **argv) {
    enum { O_OUT = 1, O_RESUME, O_FORCE, O_THREADS, O_BUDGET, O_MAXERR, O_CI, O_MAXS, O_MAXC, O_MAXSAMP,
           O_COLD, O_QUIET, O_HELP };
    static const struct option longopts[] = {
        CPH_SELECTION_LONGOPTS,
        {"out", required_argument, NULL, O_OUT},
        {"resume", no_argument, NULL, O_RESUME},
        {"force", no_argument, NULL, O_FORCE},
        {"threads", required_argument, NULL, O_THREADS},
        {"budget", required_argument, NULL, O_BUDGET},
        {"max-rel-err", required_argument, NULL, O_MAXERR},
        {"target-ci", required_argument, NULL, O_CI},
        {"max-seconds", required_argument, NULL, O_MAXS},
        {"max-candidates", required_argument, NULL, O_MAXC},
        {"max-samples", required_argument, NULL, O_MAXSAMP},
        {"cold", no_argument, NULL, O_COLD},
        {"quiet", no_argument, NULL, O_QUIET},
        CPH_MEMBUDGET_LONGOPT,
        {"help", no_argument, NULL, O_HELP},
        {NULL, 0, NULL, 0},
    };
    cph_selection sel;
    cph_selection_init(&sel);
    cph_tune_opts o;
    cph_tune_defaults(&o);
    const char *out = NULL, *threads_arg = "1";
    int resume = 0, force = 0, quiet = 0, rc = CPH_EXIT_USAGE;
    uint64_t budget = 0; /* 0: the default */
    char msg[512];
    cph_machine m;
    int have_machine = 0;
    cph_table_doc *doc = NULL;
    int opt;
    while ((opt = getopt_long(argc, argv, "", longopts, NULL)) != -1) {
        double d;
        switch (opt) {
        case O_OUT: out = optarg; break;
        case O_RESUME: resume = 1; break;
        case O_FORCE: force = 1; break;
        case O_THREADS: threads_arg = optarg; break;
        case O_BUDGET:
            if (!parse_double("--budget", optarg, 0.0, &o.budget_seconds)) goto done;
            break;
        case O_MAXERR:
            if (!parse_double("--max-rel-err", optarg, 0.0, &o.max_rel_err)) goto done;
            break;
        case O_CI:
            if (!parse_double("--target-ci", optarg, 0.01, &d)) goto done;
            o.timing.target_rel_ci = d / 100.0;
            break;
        case O_MAXS:
            if (!parse_double("--max-seconds", optarg, 0.001, &o.timing.max_seconds)) goto done;
            break;
        case O_MAXC:
            if (!parse_double("--max-candidates", optarg, 1.0, &d) || d > 64) {
                cph_err("tune: --max-candidates must be 1..64");
                goto done;
            }
            o.max_candidates = (int)d;
            break;
        case O_MAXSAMP:
            if (!parse_double("--max-samples", optarg, 1.0, &d) || d > 1e7) {
                cph_err("tune: --max-samples must be 1..10000000");
                goto done;
            }
            o.timing.max_samples = (size_t)d;
            if (o.timing.min_samples > o.timing.max_samples) o.timing.min_samples = o.timing.max_samples;
            break;
        case O_COLD: o.timing.cold = 1; break;
        case O_QUIET: quiet = 1; break;
        case CPH_OPT_MAX_MEMORY:
            if (cph_mem_parse(optarg, strchr(optarg, '%') ? cph_mem_machine_bytes() : 0, &budget,
                              msg, sizeof msg) != CP_OK) {
                cph_err("tune: %s", msg);
                goto done;
            }
            break;
        case O_HELP:
            usage(stdout);
            rc = CPH_EXIT_OK;
            goto done;
        case CPH_OPT_SHAPE: case CPH_OPT_SHAPES: case CPH_OPT_SUITE:
        case CPH_OPT_ALGO: case CPH_OPT_FLIP: case CPH_OPT_SEED:
            if (cph_selection_option(&sel, opt, optarg, msg, sizeof msg) != CP_OK) {
                cph_err("tune: %s", msg);
                goto done;
            }
            break;
        default:
            rc = cph_usage_error("tune");
            goto done;
        }
    }
    if (optind < argc) {
        cph_err("tune: unexpected argument '%s'", argv[optind]);
        goto done;
    }
    if (!out) {
        cph_err("tune: --out FILE is required");
        goto done;
    }
    const cp_flip def_modes[] = {CP_XCORR};
    if (cph_selection_finish(&sel, def_modes, 1, msg, sizeof msg) != CP_OK) {
        cph_err("tune: %s", msg);
        goto done;
    }
    o.seed = sel.seed;
    struct stat sb;
    const int exists = stat(out, &sb) == 0;
    if (exists && S_ISDIR(sb.st_mode)) {
        cph_err("tune: --out %s is a directory", out);
        goto done;
    }
    /* Refuse an unwritable place before measuring anything. */
    if (cph_check_output_dir(out, msg, sizeof msg) != CP_OK) {
        cph_err("tune: --out %s: %s", out, msg);
        goto done;
    }
    if (exists && !resume && !force) {
        cph_err("tune: %s exists: use --resume to complete it or --force to replace it", out);
        goto done;
    }
    if (cph_machine_detect(&m, NULL, msg, sizeof msg) != CP_OK) {
        cph_err("tune: %s", msg);
        goto done;
    }
    have_machine = 1;
    int counts[CPH_TABLE_MAX_THREADS];
    int nt = cph_parse_threads(threads_arg, m.cores, counts, CPH_TABLE_MAX_THREADS, msg, sizeof msg);
    if (nt < 1) {
        cph_err("tune: --threads: %s", msg);
        goto done;
    }
    int most = 1;
    for (int i = 0; i < nt; i++)
        if (counts[i] > most) most = counts[i];
    if (cph_mem_check_selection("tune", &sel, most, 1,
                                budget ? budget : (uint64_t)m.memory_bytes / 100 *
                                                      CPH_MEM_DEFAULT_PERCENT) != 0)
        goto done;
    cph_table_settings ts;
    memset(&ts, 0, sizeof ts);
    ts.target_rel_ci = o.timing.target_rel_ci;
    ts.confidence = o.timing.confidence;
    ts.max_seconds = o.timing.max_seconds;
    ts.cold = o.timing.cold;
    ts.warmup = o.timing.warmup;
    ts.min_samples = o.timing.min_samples;
    ts.max_samples = o.timing.max_samples;
    ts.max_rel_err = o.max_rel_err;
    ts.budget_seconds = o.budget_seconds;
    ts.max_candidates = o.max_candidates;
    ts.seed = o.seed;
    for (int i = 0; i < nt; i++) ts.threads[i] = counts[i];
    ts.nthreads = nt;
    cp_status st = (exists && resume) ? cph_table_doc_open(out, &m, &ts, &doc, msg, sizeof msg)
                                      : cph_table_doc_new(&m, &ts, &doc, msg, sizeof msg);
    if (st != CP_OK) {
        cph_err("tune: %s", msg);
        goto done;
    }
    if (exists && !resume) cph_table_doc_replaces(doc, out);
    if (o.timing.cold && o.timing.flush_bytes == 0) o.timing.flush_bytes = 2 * cph_machine_llc_total(&m);
    const cp_cache_sizes caches = cph_machine_caches(&m);

    struct sigaction sa;
    memset(&sa, 0, sizeof sa);
    sa.sa_handler = on_signal;
    sigemptyset(&sa.sa_mask);
    sigaction(SIGINT, &sa, NULL);
    sigaction(SIGTERM, &sa, NULL);

    cph_progress pr;
    cph_progress_init(&pr, stderr, quiet);
    const int nwork = (int)sel.layers.n * sel.nflips * nt;
    int done_work = 0, measured_work = 0, failures = 0;
    double measured_seconds = 0.0;
    rc = CPH_EXIT_OK;
    for (int ti = 0; ti < nt && !stop_requested; ti++) {
        cph_pool *pool = NULL;
        int pinned = 0;
        if (cph_pool_create(&m, counts[ti], &pool, &pinned, msg, sizeof msg) != CP_OK) {
            cph_err("tune: %s", msg);
            rc = CPH_EXIT_USAGE;
            break;
        }
        if (!pinned) cph_progress_note(&pr, "warning: threads not pinned: %s", msg);
        cp_exec exec = cph_pool_exec(pool);
        for (size_t li = 0; li < sel.layers.n && !stop_requested; li++)
            for (int mi = 0; mi < sel.nflips && !stop_requested; mi++) {
                const cph_layer *L = &sel.layers.v[li];
                const cp_flip flip = sel.flips[mi];
                done_work++;
                if (resume && cph_table_doc_find(doc, &L->shape, flip, counts[ti]) == CPH_TABLE_SAME) {
                    cph_progress_note(&pr, "[layer %d/%d] %s %s threads=%d: already measured, kept",
                                      done_work, nwork, L->name, flip == CP_CONV ? "conv" : "xcorr",
                                      counts[ti]);
                    continue;
                }
                progress_ctx pc = {&pr, done_work, nwork,
                                   measured_work ? measured_seconds / measured_work : -1.0,
                                   nwork - done_work + 1};
                cp_table_entry e;
                cph_tune_report rep;
                char lname[96];
                snprintf(lname, sizeof lname, "%s %s t=%d", L->name, flip == CP_CONV ? "conv" : "xcorr",
                         counts[ti]);
                cph_layer named = *L;
                const cph_tune_request rq = {&o, &named, flip, counts[ti], sel.algos, sel.nalgos,
                                             &caches, &exec, &stop_requested, on_candidate, &pc};
                st = cph_tune_layer(&rq, &e, &rep, msg, sizeof msg);
                if (rep.interrupted) break;
                measured_work++;
                measured_seconds += rep.seconds;
                if (st != CP_OK) {
                    cph_progress_note(&pr, "[layer %d/%d] %s: %s", done_work, nwork, lname, msg);
                    failures++;
                    continue;
                }
                char note[160];
                snprintf(note, sizeof note,
                         "tried %d of %d planned candidates in %.1f s: %d measured, %d skipped by "
                         "the budget, %d disqualified, %d failed, %d algorithms not applicable",
                         rep.measured + rep.disqualified, rep.planned, rep.seconds, rep.measured,
                         rep.skipped, rep.disqualified, rep.failed, rep.unsupported);
                const char *notes[1] = {note};
                cph_entry_notes en = {NULL, rep.planned, rep.measured, rep.skipped,
                                      rep.disqualified, rep.failed, rep.unsupported, rep.seconds,
                                      notes, 1};
                st = cph_table_doc_put(doc, &e, &en, msg, sizeof msg);
                if (st == CP_OK) st = cph_table_doc_write(doc, out, msg, sizeof msg);
                char pbuf[128];
                cp_params_format(e.algo, &e.params, pbuf, sizeof pbuf);
                if (st == CP_OK)
                    cph_progress_note(&pr,
                                      "[layer %d/%d] %s: %s%s%s%s %.3f ms, runner-up %s %+.1f %%%s",
                                      done_work, nwork, lname, e.algo->name, pbuf[0] ? " (" : "",
                                      pbuf, pbuf[0] ? ")" : "", e.timing.median * 1e3,
                                      e.runner_up ? e.runner_up->name : "none", e.margin * 100.0,
                                      e.margin_in_noise ? " (in the noise)" : "");
                cph_tune_entry_free(&e);
                if (st != CP_OK) {
                    cph_progress_done(&pr);
                    cph_err("tune: %s", msg);
                    rc = CPH_EXIT_USAGE;
                    stop_requested = 1;
                }
            }
        cph_pool_destroy(pool);
    }
    cph_progress_done(&pr);
    if (rc == CPH_EXIT_OK && stop_requested) {
        fprintf(stderr, "convpick tune: interrupted; %s holds %zu finished entries (--resume "
                        "completes it)\n", out, cph_table_doc_count(doc));
        rc = 130;
    } else if (rc == CPH_EXIT_OK) {
        if (!quiet)
            fprintf(stderr, "convpick tune: wrote %s (%zu entries)\n", out, cph_table_doc_count(doc));
        if (failures) rc = CPH_EXIT_FAIL;
    }
done:
    if (doc) cph_table_doc_free(doc);
    if (have_machine) cph_machine_free(&m);
    cph_selection_free(&sel);
    return rc;
}
