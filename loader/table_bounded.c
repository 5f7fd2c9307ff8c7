/* The accuracy-aware lookup (rules in convpick/table.h): an exact entry's
 * recorded candidates filtered by their error against the oracle, the
 * chosen one kept when it is within the bound. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "loader/table_impl.h"

int cp_candidate_timed(const cp_candidate *c) {
    return !c->disqualified && !c->failed && isfinite(c->rel_err) && c->timing.median > 0.0;
}

static int is_chosen(const cp_table_entry *e, const cp_candidate *c) {
    if (strcmp(c->algo, e->algo->name) != 0) return 0;
    for (int i = 0; i < e->algo->nparams; i++)
        if (c->params.v[i] != e->params.v[i]) return 0;
    return 1;
}

double cpl_entry_chosen_err(const cp_table_entry *e) {
    for (size_t i = 0; i < e->ncandidates; i++)
        if (cp_candidate_timed(&e->candidates[i]) && is_chosen(e, &e->candidates[i]))
            return e->candidates[i].rel_err;
    return e->rel_err; /* a lean table: recorded with the choice */
}

cp_status cp_table_lookup_bounded(const cp_table *t, const cp_shape *s, cp_flip flip,
                                  int threads, double max_rel_err, cp_choice *out, char *msg,
                                  size_t cap) {
    const cp_status st = cpl_lookup_start(s, out, msg, cap);
    if (st != CP_OK) return st;
    out->max_rel_err = max_rel_err;
    if (!(max_rel_err >= 0.0)) {
        if (msg && cap) snprintf(msg, cap, "error bound %g is not a number >= 0", max_rel_err);
        return CP_EINVAL;
    }
    const cp_table_entry *e = cp_table_find(t, s, flip, threads);
    if (!e) {
        if (msg && cap)
            snprintf(msg, cap, "no entry of exactly this shape, flip and thread count: an error "
                               "bound needs the errors recorded for the layer itself");
        return CP_ENOTFOUND;
    }
    const cp_candidate *best = NULL, *accurate = NULL;
    size_t within = 0;
    for (size_t i = 0; i < e->ncandidates; i++) {
        const cp_candidate *c = &e->candidates[i];
        if (!cp_candidate_timed(c) || !cp_algo_find(c->algo)) continue;
        if (!accurate || c->rel_err < accurate->rel_err) accurate = c;
        if (c->rel_err > max_rel_err) continue;
        within++;
        if (!best || is_chosen(e, c) ||
            (!is_chosen(e, best) && c->timing.median < best->timing.median))
            best = c;
    }
    if (!best) {
        if (msg && cap) {
            if (accurate)
                snprintf(msg, cap, "entry '%s': no recorded candidate within rel_err %.3g; the "
                                   "most accurate is %s at %.3g",
                         e->name, max_rel_err, accurate->algo, accurate->rel_err);
            else
                snprintf(msg, cap, "entry '%s' records no timed candidate", e->name);
        }
        return CP_ENOTFOUND;
    }
    out->match = CP_MATCH_EXACT;
    out->algo = cp_algo_find(best->algo);
    out->params = best->params;
    out->entry = e;
    out->rel_err = best->rel_err;
    snprintf(out->why, sizeof out->why,
             "entry '%s', bound rel_err <= %.3g: %s of %zu recorded candidate(s) within it "
             "(rel_err %.3g, median %.3g s)",
             e->name, max_rel_err, is_chosen(e, best) ? "the table's choice, fastest" : "fastest",
             within, best->rel_err, best->timing.median);
    return CP_OK;
}
