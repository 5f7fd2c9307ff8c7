/* The growing text buffer (textbuf.h). */
#include "harness/io/textbuf.h"

#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>

void cph_tb_printf(cph_textbuf *b, const char *fmt, ...) {
    if (b->failed) return;
    for (;;) {
        va_list ap;
        va_start(ap, fmt);
        const int n = vsnprintf(b->buf ? b->buf + b->len : NULL, b->buf ? b->cap - b->len : 0,
                                fmt, ap);
        va_end(ap);
        if (n < 0) {
            b->failed = 1;
            return;
        }
        if (b->buf && (size_t)n < b->cap - b->len) {
            b->len += (size_t)n;
            return;
        }
        const size_t nc = (b->cap + (size_t)n + 1) * 2;
        char *p = realloc(b->buf, nc);
        if (!p) {
            b->failed = 1;
            return;
        }
        b->buf = p;
        b->cap = nc;
    }
}

void cph_tb_escaped(cph_textbuf *b, const char *s) {
    for (; s && *s; s++) {
        switch (*s) {
        case '&': cph_tb_printf(b, "&amp;"); break;
        case '<': cph_tb_printf(b, "&lt;"); break;
        case '>': cph_tb_printf(b, "&gt;"); break;
        case '"': cph_tb_printf(b, "&quot;"); break;
        case '\'': cph_tb_printf(b, "&#39;"); break;
        default: cph_tb_printf(b, "%c", *s);
        }
    }
}

void cph_tb_free(cph_textbuf *b) {
    free(b->buf);
    b->buf = NULL;
    b->len = b->cap = 0;
}
