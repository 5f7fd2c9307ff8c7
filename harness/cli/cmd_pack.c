/* convpick pack: several tuning tables -> one bundle file, the single-file
 * form of a bundle (harness/io/bundle_pack.h does the work). */
#include <stdio.h>

#include "harness/cli/cli.h"
#include "harness/cli/options.h"
#include "harness/io/bundle_pack.h"

static void usage(FILE *f) {
    fputs("usage: convpick pack TABLE|DIR... --out FILE [OPTIONS]\n\n"
          "Packs tuning tables (one per device class, full or lean) into one bundle file\n"
          "that a deploying program ships: cp_bundle_load(FILE) and 'convpick lookup FILE'\n"
          "pick the table for the running machine from it, as from a bundle directory.\n"
          "A DIR stands for every table in it (*.json, not *.evidence.json).  Each table is\n"
          "checked as the loader reads it and copied byte for byte, in name order: the\n"
          "bytes written depend only on the set of tables.  Two tables of one name or of\n"
          "one device fingerprint are refused.  FILE is written atomically (the old FILE\n"
          "stays whole on any error).  Format: docs/table-format.md, \"Bundle files\".\n\n"
          "options:\n"
          "  --out FILE          the bundle file to write (required; replaced if it exists)\n"
          "  --quiet             no summary on stderr (default: summary)\n",
          f);
    cph_help_end(f, "0 written, 2 bad usage or input (nothing written)");
}

int cph_cmd_pack(int argc, char **argv) {
    enum { OPT_OUT = 1, OPT_QUIET };
    static const struct option longopts[] = {
        {"out", required_argument, NULL, OPT_OUT},
        {"quiet", no_argument, NULL, OPT_QUIET},
        CPH_OPTS_HELP_END,
    };
    const char *out = NULL;
    int opt, quiet = 0;
    while ((opt = cph_opt_next("pack", argc, argv, longopts)) != -1) {
        switch (opt) {
        case OPT_OUT: out = optarg; break;
        case OPT_QUIET: quiet = 1; break;
        case 'h': usage(stdout); return CPH_EXIT_OK;
        default: return CPH_EXIT_USAGE;
        }
    }
    if (!out) return cph_opt_error("pack", "--out", "required (see convpick pack --help)");
    if (optind >= argc)
        return cph_opt_error("pack", NULL,
                             "expected at least one TABLE or DIR (see convpick pack --help)");
    char msg[1024];
    size_t n = 0;
    if (cph_bundle_pack((const char *const *)argv + optind, (size_t)(argc - optind), out, &n, msg,
                        sizeof msg) != CP_OK) {
        cph_err("pack: %s", msg);
        return CPH_EXIT_USAGE;
    }
    if (!quiet) fprintf(stderr, "pack: %zu table(s) -> %s\n", n, out);
    return CPH_EXIT_OK;
}
