/* convpick: one main, one table of subcommands.  Each subcommand does its work
 * inside one call and returns an exit code (harness/cli/cli.h). */
#include <getopt.h>
#include <stdio.h>
#include <string.h>

#include "harness/cli/cli.h"
#include "convpick/convpick.h"

typedef struct {
    const char *name;
    int (*fn)(int argc, char **argv);
    const char *summary;
} command;

static const command commands[] = {
    {"verify", cph_cmd_verify, "check every algorithm against the fp64 oracle on layer shapes"},
    {"run", cph_cmd_run, "compute one layer from raw float32 files with a chosen algorithm"},
    {"algos", cph_cmd_algos, "list the algorithms, their parameters and tolerances"},
    {"probe", cph_cmd_probe, "describe this machine and measure its roofs"},
    {"bench", cph_cmd_bench, "time algorithms on layer shapes without choosing"},
    {"tune", cph_cmd_tune, "time every applicable algorithm and write a tuning table"},
    {"lookup", cph_cmd_lookup, "ask a tuning table which algorithm to run for a shape"},
    {"model", cph_cmd_model, "write the Conv layers of an ONNX model as a shape file"},
    {"cache", cph_cmd_cache, "cache cost of true convolution vs cross-correlation (simulated, counted)"},
    {"gather", cph_cmd_gather, "combine the tables of a sharded tune into one table"},
    {"pack", cph_cmd_pack, "pack tables of several machines into one bundle file"},
    {"diff", cph_cmd_diff, "compare two bench results or tables: faster, slower, unchanged"},
    {"show", cph_cmd_show, "print a tuning table: every entry's choice, margin, and the totals"},
    {"report", cph_cmd_report, "write one HTML page of tables, bench results, roofs, cache study"},
};

static void usage(FILE *f) {
    fprintf(f, "usage: convpick COMMAND [OPTIONS]\n\n"
               "convpick picks, per convolution layer and machine, the conv2d algorithm to run.\n\n"
               "commands:\n");
    for (size_t i = 0; i < sizeof commands / sizeof commands[0]; i++)
        fprintf(f, "  %-8s %s\n", commands[i].name, commands[i].summary);
    fprintf(f, "\n'convpick COMMAND --help' describes a command's options.\n"
               "'convpick --version' prints the version.\n");
}

int main(int argc, char **argv) {
    if (argc < 2) {
        usage(stderr);
        return CPH_EXIT_USAGE;
    }
    if (strcmp(argv[1], "--help") == 0 || strcmp(argv[1], "-h") == 0 ||
        strcmp(argv[1], "help") == 0) {
        usage(stdout);
        return CPH_EXIT_OK;
    }
    if (strcmp(argv[1], "--version") == 0) {
        printf("convpick %s (%s)\n", CONVPICK_VERSION, CP_GIT_REV);
        return CPH_EXIT_OK;
    }
    for (size_t i = 0; i < sizeof commands / sizeof commands[0]; i++)
        if (strcmp(argv[1], commands[i].name) == 0) {
            optind = 1;
            return commands[i].fn(argc - 1, argv + 1);
        }
    cph_err("unknown command '%s' (see convpick --help)", argv[1]);
    return CPH_EXIT_USAGE;
}
