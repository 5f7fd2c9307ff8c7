/* Fuzz target: the tuning-table loader (cp_table_load_buffer, the in-memory
 * form of cp_table_load; loader/table_load.c, version 1 migrated as it
 * loads) and the lookups a
 * deploying program makes on what it loaded.  Properties: no crash, no leak;
 * every loaded entry is found again exactly (cp_table_find, cp_table_lookup)
 * and carries a resolved algorithm that supports its shape; the loader's fast
 * path (one entry at a time, by the entry reader of loader/table_read.c or,
 * when it declines, as a tree) and its reference path (one tree) agree on the
 * status, the message and every field of every entry. */
#include <string.h>

#include "convpick/convpick.h"
#include "fuzz.h"
#include "loader/table_impl.h"

/* Equal, NaN equal to NaN (an error or interval not recorded). */
static int same_num(double x, double y) { return x == y || (x != x && y != y); }

/* What the entry reader (loader/table_read.c) fills beyond the key fields. */
static int same_dispatch(const cp_table_entry *a, const cp_table_entry *b) {
    return same_num(a->rel_err, b->rel_err) && a->timing.median == b->timing.median &&
           a->timing.ci_lo == b->timing.ci_lo && a->timing.ci_hi == b->timing.ci_hi &&
           a->timing.samples == b->timing.samples && a->timing.noisy == b->timing.noisy &&
           memcmp(&a->runner_up_params, &b->runner_up_params, sizeof a->runner_up_params) == 0 &&
           same_num(a->margin, b->margin) && same_num(a->margin_lo, b->margin_lo) &&
           same_num(a->margin_hi, b->margin_hi) && a->margin_in_noise == b->margin_in_noise;
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size) {
    if (size > (1u << 20)) return 0;
    cp_table *t = NULL;
    char msg[512] = "";
    cp_status st = cp_table_load_buffer(data, size, "fuzz.json", 0, &t, msg, sizeof msg);
    cp_table *ref = NULL;
    char rmsg[512] = "";
    cp_status rst = cp_table_load_buffer(data, size, "fuzz.json", CPT_LOAD_WHOLE, &ref, rmsg,
                                         sizeof rmsg);
    cpf_require(st == rst, "fast and whole loads agree on the status");
    if (st != CP_OK) cpf_require(strcmp(msg, rmsg) == 0, "fast and whole loads agree on the message");
    if (st == CP_OK) {
        cpf_require(cp_table_count(t) == cp_table_count(ref), "same number of entries");
        for (size_t i = 0; i < cp_table_count(t); i++) {
            const cp_table_entry *a = cp_table_entry_at(t, i), *b = cp_table_entry_at(ref, i);
            cpf_require(strcmp(a->name, b->name) == 0 && cp_shape_equal(&a->shape, &b->shape) &&
                            a->flip == b->flip && a->threads == b->threads && a->algo == b->algo &&
                            memcmp(&a->params, &b->params, sizeof a->params) == 0 &&
                            a->runner_up == b->runner_up && a->ncandidates == b->ncandidates,
                        "same entries");
            cpf_require(same_dispatch(a, b), "same timing, error, runner-up and margin");
            for (size_t j = 0; j < a->ncandidates; j++)
                cpf_require(a->candidates[j].nsamples == b->candidates[j].nsamples &&
                                strcmp(a->candidates[j].algo, b->candidates[j].algo) == 0,
                            "same candidates");
            cpf_require(strcmp(cp_table_settings_key(t, i), cp_table_settings_key(ref, i)) == 0,
                        "same settings keys");
        }
    }
    cp_table_free(ref);
    if (st != CP_OK) {
        cpf_require(t == NULL && msg[0] != '\0', "a refusal has a message and no table");
        return 0;
    }
    for (size_t i = 0; i < cp_table_count(t); i++) {
        const cp_table_entry *e = cp_table_entry_at(t, i);
        cpf_require(e->algo != NULL, "entry has an algorithm");
        cpf_require(e->algo->supports(&e->shape, e->flip, NULL, 0), "algorithm supports entry");
        cpf_require(cp_table_find(t, &e->shape, e->flip, e->threads) == e, "entry found exactly");
        cp_choice ch;
        cpf_require(cp_table_lookup(t, &e->shape, e->flip, e->threads, &ch, msg, sizeof msg) ==
                        CP_OK && ch.match == CP_MATCH_EXACT && ch.entry == e,
                    "lookup answers exactly");
        (void)cp_table_settings_key(t, i);
    }
    /* A shape nearby: any answer, no crash. */
    if (cp_table_count(t)) {
        cp_shape s = cp_table_entry_at(t, 0)->shape;
        s.h += 1;
        cp_choice ch;
        (void)cp_table_lookup(t, &s, CP_XCORR, 0, &ch, msg, sizeof msg);
    }
    cp_table_free(t);
    return 0;
}
