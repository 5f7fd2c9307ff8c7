/* Progress reporting (progress.h). */
#define _POSIX_C_SOURCE 200809L
#include "harness/measure/progress.h"

#include <stdarg.h>
#include <string.h>
#include <unistd.h>

#include "harness/measure/timing.h"

void cph_progress_init(cph_progress *p, FILE *out, int quiet) {
    p->out = out;
    p->tty = isatty(fileno(out));
    p->quiet = quiet;
    p->drawn = 0;
    p->start = cph_now();
}

void cph_format_duration(double seconds, char *buf, size_t cap) {
    if (seconds < 0) seconds = 0;
    long t = (long)(seconds + 0.5);
    if (t >= 3600)
        snprintf(buf, cap, "%ld:%02ld:%02ld", t / 3600, (t / 60) % 60, t % 60);
    else
        snprintf(buf, cap, "%ld:%02ld", t / 60, t % 60);
}

void cph_progress_line(cph_progress *p, int i, int n, const char *name, const char *text,
                       double left_seconds) {
    if (p->quiet) return;
    char el[32], left[48] = "";
    cph_format_duration(cph_now() - p->start, el, sizeof el);
    if (left_seconds >= 0) {
        char l[32];
        cph_format_duration(left_seconds, l, sizeof l);
        snprintf(left, sizeof left, "  left ~%s", l);
    }
    if (p->tty) {
        char line[512];
        snprintf(line, sizeof line, "[layer %d/%d] %s: %s  elapsed %s%s", i, n, name, text, el,
                 left);
        /* Clip to a typical terminal width so the redraw never wraps. */
        if (strlen(line) > 118) memcpy(line + 115, "...", 4);
        fprintf(p->out, "\r\033[K%s", line);
        p->drawn = 1;
    } else {
        fprintf(p->out, "[layer %d/%d] %s: %s  elapsed %s%s\n", i, n, name, text, el, left);
    }
    fflush(p->out);
}

void cph_progress_note(cph_progress *p, const char *fmt, ...) {
    if (p->quiet) return;
    if (p->drawn) {
        fputs("\r\033[K", p->out);
        p->drawn = 0;
    }
    va_list ap;
    va_start(ap, fmt);
    vfprintf(p->out, fmt, ap);
    va_end(ap);
    fputc('\n', p->out);
    fflush(p->out);
}

void cph_progress_done(cph_progress *p) {
    if (p->drawn && !p->quiet) {
        fputs("\r\033[K", p->out);
        fflush(p->out);
    }
    p->drawn = 0;
}
