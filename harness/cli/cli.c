/* One-line errors and warnings for the command line.
 *
 * Messages quote what the user gave (specs, file names, file contents), which
 * may hold any bytes: control characters and bytes that are not valid UTF-8
 * are printed as \xHH, so that a message stays one readable line and cannot
 * drive the terminal. */
#include "harness/cli/cli.h"

#include <stdarg.h>
#include <stdio.h>

/* Length of the valid UTF-8 sequence at s (1..4), or 0 when it is not one
 * (RFC 3629: no overlong forms, no surrogates, nothing past U+10FFFF). */
static int utf8_len(const unsigned char *s) {
    const unsigned char c = s[0];
    if (c < 0x80) return 1;
    int n;
    unsigned lo = 0x80, hi = 0xBF;
    if (c >= 0xC2 && c <= 0xDF) n = 2;
    else if (c == 0xE0) n = 3, lo = 0xA0;
    else if (c >= 0xE1 && c <= 0xEC) n = 3;
    else if (c == 0xED) n = 3, hi = 0x9F;
    else if (c >= 0xEE && c <= 0xEF) n = 3;
    else if (c == 0xF0) n = 4, lo = 0x90;
    else if (c >= 0xF1 && c <= 0xF3) n = 4;
    else if (c == 0xF4) n = 4, hi = 0x8F;
    else return 0;
    if (s[1] < lo || s[1] > hi) return 0;
    for (int i = 2; i < n; i++)
        if (s[i] < 0x80 || s[i] > 0xBF) return 0;
    return n;
}

static void put_escaped(const char *text) {
    const unsigned char *s = (const unsigned char *)text;
    while (*s) {
        const int n = utf8_len(s);
        if (n == 0 || (n == 1 && (*s < 0x20 || *s == 0x7F) && *s != '\t')) {
            fprintf(stderr, "\\x%02X", *s);
            s++;
        } else {
            fwrite(s, 1, (size_t)n, stderr);
            s += n;
        }
    }
}

void cph_vreport(const char *prefix, const char *fmt, va_list ap) {
    char buf[2048];
    vsnprintf(buf, sizeof buf, fmt, ap);
    fputs(prefix, stderr);
    put_escaped(buf);
    fputc('\n', stderr);
}

void cph_err(const char *fmt, ...) {
    va_list ap;
    va_start(ap, fmt);
    cph_vreport("convpick: error: ", fmt, ap);
    va_end(ap);
}

void cph_warn(const char *fmt, ...) {
    va_list ap;
    va_start(ap, fmt);
    cph_vreport("convpick: warning: ", fmt, ap);
    va_end(ap);
}
