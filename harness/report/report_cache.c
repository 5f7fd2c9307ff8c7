/* The cache study in the report (report.h): the chart the cache command
 * draws (harness/cache/cache_chart.h), from the study's JSON. */
#include <jansson.h>
#include <string.h>

#include "harness/cache/cache_chart.h"
#include "harness/report/report.h"

void cph_rep_cache_html(cph_textbuf *b, const cph_rep_source *s) {
    cph_tb_printf(b, "<h2>Cache study: ");
    cph_tb_escaped(b, s->path);
    cph_tb_printf(b, "</h2><p class=\"note\">Does reading the kernel flipped change the cache "
                  "misses? Each bar: a true-convolution variant's simulated misses over those of "
                  "cross-correlation in the same family (1 = no change).</p>");
    json_t *study = json_loadb(s->cache_json, s->cache_len, 0, NULL);
    if (study) cph_cache_chart_svg(b, study); /* parsed once already when collected */
    json_decref(study);
}
