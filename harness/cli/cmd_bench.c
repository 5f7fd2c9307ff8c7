/* convpick bench: parses the options and runs the benchmark
 * (harness/bench/bench.h does the work; the results document's format is
 * described in harness/bench/bench_doc.c). */
#include <stdio.h>
#include <string.h>

#include "harness/bench/bench.h"
#include "harness/cli/cli.h"
#include "harness/cli/options.h"
#include "harness/measure/paired.h"

static void usage(FILE *f) {
    fputs("usage: convpick bench SELECTION [OPTIONS]\n\n"
          "Times every selected algorithm (default parameters for this machine's caches)\n"
          "on each layer, flip and thread count, and prints the median time with its\n"
          "distribution-free confidence interval, GFLOP/s (direct-equivalent FLOPs) and\n"
          "the fraction of the measured FMA peak.  Beside the median, rel_err is the row's\n"
          "error against the fp64 oracle (relative to sum|x||w| + |b|, as verify and tune\n"
          "measure it), from one checking run before any timing.  Nothing is chosen or\n"
          "written unless --json is given.  Times are in milliseconds.\n\n"
          "The rows of a layer, flip and thread count are measured in rounds: each round\n"
          "runs one trial of every row and of a fixed control (the FMA loop of the roofs and\n"
          "a fixed SGEMM, on one thread), in an order shuffled anew each round, the rows\n"
          "of one layer back to back.  A\n"
          "trial is a fresh plan and fresh buffers (at random offsets), one warm-up run\n"
          "and a short batch of samples; its median is the row's sample.  A row's median\n"
          "and interval are those of its trial medians ('n' counts trials); the rows of a\n"
          "layer print when its rounds end.\n\n"
          "The peak for t threads is the all-core peak when t is the number of cores\n"
          "measured together, else the one-core peak times t.  FLOPs are those of the\n"
          "direct method, so an algorithm that does less arithmetic (Winograd) can\n"
          "exceed 100 %.  'noisy' marks a row whose trial medians' interquartile range\n"
          "exceeds 10 % of their median.\n\n",
          f);
    cph_help_selection(f, "no");
    fputs("options:\n", f);
    cph_help_timing(f, 2.0);
    fputs("                      (in bench --max-seconds caps one row over all its rounds,\n"
          "                      each trial getting its share; --max-samples lowers\n"
          "                      --trial-samples; --target-ci is not used)\n"
          "  --rounds N          trials of every row, one per round (default: 8)\n"
          "  --trial-samples N   timed samples per trial, after one warm-up run (default: 5)\n"
          "  --no-place          trial buffers and plans on the heap instead of at random\n"
          "                      offsets on huge-page regions (default: placed)\n"
          "  --no-roofs          do not measure the FMA peak and bandwidth first\n"
          "                      (default: measure them, before and after the rows)\n"
          "  --json FILE         write every sample and setting (format\n"
          "                      convpick-bench-results, version 2; default: none)\n"
          "  --table FILE        also time what this tuning table chooses for each layer\n"
          "                      (through cp_table_plan, as a deploying program would):\n"
          "                      row 'chosen' (default: none)\n"
          "  --no-sgemm          skip the bare SGEMM reference rows ('sgemm': the im2col\n"
          "                      products; 'sgemm_wino': Winograd's 16 GEMMs; default:\n"
          "                      timed beside im2col_gemm and Winograd)\n"
          "  --targets           after the rows, the convpick project's performance targets\n"
          "                      with PASS / MISS (what scripts/bench runs; docs/benchmark.md;\n"
          "                      default: off)\n",
          f);
    cph_help_max_memory(f);
    cph_help_end(f, "0 done, 1 an algorithm failed to plan or run (or the results\n"
                    "could not be written), 2 bad usage or input (an unwritable --json\n"
                    "directory is found before anything runs)");
}

/* Returns -1 to go on, else the exit code (the error already reported). */
static int parse(int argc, char **argv, cph_bench_cfg *c) {
    enum {
        OPT_NOROOFS = 1,
        OPT_JSON,
        OPT_TABLE,
        OPT_NOSGEMM,
        OPT_TARGETS,
        OPT_ROUNDS,
        OPT_TRIAL_SAMPLES,
        OPT_NO_PLACE
    };
    static const struct option longopts[] = {
        CPH_OPTS_SELECTION,
        CPH_OPTS_TIMING,
        {"no-roofs", no_argument, NULL, OPT_NOROOFS},
        {"json", required_argument, NULL, OPT_JSON},
        {"table", required_argument, NULL, OPT_TABLE},
        {"no-sgemm", no_argument, NULL, OPT_NOSGEMM},
        {"targets", no_argument, NULL, OPT_TARGETS},
        {"rounds", required_argument, NULL, OPT_ROUNDS},
        {"trial-samples", required_argument, NULL, OPT_TRIAL_SAMPLES},
        {"no-place", no_argument, NULL, OPT_NO_PLACE},
        CPH_OPT_MAX_MEMORY_ENTRY,
        CPH_OPTS_HELP_END,
    };
    const cph_opt_dest dest = {"bench", &c->sel, &c->timing, &c->threads, &c->max_memory, NULL};
    int opt;
    long long n;
    while ((opt = cph_opt_next("bench", argc, argv, longopts)) != -1) {
        int rc = 0;
        switch (opt) {
        case 'h': usage(stdout); return CPH_EXIT_OK;
        case OPT_NOROOFS: c->roofs = 0; break;
        case OPT_JSON: c->json_path = optarg; break;
        case OPT_TABLE: c->table_path = optarg; break;
        case OPT_NOSGEMM: c->sgemm = 0; break;
        case OPT_TARGETS: c->targets = 1; break;
        case OPT_ROUNDS:
            rc = cph_opt_int("bench", "--rounds", optarg, 1, CPH_PAIRED_MAX,
                             "an integer in [1, 400]", &n);
            c->rounds = (size_t)n;
            break;
        case OPT_TRIAL_SAMPLES:
            rc = cph_opt_int("bench", "--trial-samples", optarg, 1, 1000,
                             "an integer in [1, 1000]", &n);
            c->trial_samples = (size_t)n;
            break;
        case OPT_NO_PLACE: c->place = 0; break;
        default: rc = cph_opt_shared(&dest, opt, optarg);
        }
        if (rc) return rc;
    }
    static const cp_flip no_flip[] = {CP_XCORR};
    if (cph_opt_no_operands("bench", argc, argv) ||
        cph_opt_selection_finish("bench", &c->sel, no_flip, 1))
        return CPH_EXIT_USAGE;
    return -1;
}

int cph_cmd_bench(int argc, char **argv) {
    cph_bench_cfg c;
    memset(&c, 0, sizeof c);
    cph_selection_init(&c.sel);
    cph_timing_defaults(&c.timing);
    c.roofs = 1;
    c.sgemm = 1;
    c.rounds = CPH_BENCH_ROUNDS_DEFAULT;
    c.trial_samples = CPH_BENCH_TRIAL_SAMPLES_DEFAULT;
    c.place = 1;
    int rc = parse(argc, argv, &c);
    if (rc < 0) rc = cph_bench_run(&c, argc, argv);
    cph_selection_free(&c.sel);
    return rc;
}
