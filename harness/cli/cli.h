/* The command line's shared conventions.
 *
 * Each subcommand is `int cph_cmd_NAME(int argc, char **argv)` in its own file
 * harness/cli/cmd_NAME.c, listed once in main.c.  argv[0] is the subcommand
 * name.  It reads like a small main: parse the options (options.h: optind is
 * reset by main), do the work inside one call, report any error once (one
 * line on stderr), free what it allocated, and return one of the exit codes
 * below. */
#ifndef CONVPICK_CLI_H
#define CONVPICK_CLI_H

#include <stdarg.h>

enum {
    CPH_EXIT_OK = 0,    /* success */
    CPH_EXIT_FAIL = 1,  /* the work ran and found a failure (a FAIL in verify, a regression) */
    CPH_EXIT_USAGE = 2  /* bad options, bad values or bad input files */
};

/* "convpick: error: <message>\n" on stderr. */
void cph_err(const char *fmt, ...) __attribute__((format(printf, 1, 2)));
/* "convpick: warning: <message>\n" on stderr. */
void cph_warn(const char *fmt, ...) __attribute__((format(printf, 1, 2)));

/* prefix, then the message with control characters and invalid UTF-8
 * escaped as \xHH, then a newline, on stderr (the one writer of error lines;
 * option errors go through cph_opt_error in options.h). */
void cph_vreport(const char *prefix, const char *fmt, va_list ap);

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
int cph_cmd_model(int argc, char **argv);
int cph_cmd_show(int argc, char **argv);
int cph_cmd_report(int argc, char **argv);
int cph_cmd_gather(int argc, char **argv);
int cph_cmd_pack(int argc, char **argv);

#endif
