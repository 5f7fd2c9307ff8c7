/* The outcome of comparing two results files, and its reports for CI: a
 * JUnit XML file (one testcase per compared pair, regressions as <failure>)
 * and a Markdown summary.  Both are written atomically (rawfile.h). */
#ifndef CONVPICK_DIFF_REPORT_H
#define CONVPICK_DIFF_REPORT_H

#include <stddef.h>
#include <stdio.h>

#include "harness/diff/diff_stats.h"
#include "harness/io/results_read.h"

/* One item measured on both sides. */
typedef struct cph_diff_pair {
    const cph_result_item *base, *next; /* BASE's and NEW's measurement */
    int compared;          /* 0: a side has no samples (then verdict is inconclusive) */
    cph_shift_cmp cmp;
    cph_shift_verdict verdict;
    char note[96];         /* why not compared, or "" */
    /* Its layer's own control (diff_entry.c; not with --paired): the shift
     * NEW/BASE of the other algorithms' measurements on the same layer, flip
     * and thread count (NAN: none on both sides), how many there were, and
     * what NEW's times are divided by beyond the control's factor: the
     * layer's shift over the common shift of the rows at its thread count,
     * taken only the way the row itself moved (after the control's factor)
     * and never past it (1: no correction). */
    double layer_shift;
    size_t layer_others;
    double local;
} cph_diff_pair;

/* Tables on both sides: an entry whose choice changed. */
typedef struct cph_choice_change {
    const cph_result_choice *base, *next;
    const cph_result_item *old_in_new; /* BASE's choice as a candidate in NEW, or NULL */
} cph_choice_change;

/* The fixed control of two bench results files (docs/diff.md, "The
 * control"): each series compared BASE against NEW with the rows'
 * statistics, and the control as one series whose trial r is the geometric
 * mean of the series' trials r.  When that moved significantly beyond the
 * tolerance (verdict slower or faster) and the rows moved the same way (their
 * common shift, cph_diff.rows_shift: the median over the pairs of the log ratio of the medians,
 * has the control's sign and at least half its size), it is machine-wide
 * drift and every NEW time is divided by the control's Hodges-Lehmann ratio
 * before the rows are judged.  A control that moved alone stands for nothing
 * the rows went through: the rows are judged as measured. */
typedef struct cph_diff_control {
    int present;              /* both sides carry a control with trials */
    int sides;                /* how many sides carry one (0, 1 or 2) */
    int series_compared[CPH_RESULTS_CONTROL_SERIES];
    cph_shift_cmp series[CPH_RESULTS_CONTROL_SERIES];
    int compared;             /* the combined control */
    cph_shift_cmp cmp;
    cph_shift_verdict verdict;
    int moved;                /* verdict slower or faster */
    int drift;                /* moved, and the rows with it: the rows are corrected */
    double factor;            /* what NEW times are divided by (1 without drift) */
} cph_diff_control;

/* Bench results on both sides with chosen rows: the network's time from the
 * chosen rows both hold, count-weighted, with a test when every one of them
 * has the same number of trials on a side (trial r of the network = the sum
 * over the layers of count x trial r). */
typedef struct cph_diff_network {
    size_t rows;              /* chosen rows in both */
    double base, next;        /* sum of count x median (NEW drift-corrected) */
    int compared;
    cph_shift_cmp cmp;
    cph_shift_verdict verdict;
} cph_diff_network;

/* How to compare (cph_diff_build's flags). */
enum {
    /* Each side's samples are trials of rounds taken interleaved (diff_rounds.h):
     * sample r of BASE pairs with sample r of NEW, compared by the Wilcoxon
     * signed-rank test and the paired Hodges-Lehmann ratio (paired.h). */
    CPH_DIFF_PAIRED = 1,
    /* Two tables: compare only what each entry chose (the deployed decision),
     * not every candidate tried; changed choices are listed apart.  Two bench
     * results that both hold a table's chosen rows: only those rows. */
    CPH_DIFF_CHOSEN_ONLY = 2
};

typedef struct cph_diff {
    const cph_results *base, *next;
    double alpha, tol;     /* tol a fraction */
    unsigned flags;        /* CPH_DIFF_* */
    /* Tables on both sides: the sum over the entries both hold of each
     * entry's chosen median (the network's time, each layer once), and how
     * many entries that is. */
    double total_base, total_next;
    size_t total_entries;
    /* Tables on both sides: of the entries both hold, how many BASE called
     * confident (its margin over the best other ALGORITHM), how many of those NEW
 * chose the same algorithm, and the same parameters too, and what BASE's
     * changed choices cost in NEW's measurements (worst and median ratio of
     * BASE's choice to NEW's choice, NaN when none measured). */
    size_t confident_base, confident_same, confident_same_algo;
    double changed_cost_max, changed_cost_median;
    int other_device;      /* fingerprints differ (and --allow-other-device was given) */
    cph_diff_control control;
    cph_diff_network network;
    int chosen_rows_only;  /* bench results compared by their chosen rows alone */
    cph_diff_pair *pairs;  /* worst first (cph_diff_sort) */
    size_t npairs;
    const cph_result_item **only_base, **only_next;
    size_t nonly_base, nonly_next;
    cph_choice_change *changes;
    size_t nchanges;
    size_t counts[4];      /* pairs per cph_shift_verdict */
    double rows_shift;     /* the rows' common shift NEW/BASE: exp of the median over the
                              pairs of log(NEW median / BASE median); NAN without pairs */
    size_t nlocal;         /* pairs judged with a layer correction (local != 1) */
} cph_diff;

/* diff_entry.c: the rows' common shift into d->rows_shift (after the pairs
 * are matched), then every pair's layer shift and correction (after the
 * control).  Each returns -1 when out of memory. */
int cph_diff_rows_shift(cph_diff *d);
int cph_diff_layer_shifts(cph_diff *d);

/* diff_control.c: the control of both sides (d->base, d->next, alpha, tol
 * set, the pairs matched and d->rows_shift known) into d->control; returns
 * -1 when out of memory.  The network of the
 * compared chosen rows into d->network (after the pairs are built). */
int cph_diff_control_compare(cph_diff *d);
void cph_diff_network_compare(cph_diff *d);
/* "the control ran 1.12x slower in NEW: machine-wide drift; ..." (one line,
 * no newline), or "" when neither side carries a control. */
void cph_diff_control_text(const cph_diff *d, char *buf, size_t cap);

/* Matches the items of base and next (same shape, mode, threads, algorithm
 * and parameters; the k-th occurrence of a point in one file with its k-th
 * in the other), compares every pair, lists the unmatched, the changed
 * choices, and sorts.  Returns 0, or -1 when out of memory. */
int cph_diff_build(const cph_results *base, const cph_results *next, double alpha, double tol,
                   unsigned flags, cph_diff *out);
void cph_diff_free(cph_diff *d);

/* "conv1 xcorr t=1 direct [kb=64]" */
void cph_diff_item_label(const cph_result_item *it, char *buf, size_t cap);

/* One line of figures for a pair: "ratio 1.104 (HL 1.102, 99.0 % CI 1.09..1.11),
 * p = 3.2e-12 (U = 12, exact), base 1.234 ms (n=40), new 1.362 ms (n=40)". */
void cph_diff_pair_figures(const cph_diff *d, const cph_diff_pair *p, char *buf, size_t cap);

/* Text with &, <, >, " and ' escaped and characters XML 1.0 forbids
 * (control characters other than tab, newline, return) replaced by '?'. */
void cph_xml_escape(FILE *f, const char *s);

/* Reports; CP_EIO with a message naming the file on failure. */
cp_status cph_diff_write_junit(const cph_diff *d, const char *path, char *msg, size_t cap);
cp_status cph_diff_write_markdown(const cph_diff *d, const char *path, char *msg, size_t cap);

#endif
