/* convpick bench: parses the options and runs the benchmark
 * (harness/bench/bench.h does the work; the results document's format is
 * described in harness/bench/bench_doc.c). */
#include <stdio.h>
#include <string.h>

#include "harness/bench/bench.h"
#include "harness/cli/cli.h"
#include "harness/cli/options.h"

static void usage(FILE *f) {
    fputs("usage: convpick bench SELECTION [OPTIONS]\n\n"
          "Times every selected algorithm (default parameters for this machine's caches)\n"
          "on each layer, flip and thread count, and prints the median time with its\n"
          "distribution-free confidence interval, GFLOP/s (direct-equivalent FLOPs) and\n"
          "the fraction of the measured FMA peak.  Nothing is chosen or written unless\n"
          "--json is given.  Times are in milliseconds.\n\n"
          "The peak for t threads is the all-core peak when t is the number of cores\n"
          "measured together, else the one-core peak times t.  FLOPs are those of the\n"
          "direct method, so an algorithm that does less arithmetic (Winograd) can\n"
          "exceed 100 %.  'noisy' marks a measurement whose interquartile range exceeds\n"
          "10 % of the median or whose CI missed the target; 'cap' one that --max-seconds\n"
          "stopped.\n\n",
          f);
    cph_help_selection(f, "no");
    fputs("options:\n", f);
    cph_help_timing(f, 2.0);
    fputs("  --no-roofs          do not measure the FMA peak and bandwidth first\n"
          "                      (default: measure them, before and after the rows)\n"
          "  --json FILE         write every sample and setting (format\n"
          "                      convpick-bench-results, version 1; default: none)\n"
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
    enum { OPT_NOROOFS = 1, OPT_JSON, OPT_TABLE, OPT_NOSGEMM, OPT_TARGETS };
    static const struct option longopts[] = {
        CPH_OPTS_SELECTION,
        CPH_OPTS_TIMING,
        {"no-roofs", no_argument, NULL, OPT_NOROOFS},
        {"json", required_argument, NULL, OPT_JSON},
        {"table", required_argument, NULL, OPT_TABLE},
        {"no-sgemm", no_argument, NULL, OPT_NOSGEMM},
        {"targets", no_argument, NULL, OPT_TARGETS},
        CPH_OPT_MAX_MEMORY_ENTRY,
        CPH_OPTS_HELP_END,
    };
    const cph_opt_dest dest = {"bench", &c->sel, &c->timing, &c->threads, &c->max_memory, NULL};
    int opt;
    while ((opt = cph_opt_next("bench", argc, argv, longopts)) != -1) {
        int rc = 0;
        switch (opt) {
        case 'h': usage(stdout); return CPH_EXIT_OK;
        case OPT_NOROOFS: c->roofs = 0; break;
        case OPT_JSON: c->json_path = optarg; break;
        case OPT_TABLE: c->table_path = optarg; break;
        case OPT_NOSGEMM: c->sgemm = 0; break;
        case OPT_TARGETS: c->targets = 1; break;
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
    int rc = parse(argc, argv, &c);
    if (rc < 0) rc = cph_bench_run(&c, argc, argv);
    cph_selection_free(&c.sel);
    return rc;
}
