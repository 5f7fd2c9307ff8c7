/* A tuning table's settings and entries as JSON (docs/table-format.md), built
 * from the shared encoders (codec_encode.h), and the settings key. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "harness/io/codec_encode.h"
#include "harness/io/table_doc_impl.h"
#include "loader/codec.h"
#include "loader/device.h"
#include "loader/table_impl.h"

void cph_table_settings_key(const cph_table_settings *s, char out[17]) {
    /* Hash the printed values, not the struct bytes: no padding, same on every
     * build that prints the same numbers.  (Unchanged since version 1, so a
     * migrated table's entries keep their keys.) */
    char buf[512];
    int n = snprintf(buf, sizeof buf, "%.17g|%.17g|%.17g|%d|%d|%zu|%zu|%.17g|%.17g|%d|%llu",
                     s->target_rel_ci, s->confidence, s->max_seconds, s->cold, s->warmup,
                     s->min_samples, s->max_samples, s->max_rel_err, s->budget_seconds,
                     s->max_candidates, (unsigned long long)s->seed);
    uint64_t h = cpl_fnv1a64(CPL_FNV1A64_OFFSET, buf, n > 0 ? (size_t)n : 0);
    snprintf(out, 17, "%016llx", (unsigned long long)h);
}

json_t *cph_table_settings_json(const cph_table_settings *s, const cph_machine *m) {
    cph_timing_opts t;
    memset(&t, 0, sizeof t);
    t.warmup = s->warmup;
    t.min_samples = s->min_samples;
    t.max_samples = s->max_samples;
    t.target_rel_ci = s->target_rel_ci;
    t.confidence = s->confidence;
    t.max_seconds = s->max_seconds;
    t.cold = s->cold;
    /* what tune streams before each cold sample (cmd_tune.c, the same rule) */
    t.flush_bytes = s->cold ? 2 * cph_machine_llc_total(m) : 0;
    json_t *th = json_array();
    for (int i = 0; th && i < s->nthreads && i < CPH_TABLE_MAX_THREADS; i++)
        json_array_append_new(th, json_integer(s->threads[i]));
    return json_pack("{s:o, s:o, s:o, s:i, s:I, s:o}", "timing", cph_json_timing_opts(&t),
                     "max_rel_err", cph_json_number(s->max_rel_err), "budget_s",
                     cph_json_number(s->budget_seconds), "max_candidates", s->max_candidates,
                     "seed", (json_int_t)s->seed, "threads", th);
}

static json_t *candidate_json(const cp_candidate *c, const char *note) {
    const int timed = !c->failed && !(c->disqualified && c->timing.samples == 0);
    const cp_algo *a = cp_algo_find(c->algo);
    return cph_json_add_plugin(
        json_pack("{s:s, s:o, s:o, s:o, s:s, s:s}", "algo", c->algo, "params",
                  cph_json_params(a, &c->params), "timing",
                  timed ? cph_json_timing(&c->timing, c->samples, c->nsamples) : json_null(),
                  "rel_err", c->failed ? json_null() : cph_json_number(c->rel_err), "status",
                  c->failed ? "failed" : c->disqualified ? "disqualified" : "ok", "note", note),
        a);
}

static json_t *tried_json(const cph_entry_notes *n) {
    json_t *notes = json_array();
    for (size_t i = 0; notes && n && n->search_notes && i < n->nsearch_notes; i++)
        json_array_append_new(notes, json_string(n->search_notes[i] ? n->search_notes[i] : ""));
    const cph_entry_notes zero = {0};
    if (!n) n = &zero;
    json_t *tried = json_pack("{s:i, s:i, s:i, s:i, s:i, s:i, s:o, s:o}", "planned", n->planned,
                              "measured", n->measured, "skipped", n->skipped, "disqualified",
                              n->disqualified, "failed", n->failed, "unsupported",
                              n->unsupported, "seconds", cph_json_number(n->seconds), "notes",
                              notes);
    if (tried && n->ncontrol && n->control_fma && n->control_gemm) {
        json_t *f = json_array(), *g = json_array();
        for (size_t i = 0; f && g && i < n->ncontrol; i++) {
            json_array_append_new(f, cph_json_number(n->control_fma[i]));
            json_array_append_new(g, cph_json_number(n->control_gemm[i]));
        }
        json_object_set_new(tried, "control",
                            json_pack("{s:s, s:o, s:o}", "what",
                                      n->control_what ? n->control_what : "", "fma_s",
                                      f ? f : json_null(), "gemm_s", g ? g : json_null()));
    }
    return tried;
}

json_t *cph_table_entry_json(const cp_table_entry *e, const cph_entry_notes *n, const char *key) {
    json_t *cands = json_array();
    for (size_t i = 0; cands && i < e->ncandidates; i++) {
        const char *note =
            n && n->candidate_notes && n->candidate_notes[i] ? n->candidate_notes[i] : "";
        json_array_append_new(cands, candidate_json(&e->candidates[i], note));
    }
    json_t *ru = json_null();
    if (e->runner_up) {
        const int bounded = isfinite(e->margin_lo) && isfinite(e->margin_hi);
        ru = cph_json_add_plugin(
            json_pack("{s:s, s:o, s:o, s:o, s:b}", "algo", e->runner_up->name, "params",
                      cph_json_params(e->runner_up, &e->runner_up_params), "margin",
                      cph_json_number(e->margin), "margin_interval",
                      bounded ? json_pack("[f, f]", e->margin_lo, e->margin_hi) : json_null(),
                      "in_noise", e->margin_in_noise ? 1 : 0),
            e->runner_up);
    }
    /* The choice's own error, so that a lean table (no candidates) keeps it. */
    const double err = cpl_entry_chosen_err(e);
    json_t *choice =
        cph_json_add_plugin(json_pack("{s:s, s:o, s:o}", "algo", e->algo ? e->algo->name : "",
                                      "params", cph_json_params(e->algo, &e->params), "rel_err",
                                      isfinite(err) ? json_real(err) : json_null()),
                            e->algo);
    return json_pack("{s:s, s:o, s:o, s:i, s:o, s:o, s:o, s:o, s:o, s:s}", "name", e->name,
                     "shape", cph_json_shape(&e->shape), "flipped", cph_json_flipped(e->flip),
                     "threads", e->threads, "choice", choice, "timing",
                     cph_json_timing(&e->timing, NULL, 0), "runner_up", ru, "candidates", cands,
                     "tried", tried_json(n), "settings_key", key);
}

int cph_table_entry_key(const json_t *e, char *buf, size_t cap) {
    const json_t *sh = json_object_get(e, "shape");
    const json_t *fl = json_object_get(e, "flipped"), *th = json_object_get(e, "threads");
    const json_t *lay = json_object_get(sh, "layout");
    if (!json_is_object(sh) || !json_is_boolean(fl) || !json_is_integer(th) || !json_is_string(lay))
        return 0;
    size_t len = 0;
    for (size_t i = 0; i < CPL_SHAPE_NKEYS; i++) {
        const json_t *v = json_object_get(sh, cpl_shape_keys[i]);
        if (!json_is_integer(v)) return 0;
        int k = snprintf(buf + len, cap - len, "%lld,", (long long)json_integer_value(v));
        if (k < 0 || (size_t)k >= cap - len) return 0;
        len += (size_t)k;
    }
    int k = snprintf(buf + len, cap - len, "%s|%d|%lld", json_string_value(lay), json_is_true(fl),
                     (long long)json_integer_value(th));
    return k >= 0 && (size_t)k < cap - len;
}
