/* Progress lines on stderr: redrawn in place on a terminal, plain lines
 * otherwise (logs, CI), nothing with quiet. */
#ifndef CONVPICK_PROGRESS_H
#define CONVPICK_PROGRESS_H

#include <stdio.h>

typedef struct cph_progress {
    FILE *out;
    int tty;       /* redraw with \r */
    int quiet;
    int drawn;     /* a partial line is on screen */
    double start;  /* cph_now() at the start of the run */
} cph_progress;

void cph_progress_init(cph_progress *p, FILE *out, int quiet);
/* One status line: "[layer i/n] name: text  elapsed 1:23  left ~4:56".
 * left_seconds < 0 prints no estimate. */
void cph_progress_line(cph_progress *p, int i, int n, const char *name, const char *text,
                       double left_seconds);
/* A line that stays (a finished layer, a warning). */
void cph_progress_note(cph_progress *p, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
void cph_progress_done(cph_progress *p);

/* "1:23" or "1:02:03". */
void cph_format_duration(double seconds, char *buf, size_t cap);

#endif
