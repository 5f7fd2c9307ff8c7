/* The command line's options, shared by every command: the option table
 * entries, their parsers, their help text and the one error line.
 *
 * The convention (every command follows it):
 *  - an unknown option, a missing value or a bad value prints exactly one line
 *    on stderr naming the command and the option, and the command exits 2:
 *      convpick verify: unknown option '--frob'
 *      convpick tune: --threads: missing value
 *      convpick bench: --max-seconds: 'x' is not a number of seconds > 0
 *  - help is laid out the same everywhere: the usage line, what the command
 *    does, the shape selection block (commands that take one), then the
 *    command's options with their defaults, then the exit status.
 * The kernel orientation is --flip: "no" = cross-correlation (what a network
 * layer usually computes), "yes" = true convolution (the kernel read
 * flipped), "both". */
#ifndef CONVPICK_OPTIONS_H
#define CONVPICK_OPTIONS_H

#include <getopt.h>
#include <stdint.h>
#include <stdio.h>

#include "harness/measure/timing.h"
#include "harness/select/selection.h"

/* Codes of the shared options: >= 1000 so that they never clash with a
 * command's own codes (which stay below 1000). */
enum {
    CPH_OPT_SHAPE = 1000,
    CPH_OPT_SHAPES,
    CPH_OPT_SUITE,
    CPH_OPT_MODEL,
    CPH_OPT_BATCH,
    CPH_OPT_INPUT_SIZE,
    CPH_OPT_ALGO,
    CPH_OPT_FLIP,
    CPH_OPT_SEED,
    CPH_OPT_MAX_MEMORY,
    CPH_OPT_THREADS,
    CPH_OPT_TARGET_CI,
    CPH_OPT_MAX_SECONDS,
    CPH_OPT_MAX_SAMPLES,
    CPH_OPT_COLD,
    CPH_OPT_PLUGIN,
    CPH_OPT_ISOLATE
};

/* getopt_long entries: a command lists the groups it takes, then its own. */
#define CPH_OPTS_SELECTION                                                                  \
    {"shape", required_argument, NULL, CPH_OPT_SHAPE},                                      \
        {"shapes", required_argument, NULL, CPH_OPT_SHAPES},                                \
        {"suite", required_argument, NULL, CPH_OPT_SUITE},                                  \
        {"onnx", required_argument, NULL, CPH_OPT_MODEL},                                  \
        {"batch", required_argument, NULL, CPH_OPT_BATCH},                                  \
        {"input-size", required_argument, NULL, CPH_OPT_INPUT_SIZE},                        \
        {"algo", required_argument, NULL, CPH_OPT_ALGO},                                    \
        {"flip", required_argument, NULL, CPH_OPT_FLIP},                                    \
        {"seed", required_argument, NULL, CPH_OPT_SEED}, CPH_OPT_PLUGIN_ENTRY
#define CPH_OPTS_TIMING                                                                     \
    {"threads", required_argument, NULL, CPH_OPT_THREADS},                                  \
        {"target-ci", required_argument, NULL, CPH_OPT_TARGET_CI},                          \
        {"max-seconds", required_argument, NULL, CPH_OPT_MAX_SECONDS},                      \
        {"max-samples", required_argument, NULL, CPH_OPT_MAX_SAMPLES},                      \
        {"cold", no_argument, NULL, CPH_OPT_COLD}
/* --plugin FILE (repeatable): every command that selects algorithms takes it
 * (in CPH_OPTS_SELECTION; lookup, run and algos list it alone).  --isolate:
 * verify and tune run a plugin candidate's checking run in a child process. */
#define CPH_OPT_PLUGIN_ENTRY {"plugin", required_argument, NULL, CPH_OPT_PLUGIN}
#define CPH_OPT_ISOLATE_ENTRY {"isolate", no_argument, NULL, CPH_OPT_ISOLATE}
#define CPH_OPT_MAX_MEMORY_ENTRY {"max-memory", required_argument, NULL, CPH_OPT_MAX_MEMORY}
/* Last in every table: --help and the end marker. */
#define CPH_OPTS_HELP_END {"help", no_argument, NULL, 'h'}, {NULL, 0, NULL, 0}

/* The one error line for options: "convpick CMD: OPT: MESSAGE" (without
 * "OPT: " when opt is NULL).  Returns CPH_EXIT_USAGE. */
int cph_opt_error(const char *cmd, const char *opt, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));

/* getopt_long under the convention: returns the next option's code, -1 after
 * the last option, or CPH_OPT_BAD after printing the line for an unknown
 * or ambiguous option, a missing value or a value given to a flag.  "-h" is accepted
 * everywhere as --help.  When longopts has --plugin, the first call loads
 * every "--plugin FILE" / "--plugin=FILE" of argv before any option is read,
 * so --algo may name a plugin's algorithms wherever --plugin stands
 * (CPH_OPT_BAD after the line when one is refused). */
enum { CPH_OPT_BAD = -2 };
int cph_opt_next(const char *cmd, int argc, char **argv, const struct option *longopts);

/* "--NAME" of an option code in longopts (for messages). */
const char *cph_opt_name(const struct option *longopts, int code, char *buf, size_t cap);

/* Value parsers: 0 when *out was set, else CPH_EXIT_USAGE after the error line.
 * what completes "'ARG' is not ..." (e.g. "a number of seconds > 0").  Bounds
 * are inclusive; an open bound is given as the nearest value inside it. */
int cph_opt_double(const char *cmd, const char *opt, const char *arg, double lo, double hi,
                   const char *what, double *out);
int cph_opt_int(const char *cmd, const char *opt, const char *arg, long long lo, long long hi,
                const char *what, long long *out);
/* --flip: no, yes, or (allow_both) both.  Writes 1 or 2 flips. */
int cph_opt_flip(const char *cmd, const char *arg, int allow_both, cp_flip *flips, int *nflips);
/* --threads: the list's syntax is checked now; the counts are read once the
 * machine's core count is known (cph_opt_threads_read). */
int cph_opt_threads(const char *cmd, const char *arg);
/* Writes at most max counts, each in [1, cores]; returns how many, or < 1
 * after the error line. */
int cph_opt_threads_read(const char *cmd, const char *arg, int cores, int *out, int max);
/* --plugin: loads the plugin (cp_plugin_load) unless that path is loaded
 * already; 0, or CPH_EXIT_USAGE after the line naming the plugin and why. */
int cph_opt_plugin(const char *cmd, const char *path);
/* --max-memory: bytes (K, M, G) or a percentage of the machine's memory. */
int cph_opt_max_memory(const char *cmd, const char *arg, uint64_t *out);

/* Imports the --onnx files (after --batch and --input-size are known) and
 * applies --batch to every layer; 0, or CPH_EXIT_USAGE after the error line.
 * cph_opt_selection_finish calls it. */
int cph_opt_models(const char *cmd, cph_selection *sel);

/* Where the shared options of a command go; NULL for a group it does not take. */
typedef struct cph_opt_dest {
    const char *cmd;
    cph_selection *sel;      /* CPH_OPTS_SELECTION */
    cph_timing_opts *timing; /* CPH_OPTS_TIMING except --threads */
    const char **threads;    /* --threads: the list, its syntax checked */
    uint64_t *max_memory;    /* --max-memory */
    int *isolate;            /* --isolate */
} cph_opt_dest;

/* Any shared option (or CPH_OPT_BAD, already reported) into d: 0, or
 * CPH_EXIT_USAGE after the error line. */
int cph_opt_shared(const cph_opt_dest *d, int opt, const char *arg);
/* One of the CPH_OPTS_SELECTION options into sel. */
int cph_opt_selection(const char *cmd, cph_selection *sel, int opt, const char *arg);
/* Finishes a selection (defaults, at least one layer). */
int cph_opt_selection_finish(const char *cmd, cph_selection *sel, const cp_flip *default_flips,
                             int ndefault);
/* "unexpected argument 'X'" for the first operand left over, if any. */
int cph_opt_no_operands(const char *cmd, int argc, char **argv);

/* Help blocks.  default_flip: the text after "default: " for --flip, or NULL
 * when the command has no --flip. */
void cph_help_selection(FILE *f, const char *default_flip);
/* --threads and the timing options; max_seconds: the command's default. */
void cph_help_timing(FILE *f, double max_seconds);
void cph_help_max_memory(FILE *f);
/* --plugin (cph_help_selection prints it too) and --isolate. */
void cph_help_plugin(FILE *f);
void cph_help_isolate(FILE *f);
/* The last lines: "  -h, --help ..." and the exit status text. */
void cph_help_end(FILE *f, const char *exit_status);

#endif
