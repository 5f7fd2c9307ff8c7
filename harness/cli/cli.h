/* The command line's shared conventions.
 *
 * Each subcommand is `int cph_cmd_NAME(int argc, char **argv)` in its own file
 * harness/cmd_NAME.c, listed once in main.c.  argv[0] is the subcommand name.
 * It parses its options with getopt_long (optind reset by main), does all its
 * work, frees what it allocated, and returns one of the exit codes below.
 * Errors are reported once, as one line on stderr, through cph_err(). */
#ifndef CONVPICK_CLI_H
#define CONVPICK_CLI_H

enum {
    CPH_EXIT_OK = 0,    /* success */
    CPH_EXIT_FAIL = 1,  /* the work ran and found a failure (a FAIL in verify, a regression) */
    CPH_EXIT_USAGE = 2  /* bad options, bad values or bad input files */
};

/* "convpick: error: <message>\n" on stderr. */
void cph_err(const char *fmt, ...) __attribute__((format(printf, 1, 2)));
/* "convpick: warning: <message>\n" on stderr. */
void cph_warn(const char *fmt, ...) __attribute__((format(printf, 1, 2)));

/* The error getopt_long's '?' / ':' cases print, naming the command: prints
 * "convpick CMD: unknown option or missing value (see convpick CMD --help)". */
int cph_usage_error(const char *cmd);

/* Subcommands. */
int cph_cmd_verify(int argc, char **argv);
int cph_cmd_run(int argc, char **argv);
int cph_cmd_probe(int argc, char **argv);
int cph_cmd_bench(int argc, char **argv);
int cph_cmd_tune(int argc, char **argv);
int cph_cmd_lookup(int argc, char **argv);
int cph_cmd_algos(int argc, char **argv);
int cph_cmd_cache(int argc, char **argv);
int cph_cmd_diff(int argc, char **argv);

#endif
