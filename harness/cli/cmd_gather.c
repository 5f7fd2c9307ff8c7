/* convpick gather: combines the tables of a sharded tune into one
 * (harness/io/table_gather.h does the work). */
#include <stdio.h>

#include "harness/cli/cli.h"
#include "harness/cli/options.h"
#include "harness/io/table_gather.h"

static void usage(FILE *f) {
    fputs("usage: convpick gather SHARD... --out FILE [OPTIONS]\n\n"
          "Combines the tables written by 'convpick tune --shard I/N' into one table.\n"
          "The output is the same bytes whatever the order of the SHARD files.  A layer\n"
          "(shape, flip, threads) measured in several shards keeps the entry whose chosen\n"
          "algorithm has the lower median (equal medians: the entry whose text sorts\n"
          "first).  Shards of different devices or measurement settings are refused\n"
          "unless --mixed; the table then lists the mismatches in \"gathered\".\n"
          "FILE is written atomically (the old FILE stays whole on any error).\n\n"
          "options:\n"
          "  --out FILE          the table to write (required; replaced if it exists)\n"
          "  --mixed             gather shards of different devices or settings (default:\n"
          "                      refuse)\n"
          "  --lean              write FILE without each entry's candidates and search\n"
          "                      record, and the full table beside it as the evidence file\n"
          "                      (T.json -> T.evidence.json) (default: full table)\n"
          "  --quiet             no summary on stderr (default: summary)\n",
          f);
    cph_help_end(f, "0 written, 2 bad usage or input (nothing written)");
}

int cph_cmd_gather(int argc, char **argv) {
    enum { OPT_OUT = 1, OPT_MIXED, OPT_LEAN, OPT_QUIET };
    static const struct option longopts[] = {
        {"out", required_argument, NULL, OPT_OUT},
        {"mixed", no_argument, NULL, OPT_MIXED},
        {"lean", no_argument, NULL, OPT_LEAN},
        {"quiet", no_argument, NULL, OPT_QUIET},
        CPH_OPTS_HELP_END,
    };
    cph_gather_opts o = {0, 0};
    const char *out = NULL;
    int opt, quiet = 0;
    while ((opt = cph_opt_next("gather", argc, argv, longopts)) != -1) {
        switch (opt) {
        case OPT_OUT: out = optarg; break;
        case OPT_MIXED: o.allow_mixed = 1; break;
        case OPT_LEAN: o.lean = 1; break;
        case OPT_QUIET: quiet = 1; break;
        case 'h': usage(stdout); return CPH_EXIT_OK;
        default: return CPH_EXIT_USAGE;
        }
    }
    if (!out) return cph_opt_error("gather", "--out", "required (see convpick gather --help)");
    if (optind >= argc)
        return cph_opt_error("gather", NULL, "expected at least one SHARD table (see convpick "
                                             "gather --help)");
    char msg[1024];
    cph_gather_result r;
    if (cph_table_gather((const char *const *)argv + optind, (size_t)(argc - optind), out, &o, &r,
                         msg, sizeof msg) != CP_OK) {
        cph_err("gather: %s", msg);
        return CPH_EXIT_USAGE;
    }
    if (!quiet) {
        fprintf(stderr, "gather: %zu shard(s), %zu entries, %zu conflict(s) resolved -> %s\n",
                r.inputs, r.entries, r.conflicts, out);
        if (r.mixed) fprintf(stderr, "gather: warning: the shards differ (see \"gathered\")\n");
        if (r.evidence[0]) fprintf(stderr, "gather: evidence -> %s\n", r.evidence);
    }
    return CPH_EXIT_OK;
}
