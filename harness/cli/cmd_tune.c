/* convpick tune: parses the options into a tuning job and runs it
 * (harness/tune/tune_run.h does the work). */
#include <stdio.h>
#include <string.h>

#include "harness/cli/cli.h"
#include "harness/cli/options.h"
#include "harness/select/shard.h"
#include "harness/tune/tune_run.h"

static void usage(FILE *f) {
    fputs("usage: convpick tune SELECTION --out FILE [OPTIONS]\n\n"
          "Checks every algorithm that supports each layer (and a budgeted search over its\n"
          "parameters) against the fp64 oracle once, then races the accurate ones on trials\n"
          "(each a fresh plan, freshly placed buffers, one warm-up run and a short batch of\n"
          "samples), run interleaved in rounds in a shuffled order; a candidate slower than\n"
          "the leader with confidence leaves the race.  The choice, its runner-up and the\n"
          "margin with its interval come from the paired trials.  The tuning table is\n"
          "written after every layer.\n\n",
          f);
    cph_help_selection(f, "no");
    fputs("options:\n"
          "  --out FILE          the tuning table to write (required)\n"
          "  --resume            keep FILE's entries; measure only layers missing or measured\n"
          "                      with other settings (default: refuse an existing FILE)\n"
          "  --force             replace an existing FILE (default: refuse)\n"
          "  --budget SECONDS    time per layer x flip x threads for all candidates\n"
          "                      (default: 10); every algorithm's defaults are checked and\n"
          "                      raced at least one round even past it\n"
          "  --trial-samples N   timed samples per trial, after one warm-up run (default: 5)\n"
          "  --min-rounds N      rounds before the race drops anything (default: 6)\n"
          "  --max-rounds N      rounds at most (default: 40)\n"
          "  --alpha A           level of the race's drop test and of the margin's interval\n"
          "                      (1 - A) (default: 0.05)\n"
          "  --no-place          trial buffers page-aligned, plans on the heap (default:\n"
          "                      each block at a random offset on huge-page regions,\n"
          "                      docs/measurement.md)\n"
          "  --max-rel-err X     disqualify candidates whose error exceeds X (default: 1e-4)\n"
          "  --max-candidates N  parameter sets per algorithm (default: 16)\n",
          f);
    cph_help_timing(f, 1.0);
    fputs("                      (in tune --max-seconds caps one trial and --max-samples\n"
          "                      lowers --trial-samples; --target-ci is not used)\n",
          f);
    cph_help_max_memory(f);
    cph_help_isolate(f);
    fputs("  --shard I/N         tune only shard I (1..N) of the selection: layers dealt,\n"
          "                      heaviest first, to the shard with the fewest FLOPs so far\n"
          "                      (deterministic; merge the shard tables with 'convpick gather')\n"
          "                      (default: every layer)\n"
          "  --quiet             no progress on stderr (default: progress)\n", f);
    cph_help_end(f, "0 done, 1 a layer had no qualifying candidate, 2 bad usage or input,\n"
                    "130 interrupted (the table holds every finished layer)");
}

typedef struct tune_cli {
    cph_selection sel;
    cph_tune_job job;
    int shard, nshards; /* 0-based; nshards 0: no --shard */
} tune_cli;

/* "I/N" with 1 <= I <= N <= 10000 -> 0-based shard, count. */
static int parse_shard(const char *arg, tune_cli *t) {
    int i = 0, n = 0, used = 0;
    if (sscanf(arg, "%d/%d%n", &i, &n, &used) != 2 || arg[used] != '\0' || n < 1 || n > 10000 ||
        i < 1 || i > n)
        return cph_opt_error("tune", "--shard", "'%s' is not I/N with 1 <= I <= N <= 10000", arg);
    t->shard = i - 1;
    t->nshards = n;
    return 0;
}

/* Returns -1 to go on, else the exit code (the error already reported). */
static int parse(int argc, char **argv, tune_cli *t) {
    enum {
        OPT_OUT = 1, OPT_RESUME, OPT_FORCE, OPT_BUDGET, OPT_MAXERR, OPT_MAXC, OPT_QUIET,
        OPT_TRIAL_SAMPLES, OPT_MIN_ROUNDS, OPT_MAX_ROUNDS, OPT_ALPHA, OPT_NO_PLACE, OPT_SHARD
    };
    static const struct option longopts[] = {
        CPH_OPTS_SELECTION,
        CPH_OPTS_TIMING,
        {"out", required_argument, NULL, OPT_OUT},
        {"resume", no_argument, NULL, OPT_RESUME},
        {"force", no_argument, NULL, OPT_FORCE},
        {"budget", required_argument, NULL, OPT_BUDGET},
        {"max-rel-err", required_argument, NULL, OPT_MAXERR},
        {"max-candidates", required_argument, NULL, OPT_MAXC},
        {"quiet", no_argument, NULL, OPT_QUIET},
        {"trial-samples", required_argument, NULL, OPT_TRIAL_SAMPLES},
        {"min-rounds", required_argument, NULL, OPT_MIN_ROUNDS},
        {"max-rounds", required_argument, NULL, OPT_MAX_ROUNDS},
        {"alpha", required_argument, NULL, OPT_ALPHA},
        {"no-place", no_argument, NULL, OPT_NO_PLACE},
        {"shard", required_argument, NULL, OPT_SHARD},
        CPH_OPT_MAX_MEMORY_ENTRY,
        CPH_OPT_ISOLATE_ENTRY,
        CPH_OPTS_HELP_END,
    };
    cph_tune_job *j = &t->job;
    cph_tune_opts *o = &j->opts;
    const cph_opt_dest dest = {"tune",          &t->sel,         &o->timing,
                               &j->threads,     &j->max_memory,  &o->isolate};
    int opt;
    long long n;
    while ((opt = cph_opt_next("tune", argc, argv, longopts)) != -1) {
        int rc = 0;
        switch (opt) {
        case 'h': usage(stdout); return CPH_EXIT_OK;
        case OPT_OUT: j->out = optarg; break;
        case OPT_RESUME: j->resume = 1; break;
        case OPT_FORCE: j->force = 1; break;
        case OPT_QUIET: j->quiet = 1; break;
        case OPT_BUDGET:
            rc = cph_opt_double("tune", "--budget", optarg, 0.0, 1e9, "a number of seconds >= 0",
                                &o->budget_seconds);
            break;
        case OPT_MAXERR:
            rc = cph_opt_double("tune", "--max-rel-err", optarg, 0.0, 1e300, "a number >= 0",
                                &o->max_rel_err);
            break;
        case OPT_MAXC:
            rc = cph_opt_int("tune", "--max-candidates", optarg, 1, 64, "an integer in [1, 64]",
                             &n);
            o->max_candidates = (int)n;
            break;
        case OPT_TRIAL_SAMPLES:
            rc = cph_opt_int("tune", "--trial-samples", optarg, 1, 1000,
                             "an integer in [1, 1000]", &n);
            o->timing.min_samples = o->timing.max_samples = (size_t)n;
            break;
        case OPT_MIN_ROUNDS:
            rc = cph_opt_int("tune", "--min-rounds", optarg, 1, CPH_PAIRED_MAX,
                             "an integer in [1, 400]", &n);
            o->race.min_rounds = (size_t)n;
            break;
        case OPT_MAX_ROUNDS:
            rc = cph_opt_int("tune", "--max-rounds", optarg, 1, CPH_PAIRED_MAX,
                             "an integer in [1, 400]", &n);
            o->race.max_rounds = (size_t)n;
            break;
        case OPT_ALPHA:
            rc = cph_opt_double("tune", "--alpha", optarg, 1e-6, 0.5, "a level in (0, 0.5]",
                                &o->race.alpha);
            break;
        case OPT_NO_PLACE: o->place = 0; break;
        case OPT_SHARD: rc = parse_shard(optarg, t); break;
        case CPH_OPT_TARGET_CI:
            rc = cph_opt_error("tune", "--target-ci",
                               "not used by tune (a trial is a fixed batch: --trial-samples)");
            break;
        default: rc = cph_opt_shared(&dest, opt, optarg);
        }
        if (rc) return rc;
    }
    if (cph_opt_no_operands("tune", argc, argv)) return CPH_EXIT_USAGE;
    if (!j->out) return cph_opt_error("tune", "--out", "required (see convpick tune --help)");
    static const cp_flip no_flip[] = {CP_XCORR};
    if (cph_opt_selection_finish("tune", &t->sel, no_flip, 1)) return CPH_EXIT_USAGE;
    char msg[256];
    if (t->nshards && cph_shard_keep(&t->sel.layers, t->shard, t->nshards, msg, sizeof msg) != CP_OK)
        return cph_opt_error("tune", "--shard", "%s", msg);
    return -1;
}

int cph_cmd_tune(int argc, char **argv) {
    tune_cli t;
    memset(&t, 0, sizeof t);
    cph_selection_init(&t.sel);
    cph_tune_defaults(&t.job.opts);
    t.job.sel = &t.sel;
    t.job.threads = "1";
    int rc = parse(argc, argv, &t);
    if (rc < 0) rc = cph_tune_run(&t.job);
    cph_selection_free(&t.sel);
    return rc;
}
