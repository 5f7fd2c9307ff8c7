/* One-line errors and warnings for the command line. */
#include "cli.h"

#include <stdarg.h>
#include <stdio.h>

void cph_err(const char *fmt, ...) {
    va_list ap;
    va_start(ap, fmt);
    fputs("convpick: error: ", stderr);
    vfprintf(stderr, fmt, ap);
    fputc('\n', stderr);
    va_end(ap);
}

void cph_warn(const char *fmt, ...) {
    va_list ap;
    va_start(ap, fmt);
    fputs("convpick: warning: ", stderr);
    vfprintf(stderr, fmt, ap);
    fputc('\n', stderr);
    va_end(ap);
}

int cph_usage_error(const char *cmd) {
    fprintf(stderr, "convpick %s: unknown option or missing value (see convpick %s --help)\n", cmd,
            cmd);
    return CPH_EXIT_USAGE;
}
