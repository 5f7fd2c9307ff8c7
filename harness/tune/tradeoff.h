/* The error/time trade-off of one tuned entry, for tune's per-layer line. */
#ifndef CPH_TRADEOFF_H
#define CPH_TRADEOFF_H

#include <stddef.h>

#include "convpick/table.h"

/* When the fastest timed candidate of e (smallest recorded median) is also
 * the least accurate (largest recorded rel_err) and some candidate is more
 * accurate, writes one line into buf -- the candidates that no more accurate
 * one beats on time, most accurate first, as "rel_err time algo" -- and
 * returns 1.  Otherwise returns 0 and writes nothing. */
int cph_tradeoff_line(const cp_table_entry *e, char *buf, size_t cap);

#endif
