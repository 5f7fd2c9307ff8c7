/* JSON for measurements, and the atomic file write every report uses
 * (structure documented in report_json.h). */
#define _POSIX_C_SOURCE 200809L
#include "harness/io/report_json.h"

#include "algos/core/cpa.h"
#include "harness/io/rawfile.h"

#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static json_t *uint_json(size_t v) { return json_integer((json_int_t)v); }

json_t *cph_json_stats(const cph_stats *s) {
    return json_pack("{s:o, s:o, s:o, s:o, s:o, s:o, s:b, s:o, s:o, s:o, s:o, s:o, s:o, s:o, "
                     "s:o, s:o, s:b}",
                     "n", uint_json(s->n), "median", cph_json_number(s->median), "ci_lo",
                     cph_json_number(s->ci_lo), "ci_hi", cph_json_number(s->ci_hi), "confidence",
                     cph_json_number(s->confidence), "coverage", cph_json_number(s->coverage),
                     "ci_exact", s->ci_exact, "ci_rank_lo", uint_json(s->ci_rank_lo),
                     "ci_rank_hi", uint_json(s->ci_rank_hi), "rel_ci", cph_json_number(s->rel_ci),
                     "mean", cph_json_number(s->mean), "stddev", cph_json_number(s->stddev), "min",
                     cph_json_number(s->min), "max", cph_json_number(s->max), "q1",
                     cph_json_number(s->q1), "q3", cph_json_number(s->q3), "noisy", s->noisy);
}

json_t *cph_json_measurement(const cph_measurement *m) {
    json_t *samples = json_array();
    if (!samples) return NULL;
    for (size_t i = 0; i < m->n; i++)
        if (json_array_append_new(samples, cph_json_number(m->samples[i]))) {
            json_decref(samples);
            return NULL;
        }
    json_t *o = json_pack(
        "{s:o, s:s, s:o, s:s, s:b, s:i, s:o, s:o, s:o, s:o, s:o, s:o}", "settings",
        cph_json_timing_opts(&m->opts), "clock", cph_clock_name(), "clock_resolution_s",
        cph_json_number(cph_clock_resolution()), "stop", cph_stop_name(m->stop), "converged",
        m->converged, "warmup_runs", m->warmup_runs, "flushes", uint_json(m->flushes), "checks",
        uint_json(m->checks), "wall_seconds", cph_json_number(m->wall_seconds), "timed_seconds",
        cph_json_number(m->timed_seconds), "stats", cph_json_stats(&m->stats), "samples", samples);
    /* samples another task preempted, and whether stats leave them out */
    if (o) {
        json_object_set_new(o, "disturbed", uint_json(m->disturbed));
        json_object_set_new(o, "stats_of", json_string(m->stats_of_undisturbed ? "undisturbed" : "all"));
    }
    return o;
}

json_t *cph_json_trials(const double *trials, size_t n, const cph_stats *s,
                        const cph_timing_opts *per_trial, size_t rounds, int placed, double wall) {
    json_t *samples = json_array(), *settings = cph_json_timing_opts(per_trial);
    if (!samples || !settings) {
        json_decref(samples);
        json_decref(settings);
        return NULL;
    }
    for (size_t i = 0; i < n; i++)
        if (json_array_append_new(samples, cph_json_number(trials[i]))) {
            json_decref(samples);
            json_decref(settings);
            return NULL;
        }
    json_object_set_new(settings, "samples_are", json_string("trial_medians"));
    json_object_set_new(settings, "rounds", uint_json(rounds));
    json_object_set_new(settings, "placed", json_boolean(placed));
    return json_pack("{s:o, s:s, s:o, s:s, s:b, s:i, s:i, s:i, s:o, s:n, s:o, s:o}", "settings",
                     settings, "clock", cph_clock_name(), "clock_resolution_s",
                     cph_json_number(cph_clock_resolution()), "stop", "rounds", "converged", 0,
                     "warmup_runs", per_trial->warmup, "flushes", 0, "checks", 0, "wall_seconds",
                     cph_json_number(wall), "timed_seconds", "stats", cph_json_stats(s),
                     "samples", samples);
}

/* ---- atomic write ---------------------------------------------------------- */

cp_status cph_json_write_atomic(const json_t *root, const char *path, char *msg, size_t cap) {
    char *text = json_dumps(root, JSON_INDENT(1) | JSON_REAL_PRECISION(17));
    if (!text) return cpa_fail(CP_ENOMEM, msg, cap, "%s: out of memory for the JSON text", path);
    const size_t len = strlen(text);
    char *line = realloc(text, len + 2);
    if (!line) {
        free(text);
        return cpa_fail(CP_ENOMEM, msg, cap, "%s: out of memory for the JSON text", path);
    }
    line[len] = '\n';
    line[len + 1] = '\0';
    cp_status st = cph_write_atomic(path, line, len + 1, msg, cap);
    free(line);
    return st;
}
