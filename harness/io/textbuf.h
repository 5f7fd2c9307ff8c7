/* A growing text buffer for documents built in memory before one atomic
 * write (the HTML report, the cache study's SVG): printf-style appends, and
 * appends escaped for XML/HTML text and attributes.  An allocation failure is
 * remembered and reported once, by the caller, from `failed`. */
#ifndef CONVPICK_TEXTBUF_H
#define CONVPICK_TEXTBUF_H

#include <stddef.h>

typedef struct cph_textbuf {
    char *buf; /* NUL-terminated once anything was appended */
    size_t len, cap;
    int failed;
} cph_textbuf;

void cph_tb_printf(cph_textbuf *b, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
/* s with & < > " ' escaped (valid in XML text and in quoted attributes). */
void cph_tb_escaped(cph_textbuf *b, const char *s);
void cph_tb_free(cph_textbuf *b);

#endif
