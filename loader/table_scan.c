/* Finding a table's "entries" array in the raw text, for the loader's fast
 * path (table_load.c). */
#include <stdlib.h>
#include <string.h>

#include "loader/table_impl.h"

/* --- the fast path --------------------------------------------------------
 * A large table is mostly its entries.  Parsed as one tree, jansson builds
 * (and later frees) millions of small objects spread over the whole heap;
 * parsed one entry at a time, each tree is small and freed at once, which
 * measured ~40 % less CPU time on a 100 000-entry table.  A byte scanner finds
 * the top-level "entries" array and counts its elements; the rest of the
 * document is parsed with the array emptied, and each element on its own
 * (JSON_DISABLE_EOF_CHECK gives where it ended).  Anything unexpected, and any
 * error at all, falls back to load_whole, so that messages and results are
 * exactly the reference path's (fuzz_table_load checks both agree). */

/* Index just past the string starting at d[i] == '"', or 0 if unterminated. */
static size_t skip_string(const char *d, size_t len, size_t i) {
    for (i++; i < len; i++) {
        if (d[i] == '\\') {
            i++;
        } else if (d[i] == '"') {
            return i + 1;
        }
    }
    return 0;
}

int cpl_find_entries(const char *d, size_t len, size_t *open, size_t *close, size_t *count) {
    return cpl_scan_entries(d, len, open, close, count);
}

int cpl_entries_last(const char *d, size_t len, size_t open, size_t *close) {
    size_t k = len;
    while (k > open && cpl_is_ws(d[k - 1])) k--;
    if (k <= open || d[k - 1] != '}') return 0;
    k--;
    while (k > open && cpl_is_ws(d[k - 1])) k--;
    if (k <= open + 1 || d[k - 1] != ']') return 0;
    *close = k - 1;
    return 1;
}

int cpl_scan_entries(const char *d, size_t len, size_t *open, size_t *close, size_t *count) {
    size_t i = 0;
    while (i < len && cpl_is_ws(d[i])) i++;
    if (i >= len || d[i] != '{') return 0;
    int depth = 0, expect_key = 0;
    for (; i < len; i++) {
        const char ch = d[i];
        if (ch == '"') {
            size_t end = skip_string(d, len, i);
            if (!end) return 0;
            if (depth == 1 && expect_key) {
                expect_key = 0;
                const int is_entries = end - i == 9 && memcmp(d + i + 1, "entries", 7) == 0;
                size_t j = end;
                while (j < len && cpl_is_ws(d[j])) j++;
                if (j >= len || d[j] != ':') return 0;
                j++;
                while (j < len && cpl_is_ws(d[j])) j++;
                if (is_entries) {
                    if (j >= len || d[j] != '[') return 0;
                    *open = j;
                    if (!close) return 1;
                    /* Counted at one table lookup per byte: only the bytes that
                     * matter to the nesting stop the inner loop (this pass reads
                     * the whole table before any entry is decoded). */
                    static const unsigned char stop[256] = {
                        ['"'] = 1, ['['] = 1, [']'] = 1, ['{'] = 1, ['}'] = 1, [','] = 1};
                    size_t first = j + 1;
                    while (first < len && cpl_is_ws(d[first])) first++;
                    const int any = first < len && d[first] != ']';
                    size_t n = 0;
                    int ad = 0;
                    for (size_t k = j; k < len; k++) {
                        while (k < len && !stop[(unsigned char)d[k]]) k++;
                        if (k >= len) break;
                        const char a = d[k];
                        if (a == '"') {
                            size_t e = skip_string(d, len, k);
                            if (!e) return 0;
                            k = e - 1;
                        } else if (a == '[' || a == '{') {
                            ad++;
                        } else if (a == ']' || a == '}') {
                            ad--;
                            if (ad == 0) {
                                if (a != ']') return 0;
                                *close = k;
                                *count = any ? n + 1 : 0;
                                return 1;
                            }
                        } else if (ad == 1) { /* ',' */
                            n++;
                        }
                    }
                    return 0;
                }
            }
            i = end - 1;
            continue;
        }
        if (ch == '{' || ch == '[') {
            depth++;
            if (depth == 1) expect_key = 1;
        } else if (ch == '}' || ch == ']') {
            depth--;
            if (depth <= 0) return 0;
        } else if (ch == ',' && depth == 1) {
            expect_key = 1;
        }
    }
    return 0;
}


char *cpl_header_text(const char *d, size_t len, size_t open, size_t close, size_t *hlen) {
    *hlen = open + 2 + (len - close - 1);
    char *head = malloc(*hlen);
    if (!head) return NULL;
    memcpy(head, d, open);
    head[open] = '[';
    head[open + 1] = ']';
    memcpy(head + open + 2, d + close + 1, len - close - 1);
    return head;
}

json_t *cpl_parse_header(const char *d, size_t len) {
    size_t open, close, count, hlen;
    if (!cpl_find_entries(d, len, &open, &close, &count)) return NULL;
    char *head = cpl_header_text(d, len, open, close, &hlen);
    json_t *root = head ? json_loadb(head, hlen, JSON_REJECT_DUPLICATES, NULL) : NULL;
    free(head);
    return root;
}
