/* Rounds of an A/B comparison: the same measurements taken several times on
 * each side, interleaved in time (A B A B ... or in a shuffled order per
 * round).  Each round's median of an item is one trial; the rounds of one
 * side fold into one results set whose item samples ARE those trial medians,
 * in round order, so that round r of BASE pairs with round r of NEW. */
#ifndef CONVPICK_DIFF_ROUNDS_H
#define CONVPICK_DIFF_ROUNDS_H

#include <stddef.h>

#include "harness/io/results_read.h"

/* Folds rounds[0..n) into out: every item of rounds[0] whose point
 * (cph_result_same_point) is found in every round gets n samples, sample r =
 * that item's median in round r (its first occurrence there).  Items missing
 * from a round are left out and counted in *dropped.  The path reads
 * "FIRST (+n-1 rounds)"; the device is the first round's, and *other_device
 * is set when a later round's fingerprint differs.  Returns 0, or -1 when out
 * of memory.  Free out with cph_results_free. */
int cph_results_fold_rounds(const cph_results *rounds, size_t n, cph_results *out,
                            size_t *dropped, int *other_device);

/* One round measured in parts (one process per layer, say, so that the two
 * sides of a round run close together): moves part's items to the end of
 * into's.  part is freed whatever the outcome.  Returns 0, 1 when their
 * fingerprints differ (nothing moved), -1 when out of memory. */
int cph_results_join(cph_results *into, cph_results *part);

/* An in-process A/B run (tools/revision_plugin/): one bench results file in
 * which the rows of algorithm "<bp>_X" are BASE's and those of "<np>_X"
 * NEW's, each row's samples its trial medians in round order, trial r of the
 * two taken back to back in round r.  Every BASE row whose NEW twin is at the
 * same point (layer, shape, flip, threads, parameters) with as many trials
 * becomes one item of *base and one of *next, both named X, their samples
 * those trials, so that the paired comparison pairs round r with round r.
 * Rows of either side without such a twin are counted in *unpaired; other
 * rows are ignored.  Returns 0, or -1 when out of memory (outputs freed). */
int cph_results_split_within(const cph_results *all, const char *bp, const char *np,
                             cph_results *base, cph_results *next, size_t *unpaired);

#endif
