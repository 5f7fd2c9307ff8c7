/* convpick algos: what the registry holds, straight from each algorithm's
 * descriptor, so the listing can never disagree with what verify and tune use. */
#include <stdio.h>
#include <string.h>

#include "harness/cli/cli.h"
#include "harness/cli/options.h"
#include "convpick/convpick.h"

static void usage(FILE *f) {
    fputs("usage: convpick algos [OPTIONS]\n\n"
          "Lists every registered algorithm: its summary, the tolerance verify applies\n"
          "(error relative to sum|x||w| + |bias|, see convpick verify), and its tunable\n"
          "parameters with their ranges, in the order the algorithm declares them, and\n"
          "its origin: built-in, or the plugin it was loaded from (--plugin).\n\n"
          "options:\n",
          f);
    cph_help_plugin(f);
    cph_help_end(f, "0 listed, 2 bad usage");
}

/* The listing, straight from the registry. */
static void list(void) {
    int name_w = 4;
    for (size_t i = 0; i < cp_algo_count(); i++) {
        int len = (int)strlen(cp_algo_at(i)->name);
        if (len > name_w) name_w = len;
    }
    printf("%-*s  %-9s  %s\n", name_w, "algo", "tolerance", "summary");
    for (size_t i = 0; i < cp_algo_count(); i++) {
        const cp_algo *a = cp_algo_at(i);
        printf("%-*s  %-9.1e  %s\n", name_w, a->name, a->tolerance, a->summary);
        const cp_plugin *pl = cp_algo_plugin(a);
        if (pl)
            printf("%-*s  origin: plugin %s (%s, hash %s)\n", name_w, "", cp_plugin_name(pl),
                   cp_plugin_path(pl), cp_plugin_hash(pl));
        else
            printf("%-*s  origin: built-in\n", name_w, "");
        if (a->nparams == 0) {
            printf("%-*s  parameters: none\n", name_w, "");
            continue;
        }
        int pw = 4;
        for (int j = 0; j < a->nparams; j++) {
            int len = (int)strlen(a->params[j].name);
            if (len > pw) pw = len;
        }
        printf("%-*s  parameters:\n", name_w, "");
        for (int j = 0; j < a->nparams; j++) {
            const cp_param_desc *d = &a->params[j];
            char range[64];
            snprintf(range, sizeof range, "[%lld, %lld]", (long long)d->min, (long long)d->max);
            printf("%-*s    %-*s  %-16s  %s\n", name_w, "", pw, d->name, range,
                   d->doc ? d->doc : "");
        }
    }
}

int cph_cmd_algos(int argc, char **argv) {
    static const struct option longopts[] = {CPH_OPT_PLUGIN_ENTRY, CPH_OPTS_HELP_END};
    int opt;
    while ((opt = cph_opt_next("algos", argc, argv, longopts)) != -1) {
        if (opt == CPH_OPT_PLUGIN) {
            if (cph_opt_plugin("algos", optarg)) return CPH_EXIT_USAGE;
            continue;
        }
        if (opt != 'h') return CPH_EXIT_USAGE;
        usage(stdout);
        return CPH_EXIT_OK;
    }
    if (cph_opt_no_operands("algos", argc, argv)) return CPH_EXIT_USAGE;
    list();
    return CPH_EXIT_OK;
}
