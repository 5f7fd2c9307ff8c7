/* convpick show INPUT...: a tuning table in the terminal, one line per entry
 * and the network totals (harness/report/report_summary.c).  Probe output or
 * bench results given beside it add the roofs and the layer counts. */
#include <stdio.h>

#include "harness/cli/cli.h"
#include "harness/cli/options.h"
#include "harness/report/report.h"

static void usage(FILE *f) {
    fputs("usage: convpick show TABLE [INPUT...]\n\n"
          "Prints every entry of the tuning table(s): layer, count, threads, the choice,\n"
          "its median time (ms), GFLOP/s and percentage of the compute roof, the\n"
          "runner-up, the margin with its interval, and whether the choice is\n"
          "confident (the margin's interval lies above 0); then the network totals\n"
          "(sum of count x median) of the choice and of every algorithm, per thread\n"
          "count.  Probe output (probe --json) or bench results given as INPUT add the\n"
          "roofs and the layer counts (tables do not record them; else 1, marked *).\n\n"
          "options:\n",
          f);
    cph_help_end(f, "0 printed, 2 bad usage or input");
}

int cph_cmd_show(int argc, char **argv) {
    static const struct option longopts[] = {CPH_OPTS_HELP_END};
    int opt;
    while ((opt = cph_opt_next("show", argc, argv, longopts)) != -1) {
        if (opt == 'h') {
            usage(stdout);
            return CPH_EXIT_OK;
        }
        return CPH_EXIT_USAGE;
    }
    if (optind >= argc)
        return cph_opt_error("show", NULL, "expected a TABLE (see convpick show --help)");
    char msg[1024];
    cph_report r;
    if (cph_report_collect((const char *const *)(argv + optind), (size_t)(argc - optind), &r, msg,
                           sizeof msg) != CP_OK)
        return cph_opt_error("show", NULL, "%s", msg);
    int tables = 0;
    for (size_t i = 0; i < r.n; i++) tables += r.src[i].kind == CPH_REP_TABLE;
    if (!tables) {
        const cph_rep_kind k = r.src[0].kind;
        cph_report_free(&r);
        return cph_opt_error("show", NULL, "%s is %s, not a tuning table", argv[optind],
                             cph_rep_kind_name(k));
    }
    cph_rep_summary(stdout, &r);
    cph_report_free(&r);
    return CPH_EXIT_OK;
}
