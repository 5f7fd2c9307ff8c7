/* Reports of the cache study: a text table, a JSON document and an SVG bar
 * chart of each flipped variant's misses as a ratio to cross-correlation, per
 * level (drawn from the JSON by cache_chart.h).
 *
 * JSON (format "convpick-cache-study", version 2): machine (the device
 * object, docs/table-format.md), geometry (levels with name, size, ways, line
 * and where they came from), hardware_counters {available, reason},
 * settings, and layers[] each with its shape (the shape object), the sampled
 * output channels and variants[] {id, algo, flipped, kind, family, params,
 * check {rel_err, tolerance, pass, sim_rel_err, diff_vs_preflip}, time
 * {stats (as a bench measurement's), rounds} or null, counters {...}
 * or null, sim {refs, loads, stores, levels[] {name, accesses, misses,
 * read_misses, misses_per_output, ratio_to_xcorr}} or null with
 * sim_unavailable giving the reason}. */
#ifndef CONVPICK_CACHE_REPORT_H
#define CONVPICK_CACHE_REPORT_H

#include <stdio.h>

#include <jansson.h>

#include "harness/cache/cache_study.h"

typedef struct cph_cache_report {
    const cph_study_opts *opts;
    const char *geom_source;      /* "hwloc" or "--cache-geometry" */
    const char *counters_reason;  /* NULL when counters are available */
    const cph_layer_result *layers;
    size_t nlayers;
    json_t *machine;              /* borrowed, may be NULL */
    double load[2];               /* /proc/loadavg 1-minute at start and end (-1: unknown) */
} cph_cache_report;

/* The header lines (caches, counters, settings). */
void cph_cache_report_header(FILE *f, const cph_cache_report *r);
/* One layer's table. */
void cph_cache_report_layer(FILE *f, const cph_cache_report *r, const cph_layer_result *L);
/* The whole study as JSON (new reference). */
json_t *cph_cache_report_json(const cph_cache_report *r);
/* The SVG text (malloc'd, NUL-terminated). */
char *cph_cache_report_svg(const cph_cache_report *r);

#endif
