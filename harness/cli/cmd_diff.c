/* convpick diff BASE NEW: did NEW get slower than BASE?
 *
 * Reads two bench results files or tuning tables (any mix), pairs their
 * measurements by shape, flip, thread count, algorithm and parameters, and
 * gives each pair a ratio NEW/BASE with a confidence interval and a verdict
 * (Mann-Whitney U test and Hodges-Lehmann estimate: diff_stats.h,
 * docs/diff.md).  Exit 1 when any pair is a regression, so a CI job can gate
 * on it; --junit and --markdown write reports for the CI's pages. */
#define _POSIX_C_SOURCE 200809L
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "harness/cli/cli.h"
#include "harness/cli/options.h"
#include "harness/diff/diff_report.h"
#include "harness/diff/diff_rounds.h"

static void usage(FILE *f) {
    fprintf(f,
            "usage: convpick diff [OPTIONS] BASE NEW\n"
            "       convpick diff --within BP,NP [OPTIONS] FILE\n\n"
            "Compares two measurement files, each a bench results file (bench --json) or\n"
            "a tuning table (tune), measured on the same device.  Measurements of the\n"
            "same shape, flip, thread count, algorithm and parameters are paired; for\n"
            "each pair it reports the ratio NEW/BASE of the medians, the Hodges-Lehmann\n"
            "estimate of the ratio (from the shift of the log times) with its\n"
            "distribution-free (1-alpha) interval, the two-sided Mann-Whitney U p-value,\n"
            "and a verdict:\n"
            "  slower        p < alpha and the interval lies above 1 + tolerance\n"
            "                (a regression)\n"
            "  faster        p < alpha and the interval lies below 1 - tolerance\n"
            "  unchanged     the interval lies within 1 +- tolerance\n"
            "  inconclusive  anything else: the interval straddles a tolerance bound,\n"
            "                or too few samples for an interval\n"
            "Rows are sorted worst first.  For two tables it compares what each entry\n"
            "chose (--all: every candidate), lists the layers whose chosen algorithm\n"
            "changed and what BASE's choice costs in NEW, and the network's time (the sum\n"
            "of the chosen medians over the entries both hold).  Two bench results that\n"
            "both timed a table's choice (bench --table) are compared by those chosen rows\n"
            "and their network total (--all: every row).\n\n"
            "Bench results and tables carry a fixed control (a SGEMM and the FMA loop timed\n"
            "in every round beside the rows).  When both sides have one, it is compared\n"
            "first; if it moved significantly beyond the tolerance, that is machine-wide\n"
            "drift: it is reported as such and every NEW time is divided by the control's\n"
            "ratio before the rows are judged, so a regression must be slower beyond the\n"
            "drift.\n\n"
            "With --paired, BASE and NEW are each a comma-separated list of results files,\n"
            "the rounds of an A/B run taken interleaved (round r of BASE close in time to\n"
            "round r of NEW; a round measured in parts lists them joined by '+',\n"
            "a.json+b.json): each round's median of a measurement is one trial, round r\n"
            "pairs with round r, and the p-value is the Wilcoxon signed-rank test's, the\n"
            "interval the paired Hodges-Lehmann one (docs/diff.md).  This is how to compare\n"
            "two builds on a shared machine (scripts/ci-speed-check --ab --processes).\n\n"
            "With --within BP,NP, one bench results file holds both sides, measured in one\n"
            "process (scripts/ci-speed-check --ab; tools/revision_plugin/): rows of algorithm\n"
            "BP_X are BASE's and rows of NP_X are NEW's, and trial r of a pair was taken\n"
            "back to back with its twin in round r.  They are compared as with --paired,\n"
            "trial r with trial r, under the name X.\n\n"
            "options:\n"
            "  --alpha A           significance level, 0 < A < 0.5 (default: 0.01)\n"
            "  --tolerance PCT     changes within +-PCT %% are not regressions (default: 5)\n"
            "  --allow-other-device  compare files of different device fingerprints\n"
            "                      (default: refuse)\n"
            "  --junit FILE        write JUnit XML: one testcase per pair, regressions as\n"
            "                      failures (default: none)\n"
            "  --markdown FILE     write a Markdown summary for a CI page (default: none)\n"
            "  --paired            BASE and NEW are lists of rounds, compared paired\n"
            "                      (default: two files, compared as independent samples)\n"
            "  --within BP,NP      one file of an in-process A/B run: rows BP_X against\n"
            "                      rows NP_X, paired trial by trial (implies --paired;\n"
            "                      default: two files)\n"
            "  --all               two tables: compare every candidate, not only the choices;\n"
            "                      two bench results with chosen rows: every row (default:\n"
            "                      the choices)\n"
            "  --details           list every measurement found on one side only\n"
            "                      (default: their counts)\n");
    cph_help_end(f, "0 no regression, 1 at least one regression, 2 bad usage or\n"
                    "input (unreadable or malformed file, another format version, other device,\n"
                    "nothing in common)");
}

enum { OPT_ALPHA = 1, OPT_TOL, OPT_OTHER, OPT_JUNIT, OPT_MD, OPT_PAIRED, OPT_ALL, OPT_DETAILS, OPT_WITHIN };

typedef struct diff_opts {
    double alpha, tol;
    int allow_other, paired, all, details;
    const char *junit, *markdown, *base, *next;
    char within_base[16], within_next[16]; /* --within BP,NP; "" without */
} diff_opts;

/* --within BP,NP: two different prefixes of [a-z][a-z0-9]*, up to 15 bytes. */
static int parse_within(const char *arg, diff_opts *o) {
    const char *comma = strchr(arg, ',');
    const size_t nb = comma ? (size_t)(comma - arg) : 0, nn = comma ? strlen(comma + 1) : 0;
    int ok = comma && nb >= 1 && nb < sizeof o->within_base && nn >= 1 &&
             nn < sizeof o->within_next && !strchr(comma + 1, ',');
    for (size_t i = 0; ok && arg[i]; i++) {
        const char c = arg[i];
        ok = c == ',' || (c >= 'a' && c <= 'z') || (i != 0 && i != nb + 1 && c >= '0' && c <= '9');
    }
    if (ok) {
        memcpy(o->within_base, arg, nb);
        o->within_base[nb] = '\0';
        memcpy(o->within_next, comma + 1, nn + 1);
        ok = strcmp(o->within_base, o->within_next) != 0;
    }
    if (!ok)
        return cph_opt_error("diff", "--within",
                             "'%s': expected two different prefixes BP,NP of lower-case letters "
                             "and digits (e.g. base,new)",
                             arg);
    o->paired = 1;
    return 0;
}

/* Returns -1 to go on, else the exit code (the error already reported). */
static int parse(int argc, char **argv, diff_opts *o) {
    static const struct option longopts[] = {
        {"alpha", required_argument, NULL, OPT_ALPHA},
        {"tolerance", required_argument, NULL, OPT_TOL},
        {"allow-other-device", no_argument, NULL, OPT_OTHER},
        {"junit", required_argument, NULL, OPT_JUNIT},
        {"markdown", required_argument, NULL, OPT_MD},
        {"paired", no_argument, NULL, OPT_PAIRED},
        {"all", no_argument, NULL, OPT_ALL},
        {"details", no_argument, NULL, OPT_DETAILS},
        {"within", required_argument, NULL, OPT_WITHIN},
        CPH_OPTS_HELP_END,
    };
    int opt;
    double v;
    while ((opt = cph_opt_next("diff", argc, argv, longopts)) != -1) {
        switch (opt) {
        case 'h': usage(stdout); return CPH_EXIT_OK;
        case OPT_ALPHA:
            if (cph_opt_double("diff", "--alpha", optarg, 1e-300, nextafter(0.5, 0.0),
                               "a number in (0, 0.5)", &o->alpha))
                return CPH_EXIT_USAGE;
            break;
        case OPT_TOL:
            if (cph_opt_double("diff", "--tolerance", optarg, 0.0, nextafter(100.0, 0.0),
                               "a percentage in [0, 100)", &v))
                return CPH_EXIT_USAGE;
            o->tol = v / 100.0;
            break;
        case OPT_OTHER: o->allow_other = 1; break;
        case OPT_JUNIT: o->junit = optarg; break;
        case OPT_MD: o->markdown = optarg; break;
        case OPT_PAIRED: o->paired = 1; break;
        case OPT_ALL: o->all = 1; break;
        case OPT_DETAILS: o->details = 1; break;
        case OPT_WITHIN:
            if (parse_within(optarg, o)) return CPH_EXIT_USAGE;
            break;
        default: return CPH_EXIT_USAGE;
        }
    }
    if (o->within_base[0]) {
        if (argc - optind != 1)
            return cph_opt_error("diff", "--within",
                                 "expected one results file holding both sides, got %d",
                                 argc - optind);
        o->base = o->next = argv[optind];
        return -1;
    }
    if (argc - optind != 2)
        return cph_opt_error("diff", NULL,
                             "expected two files, BASE and NEW, got %d (see convpick diff --help)",
                             argc - optind);
    o->base = argv[optind];
    o->next = argv[optind + 1];
    return -1;
}

static void print_header(const cph_diff *d) {
    const cph_results *b = d->base, *n = d->next;
    if (d->other_device)
        printf("WARNING: BASE and NEW were measured on different devices (%s \"%s\" and %s "
               "\"%s\"); compared only because --allow-other-device was given.  Differences "
               "may be the machines', not the code's.\n\n",
               b->fingerprint, b->model, n->fingerprint, n->model);
    printf("BASE %s: %s, %zu measurements, device %s\n", b->path, cph_results_kind_name(b->kind),
           b->nitems, b->fingerprint);
    printf("NEW  %s: %s, %zu measurements, device %s\n", n->path, cph_results_kind_name(n->kind),
           n->nitems, n->fingerprint);
    if (b->cold != n->cold)
        printf("note: the cache settings differ (BASE %s, NEW %s)\n",
               b->cold < 0 ? "mixed" : b->cold ? "cold" : "warm",
               n->cold < 0 ? "mixed" : n->cold ? "cold" : "warm");
    if (b->kind == CPH_RESULTS_BENCH && n->kind == CPH_RESULTS_BENCH && b->trials != n->trials)
        printf("note: BASE's samples are %s, NEW's %s: the sides were measured differently, and "
               "the comparison mixes the two\n",
               b->trials == 1 ? "trial medians" : b->trials ? "partly trial medians" : "single samples",
               n->trials == 1 ? "trial medians" : n->trials ? "partly trial medians" : "single samples");
    char ctl[512];
    cph_diff_control_text(d, ctl, sizeof ctl);
    if (ctl[0]) printf("%s\n", ctl);
    if (d->flags & CPH_DIFF_PAIRED)
        printf("method: rounds paired in order; two-sided Wilcoxon signed-rank test at alpha "
               "%g on the log ratios of the rounds' medians, and the paired Hodges-Lehmann ratio "
               "NEW/BASE with its distribution-free %g %% interval; tolerance +-%g %%\n\n",
               d->alpha, 100.0 * (1.0 - d->alpha), 100.0 * d->tol);
    else
        printf("method: two-sided Mann-Whitney U test at alpha %g; ratio NEW/BASE of the "
               "medians, and the Hodges-Lehmann estimate of the ratio (log-time shift) with its "
               "distribution-free %g %% interval; tolerance +-%g %%%s\n\n",
               d->alpha, 100.0 * (1.0 - d->alpha), 100.0 * d->tol,
               d->flags & CPH_DIFF_CHOSEN_ONLY && b->kind == CPH_RESULTS_TABLE &&
                       n->kind == CPH_RESULTS_TABLE
                   ? "; each entry's choice only (--all: every candidate)"
               : d->chosen_rows_only ? "; the table's chosen rows only (--all: every row)"
                                     : "");
}

/* The algo column: "chosen=blocked" for a bench row of a table's choice. */
static void algo_text(const cph_result_item *it, char *buf, size_t cap) {
    snprintf(buf, cap, "%s%s%s", it->algo, it->chosen_algo[0] ? "=" : "", it->chosen_algo);
}

static void print_pairs(const cph_diff *d) {
    int lw = 5, aw = 4, pw = 6;
    char algo[72];
    for (size_t i = 0; i < d->npairs; i++) {
        const cph_result_item *it = d->pairs[i].base;
        if ((int)strlen(it->layer) > lw) lw = (int)strlen(it->layer);
        algo_text(it, algo, sizeof algo);
        if ((int)strlen(algo) > aw) aw = (int)strlen(algo);
        if ((int)strlen(it->params) > pw) pw = (int)strlen(it->params);
    }
    printf("%-12s  %-*s  %-4s  %3s  %-*s  %-*s  %10s  %10s  %7s  %7s  %-17s  %8s  %s\n", "verdict",
           lw, "layer", "flip", "thr", aw, "algo", pw, "params", "base_ms", "new_ms", "ratio",
           "hl", "interval", "p", "note");
    for (size_t i = 0; i < d->npairs; i++) {
        const cph_diff_pair *p = &d->pairs[i];
        const cph_shift_cmp *c = &p->cmp;
        const cph_result_item *it = p->base;
        char hl[16] = "-", ci[32] = "-", pv[16] = "-";
        if (p->compared) {
            snprintf(hl, sizeof hl, "%.4f", c->ratio);
            snprintf(pv, sizeof pv, "%.2g", c->mwu.p);
            if (c->bounded) snprintf(ci, sizeof ci, "[%.4f, %.4f]", c->ratio_lo, c->ratio_hi);
            else snprintf(ci, sizeof ci, "unbounded");
        }
        algo_text(it, algo, sizeof algo);
        printf("%-12s  %-*s  %-4s  %3d  %-*s  %-*s  %10.4g  %10.4g  %7.4f  %7s  %-17s  %8s  %s\n",
               cph_shift_verdict_name(p->verdict), lw, it->layer, cph_flip_word(it->flip),
               it->threads, aw, algo, pw, it->params[0] ? it->params : "-",
               1e3 * c->base_median, 1e3 * c->new_median, c->median_ratio, hl, ci, pv, p->note);
    }
}

static void print_rest(const cph_diff *d, int details) {
    char label[512];
    if (d->nchanges) {
        printf("\nchanged choices (%zu):\n", d->nchanges);
        for (size_t i = 0; i < d->nchanges; i++) {
            const cph_choice_change *ch = &d->changes[i];
            printf("  %s flip=%s t=%d: BASE chose %s%s%s%s, NEW chooses %s%s%s%s; ", ch->next->layer,
                   cph_flip_word(ch->next->flip), ch->next->threads, ch->base->algo,
                   ch->base->params[0] ? " [" : "", ch->base->params,
                   ch->base->params[0] ? "]" : "", ch->next->algo, ch->next->params[0] ? " [" : "",
                   ch->next->params, ch->next->params[0] ? "]" : "");
            if (ch->old_in_new && isfinite(ch->next->median) && ch->next->median > 0) {
                const double r = ch->old_in_new->median / ch->next->median;
                printf("BASE's choice now takes %.4g ms, %.3g times NEW's choice (%.4g ms)%s\n",
                       1e3 * ch->old_in_new->median, r, 1e3 * ch->next->median,
                       r < 1.0 ? ": NEW chose a slower candidate" : "");
            } else
                printf("NEW did not measure BASE's choice\n");
        }
    }
    if (details) {
        for (size_t i = 0; i < d->nonly_base; i++) {
            cph_diff_item_label(d->only_base[i], label, sizeof label);
            printf("%sonly in BASE: %s (%s)\n", i ? "" : "\n", label, d->only_base[i]->where);
        }
        for (size_t i = 0; i < d->nonly_next; i++) {
            cph_diff_item_label(d->only_next[i], label, sizeof label);
            printf("%sonly in NEW: %s (%s)\n", i || d->nonly_base ? "" : "\n", label,
                   d->only_next[i]->where);
        }
    } else if (d->nonly_base || d->nonly_next) {
        printf("\nnot in both: %zu measurements only in BASE, %zu only in NEW (--details lists "
               "them)\n",
               d->nonly_base, d->nonly_next);
    }
    if (d->total_entries)
        printf("\nchoices: %zu entries in both; %zu of BASE's were confident (over the best other "
               "algorithm), of those NEW chose the same algorithm in %zu (%.0f %%), with the same "
               "parameters in %zu%s\n",
               d->total_entries, d->confident_base, d->confident_same_algo,
               d->confident_base
                   ? 100.0 * (double)d->confident_same_algo / (double)d->confident_base
                   : 100.0,
               d->confident_same, d->confident_base ? "" : " (none to reproduce)");
    if (isfinite(d->changed_cost_max))
        printf("changed choices, BASE's choice re-measured in NEW: worst %.3fx NEW's choice, "
               "median %.3fx\n",
               d->changed_cost_max, d->changed_cost_median);
    if (d->total_entries && d->total_base > 0)
        printf("\nnetwork: %zu entries in both, sum of the chosen medians BASE %.4g ms, NEW %.4g "
               "ms, ratio %.4f\n",
               d->total_entries, 1e3 * d->total_base, 1e3 * d->total_next,
               d->total_next / d->total_base);
    const cph_diff_network *w = &d->network;
    if (w->rows && w->base > 0) {
        printf("\nnetwork: %zu chosen rows in both, sum of count x median BASE %.4g ms, NEW %.4g "
               "ms%s, ratio %.4f",
               w->rows, 1e3 * w->base, 1e3 * w->next,
               d->control.drift ? " (drift-corrected)" : "", w->next / w->base);
        if (w->compared && w->cmp.bounded)
            printf("; over the trials: %s, HL %.4f, %.1f %% CI %.4f..%.4f, p = %.2g\n",
                   cph_shift_verdict_name(w->verdict), w->cmp.ratio, 100.0 * w->cmp.coverage,
                   w->cmp.ratio_lo, w->cmp.ratio_hi, w->cmp.mwu.p);
        else
            printf("\n");
    }
    if (d->base->nfailed || d->next->nfailed)
        printf("\nnot measured (failed or disqualified): %zu in BASE, %zu in NEW\n",
               d->base->nfailed, d->next->nfailed);
    char drift[96] = "";
    if (d->control.drift)
        snprintf(drift, sizeof drift, "; machine drift %.3fx (control), rows drift-corrected",
                 d->control.factor);
    printf("\nsummary: %zu compared: %zu slower, %zu inconclusive, %zu unchanged, %zu faster; "
           "%zu only in BASE, %zu only in NEW%s%s\n",
           d->npairs, d->counts[CPH_SHIFT_SLOWER], d->counts[CPH_SHIFT_INCONCLUSIVE],
           d->counts[CPH_SHIFT_UNCHANGED], d->counts[CPH_SHIFT_FASTER], d->nonly_base,
           d->nonly_next, drift, d->counts[CPH_SHIFT_SLOWER] ? ": REGRESSION" : "");
}

/* One round of --paired: a file, or its parts joined by '+' ("a.json+b.json",
 * modified in place).  Returns 0, or -1 with one line in msg (round freed). */
static int read_round(char *spec, cph_results *round, char *msg, size_t cap) {
    char *save = NULL;
    const char *first = strtok_r(spec, "+", &save);
    if (!first || cph_results_read(first, round, msg, cap) != CP_OK) {
        if (!first) snprintf(msg, cap, "an empty round");
        return -1;
    }
    for (char *part = strtok_r(NULL, "+", &save); part; part = strtok_r(NULL, "+", &save)) {
        cph_results piece;
        int jr = cph_results_read(part, &piece, msg, cap) == CP_OK ? 0 : 2;
        if (jr == 0) jr = cph_results_join(round, &piece);
        if (jr == 1)
            snprintf(msg, cap, "--paired: %s: the parts of a round come from different devices",
                     part);
        else if (jr < 0)
            snprintf(msg, cap, "out of memory (%s)", part);
        if (jr != 0) {
            cph_results_free(round);
            return -1;
        }
    }
    return 0;
}

/* One side: a file, or (--paired) a comma-separated list of rounds folded
 * into trials.  Returns 0, or the exit code after the error line. */
static int read_side(const diff_opts *o, const char *arg, const char *side, cph_results *out) {
    char msg[1024];
    if (!o->paired) {
        if (cph_results_read(arg, out, msg, sizeof msg) == CP_OK) return 0;
        cph_err("diff: %s", msg);
        return CPH_EXIT_USAGE;
    }
    enum { MAX_ROUNDS = 400 };
    cph_results *r = calloc(MAX_ROUNDS, sizeof *r);
    char *list = strdup(arg), *save = NULL;
    size_t n = 0;
    int rc = 0;
    if (!r || !list) {
        cph_err("diff: out of memory");
        rc = CPH_EXIT_USAGE;
        goto out;
    }
    for (char *f = strtok_r(list, ",", &save); f; f = strtok_r(NULL, ",", &save)) {
        if (n == MAX_ROUNDS) {
            cph_err("diff: %s: more than %d rounds", side, MAX_ROUNDS);
            rc = CPH_EXIT_USAGE;
            goto out;
        }
        if (read_round(f, &r[n], msg, sizeof msg) != 0) {
            cph_err("diff: %s", msg);
            rc = CPH_EXIT_USAGE;
            goto out;
        }
        n++;
    }
    if (n < 2) {
        cph_err("diff: --paired: %s needs at least 2 rounds (comma-separated files), got %zu",
                side, n);
        rc = CPH_EXIT_USAGE;
        goto out;
    }
    size_t dropped;
    int other;
    if (cph_results_fold_rounds(r, n, out, &dropped, &other) != 0) {
        cph_err("diff: out of memory");
        rc = CPH_EXIT_USAGE;
        goto out;
    }
    if (other) {
        cph_err("diff: --paired: the rounds of %s come from different devices", side);
        cph_results_free(out);
        rc = CPH_EXIT_USAGE;
        goto out;
    }
    if (dropped)
        printf("note: %zu measurements of %s are missing from some round and are left out\n",
               dropped, side);
out:
    for (size_t i = 0; r && i < n; i++) cph_results_free(&r[i]);
    free(r);
    free(list);
    return rc;
}

/* --within: both sides from one file.  Returns 0, or the exit code after the
 * error line. */
static int read_within(const diff_opts *o, cph_results *b, cph_results *n) {
    char msg[1024];
    cph_results all;
    if (cph_results_read(o->base, &all, msg, sizeof msg) != CP_OK) {
        cph_err("diff: %s", msg);
        return CPH_EXIT_USAGE;
    }
    size_t unpaired = 0;
    const int rc = cph_results_split_within(&all, o->within_base, o->within_next, b, n, &unpaired);
    cph_results_free(&all);
    if (rc) {
        cph_err("diff: out of memory");
        return CPH_EXIT_USAGE;
    }
    if (b->nitems == 0) {
        cph_err("diff: --within %s,%s: %s has no pair of rows %s_X and %s_X measured at the same "
                "point with the same number of trials (run bench with both sides' algorithms)",
                o->within_base, o->within_next, o->base, o->within_base, o->within_next);
        cph_results_free(b);
        cph_results_free(n);
        return CPH_EXIT_USAGE;
    }
    printf("in one process: BASE = rows %s_*, NEW = rows %s_* of %s; trial r of a pair taken "
           "back to back in round r\n",
           o->within_base, o->within_next, o->base);
    if (unpaired)
        printf("note: %zu rows of either side have no twin with as many trials and are left out\n",
               unpaired);
    return 0;
}

static int run_diff(const diff_opts *o) {
    cph_results b, n;
    char msg[1024];
    int rd;
    if (o->within_base[0]) {
        if ((rd = read_within(o, &b, &n)) != 0) return rd;
    } else {
        if ((rd = read_side(o, o->base, "BASE", &b)) != 0) return rd;
        if ((rd = read_side(o, o->next, "NEW", &n)) != 0) {
            cph_results_free(&b);
            return rd;
        }
    }
    int rc = CPH_EXIT_OK;
    cph_diff d;
    memset(&d, 0, sizeof d);
    if (strcmp(b.fingerprint, n.fingerprint) != 0 && !o->allow_other) {
        cph_err("diff: BASE %s was measured on device %s, NEW %s on device %s; pass "
                "--allow-other-device to compare anyway",
                o->base, b.fingerprint, o->next, n.fingerprint);
        rc = CPH_EXIT_USAGE;
        goto done;
    }
    const unsigned flags = (o->paired ? CPH_DIFF_PAIRED : 0u) | (o->all ? 0u : CPH_DIFF_CHOSEN_ONLY);
    if (cph_diff_build(&b, &n, o->alpha, o->tol, flags, &d)) {
        cph_err("diff: out of memory");
        rc = CPH_EXIT_USAGE;
        goto done;
    }
    /* Two tables whose every common entry changed its choice pair no
     * measurement, but they have entries in common: the changes are the report. */
    if (!d.npairs && !d.total_entries) {
        cph_err("diff: %s and %s have no measurement in common (same shape, flip, threads, "
                "algorithm and parameters)", o->base, o->next);
        rc = CPH_EXIT_USAGE;
        goto done;
    }
    print_header(&d);
    print_pairs(&d);
    print_rest(&d, o->details);
    rc = d.counts[CPH_SHIFT_SLOWER] ? CPH_EXIT_FAIL : CPH_EXIT_OK;
    if (o->junit) {
        if (cph_diff_write_junit(&d, o->junit, msg, sizeof msg) != CP_OK) {
            cph_err("diff: %s", msg);
            rc = CPH_EXIT_USAGE;
        } else {
            printf("wrote %s\n", o->junit);
        }
    }
    if (o->markdown) {
        if (cph_diff_write_markdown(&d, o->markdown, msg, sizeof msg) != CP_OK) {
            cph_err("diff: %s", msg);
            rc = CPH_EXIT_USAGE;
        } else {
            printf("wrote %s\n", o->markdown);
        }
    }
done:
    cph_diff_free(&d);
    cph_results_free(&b);
    cph_results_free(&n);
    return rc;
}

int cph_cmd_diff(int argc, char **argv) {
    diff_opts o = {0.01, 0.05, 0, 0, 0, 0, NULL, NULL, NULL, NULL, "", ""};
    const int rc = parse(argc, argv, &o);
    return rc >= 0 ? rc : run_diff(&o);
}
