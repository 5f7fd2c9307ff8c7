/* Text, JSON and SVG reports of the cache study (see cache_report.h). */
#include "harness/cache/cache_report.h"
#include "harness/cache/cache_chart.h"
#include "harness/io/textbuf.h"
#include "harness/select/shape_spec.h"
#include "harness/io/report_json.h"

#include <math.h>
#include <stdarg.h>
#include <stdlib.h>
#include <string.h>

static const char *kind_name(cph_flip_kind k) {
    return k == CPH_FLIP_KIND_XCORR ? "xcorr" : k == CPH_FLIP_KIND_FLIPIDX ? "flipidx" : "preflip";
}

static double per_out(const cph_layer_result *L, uint64_t v) {
    return L->outputs_sim ? (double)v / (double)L->outputs_sim : 0.0;
}

/* Misses of level i relative to the xcorr variant of the same family, or
 * NAN when there is none (or it had no misses). */
static double ratio(const cph_layer_result *L, const cph_variant_result *v, int i) {
    const cph_variant_result *b = cph_study_baseline(L, v);
    if (!b || !b->simulated || !v->simulated || b->lv[i].misses == 0) return NAN;
    return (double)v->lv[i].misses / (double)b->lv[i].misses;
}

void cph_cache_report_header(FILE *f, const cph_cache_report *r) {
    const cph_study_opts *o = r->opts;
    char g[256];
    cph_geom_format(o->geom, o->nlevels, g, sizeof g);
    fprintf(f, "simulated caches (%s): %s (LRU, write-allocate, no prefetch)\n", r->geom_source, g);
    if (r->load[0] >= 0)
        fprintf(f, "load average (1 min) at start: %.2f on %s\n", r->load[0],
                "the machine's logical CPUs (other work there perturbs the times)");
    if (r->counters_reason)
        fprintf(f, "hardware counters: not available here (%s)\n", r->counters_reason);
    else
        fprintf(f, "hardware counters: perf_event_open, user space, this thread\n");
    fprintf(f, "one thread; times are warm-cache medians (timed in %d rounds interleaved\n"
               "within each family, %.0f ms per variant in all);\n"
               "simulation: traced build of the same source, cold caches, first K' output channels\n"
               "(budget %llu accesses per run); misses per output = misses / (N*K'*P*Q)\n",
            o->rounds, 1e3 * o->time_cap, (unsigned long long)o->max_accesses);
}

void cph_cache_report_layer(FILE *f, const cph_cache_report *r, const cph_layer_result *L) {
    const cph_study_opts *o = r->opts;
    char spec[200];
    cph_shape_format_short(&L->layer->shape, spec, sizeof spec);
    fprintf(f, "\nlayer %s  %s\n", L->layer->name, spec);
    fprintf(f, "  simulated: first %lld of %lld output channels (%llu outputs)\n",
            (long long)L->k_sim, (long long)L->layer->shape.k,
            (unsigned long long)L->outputs_sim);
    fprintf(f, "  %-21s %-8s %-11s", "variant", "check", "time ms");
    fprintf(f, " %11s", "refs/out");
    for (int i = 0; i < o->nlevels; i++) fprintf(f, " %7s/out", o->geom[i].name);
    for (int i = 0; i < o->nlevels; i++) fprintf(f, " %6s/x", o->geom[i].name);
    fprintf(f, "\n");
    for (size_t j = 0; j < L->nres; j++) {
        const cph_variant_result *v = &L->res[j];
        char chk[16], tm[40];
        if (!v->supported)
            snprintf(chk, sizeof chk, "n/a");
        else
            snprintf(chk, sizeof chk, "%s", v->pass ? "ok" : "FAIL");
        /* A failed variant is not measured: its cells stay empty. */
        if (v->timed)
            snprintf(tm, sizeof tm, "%.3f", v->time.median * 1e3);
        else
            snprintf(tm, sizeof tm, "-");
        fprintf(f, "  %-21s %-8s %-11s", v->v->id, chk, tm);
        if (v->simulated) {
            fprintf(f, " %11.2f", per_out(L, v->refs));
            for (int i = 0; i < o->nlevels; i++) fprintf(f, " %11.4f", per_out(L, v->lv[i].misses));
            for (int i = 0; i < o->nlevels; i++) {
                const double q = ratio(L, v, i);
                if (isnan(q))
                    fprintf(f, " %8s", "-");
                else
                    fprintf(f, " %8.4f", q);
            }
        } else {
            fprintf(f, " %11s", v->v->traced ? "-" : "(no hooks)");
        }
        fprintf(f, "\n");
    }
    /* Details that do not fit the table. */
    for (size_t j = 0; j < L->nres; j++) {
        const cph_variant_result *v = &L->res[j];
        if (!v->supported) continue;
        fprintf(f, "    %-21s %s; rel_err %.2e (tol %.0e)", v->v->id, v->params, v->rel_err,
                v->tolerance);
        if (v->diff_vs_preflip >= 0) fprintf(f, "; vs preflip %.2e", v->diff_vs_preflip);
        if (v->timed)
            fprintf(f, "; time CI [%.3f, %.3f] ms n=%zu%s", v->time.ci_lo * 1e3,
                    v->time.ci_hi * 1e3, v->time.n, v->time.noisy ? " noisy" : "");
        if (v->simulated)
            fprintf(f, "; traced rel_err %.2e, sim %.0f ms", v->sim_rel_err, 1e3 * v->seconds_sim);
        fprintf(f, "\n");
        if (v->have_counters) {
            fprintf(f, "      counters:");
            for (int i = 0; i < CPH_NCTR; i++)
                if (v->ctr.valid[i]) fprintf(f, " %s=%.0f", cph_counter_name(i), v->ctr.value[i]);
                else fprintf(f, " %s=n/a", cph_counter_name(i));
            fprintf(f, "\n");
        }
    }
}

/* --- JSON ------------------------------------------------------------------ */

static json_t *num_or_null(double v) { return isfinite(v) ? json_real(v) : json_null(); }

static json_t *variant_json(const cph_cache_report *r, const cph_layer_result *L,
                            const cph_variant_result *v) {
    const cph_study_opts *o = r->opts;
    json_t *j = json_object();
    json_object_set_new(j, "id", json_string(v->v->id));
    json_object_set_new(j, "algo", json_string(v->v->algo));
    json_object_set_new(j, "flipped", cph_json_flipped(v->v->flip));
    json_object_set_new(j, "kind", json_string(kind_name(v->v->kind)));
    json_object_set_new(j, "family", json_string(v->v->family));
    json_object_set_new(j, "supported", json_boolean(v->supported));
    if (!v->supported) return j;
    json_object_set_new(j, "params", json_string(v->params));
    json_t *c = json_object();
    json_object_set_new(c, "rel_err", num_or_null(v->rel_err));
    json_object_set_new(c, "tolerance", json_real(v->tolerance));
    json_object_set_new(c, "pass", json_boolean(v->pass));
    json_object_set_new(c, "sim_rel_err", v->simulated ? num_or_null(v->sim_rel_err) : json_null());
    json_object_set_new(c, "diff_vs_preflip",
                        v->diff_vs_preflip >= 0 ? num_or_null(v->diff_vs_preflip) : json_null());
    json_object_set_new(j, "check", c);
    if (v->timed) {
        json_t *t = json_object(); /* the shared timing object: {"stats", ...} */
        json_object_set_new(t, "stats", cph_json_stats(&v->time));
        json_object_set_new(t, "rounds", json_integer(v->rounds));
        json_object_set_new(j, "time", t);
    } else {
        json_object_set_new(j, "time", json_null());
    }
    if (v->have_counters) {
        json_t *t = json_object();
        for (int i = 0; i < CPH_NCTR; i++)
            json_object_set_new(t, cph_counter_name(i),
                                v->ctr.valid[i] ? json_real(v->ctr.value[i]) : json_null());
        json_object_set_new(j, "counters", t);
    } else {
        json_object_set_new(j, "counters", json_null());
    }
    if (v->simulated) {
        json_t *s = json_object();
        json_object_set_new(s, "refs", json_integer((json_int_t)v->refs));
        json_object_set_new(s, "loads", json_integer((json_int_t)v->loads));
        json_object_set_new(s, "stores", json_integer((json_int_t)v->stores));
        json_object_set_new(s, "refs_per_output", json_real(per_out(L, v->refs)));
        json_object_set_new(s, "seconds", json_real(v->seconds_sim));
        json_t *lv = json_array();
        for (int i = 0; i < o->nlevels; i++) {
            json_t *e = json_object();
            json_object_set_new(e, "name", json_string(o->geom[i].name));
            json_object_set_new(e, "accesses", json_integer((json_int_t)v->lv[i].accesses));
            json_object_set_new(e, "misses", json_integer((json_int_t)v->lv[i].misses));
            json_object_set_new(e, "read_misses", json_integer((json_int_t)v->lv[i].read_misses));
            json_object_set_new(e, "misses_per_output", json_real(per_out(L, v->lv[i].misses)));
            json_object_set_new(e, "ratio_to_xcorr", num_or_null(ratio(L, v, i)));
            json_array_append_new(lv, e);
        }
        json_object_set_new(s, "levels", lv);
        json_object_set_new(j, "sim", s);
    } else {
        json_object_set_new(j, "sim", json_null());
        json_object_set_new(j, "sim_unavailable",
                            json_string(v->v->traced ? "not run (check failed)"
                                                     : "the AVX2 tile kernel has no trace hooks"));
    }
    return j;
}

json_t *cph_cache_report_json(const cph_cache_report *r) {
    const cph_study_opts *o = r->opts;
    json_t *root = json_object();
    json_object_set_new(root, "format", json_string("convpick-cache-study"));
    json_object_set_new(root, "version", json_integer(2)); /* 2: "flipped", shape object */
    json_object_set_new(root, "machine", r->machine ? json_incref(r->machine) : json_null());
    json_t *g = json_object();
    json_object_set_new(g, "source", json_string(r->geom_source));
    json_t *lv = json_array();
    for (int i = 0; i < o->nlevels; i++) {
        json_t *e = json_object();
        json_object_set_new(e, "name", json_string(o->geom[i].name));
        json_object_set_new(e, "size", json_integer((json_int_t)o->geom[i].size));
        json_object_set_new(e, "ways", json_integer((json_int_t)o->geom[i].ways));
        json_object_set_new(e, "line", json_integer((json_int_t)o->geom[i].line));
        json_array_append_new(lv, e);
    }
    json_object_set_new(g, "levels", lv);
    json_object_set_new(g, "model", json_string("set-associative, LRU, write-allocate, fill on "
                                                "miss at every level, silent eviction, no prefetch"));
    json_object_set_new(root, "geometry", g);
    json_t *hc = json_object();
    json_object_set_new(hc, "available", json_boolean(r->counters_reason == NULL));
    json_object_set_new(hc, "reason",
                        r->counters_reason ? json_string(r->counters_reason) : json_null());
    json_object_set_new(root, "hardware_counters", hc);
    json_t *st = json_object();
    json_object_set_new(st, "threads", json_integer(1));
    json_object_set_new(st, "time_cap_s", json_real(o->time_cap));
    json_object_set_new(st, "rounds", json_integer(o->rounds));
    json_object_set_new(st, "loadavg_1min_start", r->load[0] >= 0 ? json_real(r->load[0]) : json_null());
    json_object_set_new(st, "loadavg_1min_end", r->load[1] >= 0 ? json_real(r->load[1]) : json_null());
    json_object_set_new(st, "timed", json_boolean(o->time));
    json_object_set_new(st, "max_accesses", json_integer((json_int_t)o->max_accesses));
    json_object_set_new(st, "channels", json_integer((json_int_t)o->channels));
    json_object_set_new(st, "seed", json_integer((json_int_t)o->seed));
    json_object_set_new(root, "settings", st);
    json_t *layers = json_array();
    for (size_t k = 0; k < r->nlayers; k++) {
        const cph_layer_result *L = &r->layers[k];
        json_t *e = json_object();
        json_object_set_new(e, "name", json_string(L->layer->name));
        json_object_set_new(e, "shape", cph_json_shape(&L->layer->shape));
        json_object_set_new(e, "k", json_integer((json_int_t)L->layer->shape.k));
        json_object_set_new(e, "k_simulated", json_integer((json_int_t)L->k_sim));
        json_object_set_new(e, "outputs_simulated", json_integer((json_int_t)L->outputs_sim));
        json_t *vs = json_array();
        for (size_t j = 0; j < L->nres; j++) json_array_append_new(vs, variant_json(r, L, &L->res[j]));
        json_object_set_new(e, "variants", vs);
        json_array_append_new(layers, e);
    }
    json_object_set_new(root, "layers", layers);
    return root;
}

/* --- SVG: the shared chart (cache_chart.h), drawn from the study's JSON ----- */

char *cph_cache_report_svg(const cph_cache_report *r) {
    json_t *study = cph_cache_report_json(r);
    if (!study) return NULL;
    cph_textbuf b = {NULL, 0, 0, 0};
    cph_tb_printf(&b, "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n");
    cph_cache_chart_svg(&b, study);
    json_decref(study);
    if (b.failed) {
        cph_tb_free(&b);
        return NULL;
    }
    return b.buf;
}
