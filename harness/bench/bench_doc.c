/* The results document of bench (--json FILE, written atomically), format
 * "convpick-bench-results" version 2 (version 1 files still read:
 * harness/io/results_migrate.c).  The shared objects (shape, flipped, params,
 * timing settings, device) are spelled as in tuning tables
 * (docs/table-format.md, "Shared objects"):
 *   {
 *     "format": "convpick-bench-results", "version": 2,
 *     "created": "2026-12-01T22:00:00Z",
 *     "convpick": {"version": "0.1.0", "git": "..."},
 *     "command_line": ["bench", ...],
 *     "device": {device object + "algorithm_caches", "llc_total_bytes", "roofs"},
 *     "roofs": null | {"peak_1core_gflops", "peak_all_gflops" (the device roof: the
 *                      widest width, what every peak_fraction is against),
 *                      "roof_bits", "widths": [{"bits", "isa", "peak_1core_gflops",
 *                      "peak_all_gflops"}, widest first], "ratio_512_256" | null,
 *                      "bw_1core_gbs", "bw_all_gbs", "ridge_1core", "ridge_all",
 *                      "cores_used", "budget_seconds"},
 *     "settings": {"timing": {timing settings object},
 *                  "threads": [1, 2], "flipped": [false, true], "seed": 1,
 *                  "caches": {"l1d", "l2", "l3", "line"}},
 *     "roofs_end": null | {the same, measured after the rows},
 *     "results": [
 *       {"layer": "conv1", "layer_count": 1, "shape": {shape object},
 *        "flipped": false, "threads": 1, "pinned": true, "algo": "direct",
 *        "kind": "algorithm" | "reference" | "chosen",
 *        "chosen_algo": "blocked" (chosen rows), "flops_performed": 2mnk (SGEMM rows),
 *        "status": "ok" | "unsupported" | "error", "reason": "..." (not ok),
 *        "params": {"kb": 64}, "params_text": "kb=64", "flops": 2.3e9,
 *        "gflops": 41.2, "isa": "avx512" (the kernels the row ran; "blas" for SGEMM
 *        rows, "-" when the algorithm does not say),
 *        "peak_gflops": 90.1 | null, "peak_fraction": 0.457 | null,
 *        "peak_bits": 512 | null (the vector width of the roof the fraction is against),
 *        "rel_err": 1.2e-07 | null (algorithm and chosen rows: the error against the fp64
 *        oracle, bench_error.c; null for SGEMM rows and non-finite outputs; absent in
 *        files written before it was measured),
 *        "measurement": {measurement object, report_json.h}}      (ok only)
 *        whose samples are the row's TRIAL MEDIANS in round order
 *        (measurement.settings.samples_are = "trial_medians", .rounds, .placed;
 *        report_json.h, cph_json_trials)
 *     ],
 *     "control": {"what": "fma512 x 20000 iterations + sgemm 64x576x196, 1 thread",
 *                 "samples": timed runs of each piece per trial (after one warm-up),
 *                 "fma_s": [trial medians, seconds], "gemm_s": [...] (as a table's
 *                 tried.control spells them), and for each trial where it ran:
 *                 "round": [0-based round of its layer x flip x threads], "at_s":
 *                 [seconds since the rows started], "layer": [...], "flipped": [...],
 *                 "threads": [...]}
 *       (harness/measure/control.h; absent in files written before the control),
 *     "summaries": [{"id": "blocked_peak", "target_text", "comparison": ">=",
 *                    "target": 0.7, "value", "unit", "verdict": "pass"|"miss"|"n/a",
 *                    "missed_by": relative | null, "threads", "base_threads",
 *                    "flipped", "note", "layers": [{"layer", "value", "verdict"?}]}]
 *   }
 * Fields are only ever added within a version; readers ignore unknown keys.
 * The same structure as a JSON Schema: tests/data/bench_results.schema.json
 * (tests/cli/cli_bench.sh validates every file it makes against it). */
#define _POSIX_C_SOURCE 200809L
#include <stdio.h>
#include <string.h>
#include <time.h>

#include "harness/bench/bench_state.h"
#include "harness/io/report_json.h"

static const char *kind_name(cph_row_kind k) {
    return k == CPH_ROW_ALGO ? "algorithm" : k == CPH_ROW_CHOSEN ? "chosen" : "reference";
}

json_t *cph_bench_row_json(const cph_bench_row *x, const char *status) {
    json_t *o = json_pack("{s:s, s:i, s:o, s:o, s:i, s:b, s:s, s:s, s:s, s:o}", "layer",
                          x->L->name, "layer_count", x->L->count, "shape",
                          cph_json_shape(&x->L->shape), "flipped", cph_json_flipped(x->flip),
                          "threads",
                          x->threads, "pinned", x->pinned, "algo", x->name, "kind",
                          kind_name(x->kind), "status", status, "flops",
                          cph_json_number(cp_shape_flops(&x->L->shape)));
    if (o && x->kind == CPH_ROW_CHOSEN) json_object_set_new(o, "chosen_algo", json_string(x->algo));
    return o;
}

/* The fixed control's trials (harness/measure/control.h), as parallel arrays. */
static json_t *control_json(const cph_bench_state *r, const cph_bench_cfg *c, size_t samples) {
    char what[160];
    cph_control_describe(&r->control, what, sizeof what);
    json_t *f = json_array(), *g = json_array(), *rd = json_array(), *at = json_array(),
           *ly = json_array(), *fl = json_array(), *th = json_array();
    for (size_t i = 0; f && g && rd && at && ly && fl && th && i < r->ctl.n; i++) {
        const cph_bench_ctl_trial *t = &r->ctl.t[i];
        json_array_append_new(f, cph_json_number(t->fma));
        json_array_append_new(g, cph_json_number(t->gemm));
        json_array_append_new(rd, json_integer((json_int_t)t->round));
        json_array_append_new(at, cph_json_number(t->at));
        json_array_append_new(ly, json_string(c->sel.layers.v[t->layer].name));
        json_array_append_new(fl, cph_json_flipped(t->flip));
        json_array_append_new(th, json_integer(t->threads));
    }
    return json_pack("{s:s, s:I, s:o, s:o, s:o, s:o, s:o, s:o, s:o}", "what", what, "samples",
                     (json_int_t)samples, "fma_s", f, "gemm_s", g, "round", rd, "at_s", at,
                     "layer", ly, "flipped", fl, "threads", th);
}

static json_t *roofs_json(const cph_bench_state *r, int end) {
    if (end ? !r->have_roofs_end : !r->have_roofs) return json_null();
    const cph_roofs *f = end ? &r->roofs_end : &r->roofs;
    json_t *o = json_pack("{s:o, s:o, s:i, s:o, s:o, s:o, s:o, s:o, s:o, s:i, s:o}",
                     "peak_1core_gflops", cph_json_number(f->peak_1core_gflops),
                     "peak_all_gflops", cph_json_number(f->peak_all_gflops), "roof_bits",
                     f->roof_bits, "widths", cph_roofs_widths_json(f), "ratio_512_256",
                     f->ratio_512_256 > 0 ? json_real(f->ratio_512_256) : json_null(),
                     "bw_1core_gbs", cph_json_number(f->bw_1core_gbs), "bw_all_gbs",
                     cph_json_number(f->bw_all_gbs), "ridge_1core",
                     cph_json_number(f->ridge_1core), "ridge_all", cph_json_number(f->ridge_all),
                     "cores_used", f->cores_used, "budget_seconds",
                     json_real(CPH_BENCH_ROOF_SECONDS));
    if (o) cph_roofs_levels_json(f, o);
    return o;
}

json_t *cph_bench_document(const cph_bench_state *r, const cph_bench_cfg *c, int argc, char **argv,
                        json_t *summaries) {
    char when[32] = "";
    const time_t now = time(NULL);
    struct tm tm;
    if (gmtime_r(&now, &tm)) strftime(when, sizeof when, "%Y-%m-%dT%H:%M:%SZ", &tm);
    json_t *cmd = json_array(), *thr = json_array(), *flips = json_array();
    for (int i = 0; i < argc; i++) json_array_append_new(cmd, json_string(argv[i]));
    for (int i = 0; i < r->nthreads; i++) json_array_append_new(thr, json_integer(r->threads[i]));
    for (int i = 0; i < c->sel.nflips; i++)
        json_array_append_new(flips, cph_json_flipped(c->sel.flips[i]));
    json_t *settings = json_pack(
        "{s:o, s:o, s:o, s:I, s:{s:I, s:I, s:I, s:I}}", "timing",
        cph_json_timing_opts(&c->timing), "threads", thr, "flipped", flips, "seed",
        (json_int_t)c->sel.seed, "caches", "l1d", (json_int_t)r->caches.l1d, "l2",
        (json_int_t)r->caches.l2, "l3", (json_int_t)r->caches.l3, "line",
        (json_int_t)r->caches.line);
    json_t *device = cph_machine_to_json(&r->m, NULL);
    json_t *doc = json_pack(
        "{s:s, s:i, s:s, s:{s:s, s:s}, s:o, s:o, s:o, s:o, s:O, s:o}", "format", CPH_BENCH_FORMAT,
        "version", CPH_BENCH_VERSION, "created", when, "convpick", "version", CONVPICK_VERSION,
        "git", CP_GIT_REV, "command_line", cmd, "device", device ? device : json_null(), "roofs",
        roofs_json(r, 0), "settings", settings, "results", r->results, "summaries",
        summaries ? summaries : json_null());
    if (doc) json_object_set_new(doc, "roofs_end", roofs_json(r, 1));
    if (doc) {
        const cph_timing_opts t = cph_bench_trial_timing(c);
        json_object_set_new(doc, "control", control_json(r, c, t.max_samples));
        json_t *set = json_object_get(doc, "settings");
        json_object_set_new(set, "rounds", json_integer((json_int_t)c->rounds));
        json_object_set_new(set, "trial_samples", json_integer((json_int_t)t.max_samples));
        json_object_set_new(set, "placed", json_boolean(c->place));
    }
    return doc;
}
