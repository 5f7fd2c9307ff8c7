/* The cache study's chart, drawn from its JSON document (cache_report.h
 * describes it) so that `convpick cache --svg` and `convpick report` draw the
 * same picture: one panel per cache level, each layer a group of bars, each
 * bar a flipped variant's simulated misses as a ratio to cross-correlation
 * (the same family read forwards), on one logarithmic axis shared by every
 * panel; the legend lists the bars in their order; variants not simulated
 * are named with the reason. */
#ifndef CONVPICK_CACHE_CHART_H
#define CONVPICK_CACHE_CHART_H

#include <jansson.h>

#include "harness/io/textbuf.h"

/* Appends one <svg> element (no XML declaration) to b. */
void cph_cache_chart_svg(cph_textbuf *b, const json_t *study);

#endif
