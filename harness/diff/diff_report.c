/* JUnit XML and Markdown reports of a comparison (diff_report.h).  Each is
 * built in memory and then written atomically, so a CI job never picks up
 * half a report. */
#define _POSIX_C_SOURCE 200809L
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "algos/core/cpa.h"
#include "harness/diff/diff_report.h"
#include "harness/select/selection.h"
#include "harness/io/rawfile.h"

void cph_xml_escape(FILE *f, const char *s) {
    for (const unsigned char *p = (const unsigned char *)s; *p; p++) {
        switch (*p) {
        case '&': fputs("&amp;", f); break;
        case '<': fputs("&lt;", f); break;
        case '>': fputs("&gt;", f); break;
        case '"': fputs("&quot;", f); break;
        case '\'': fputs("&apos;", f); break;
        default:
            if (*p < 0x20 && *p != '\t' && *p != '\n' && *p != '\r')
                fputc('?', f);
            else
                fputc(*p, f);
        }
    }
}

/* A report being built in memory. */
typedef struct report {
    FILE *f;
    char *buf; /* set by the memory stream on close */
    size_t len;
} report;

static int report_open(report *r, const char *path, char *msg, size_t cap) {
    r->buf = NULL;
    r->len = 0;
    r->f = open_memstream(&r->buf, &r->len);
    if (!r->f) cpa_fail(CP_ENOMEM, msg, cap, "%s: out of memory building the report", path);
    return r->f != NULL;
}

/* Closes the memory stream and writes the report out atomically. */
static cp_status report_finish(report *r, const char *path, char *msg, size_t cap) {
    const int bad = fclose(r->f) != 0;
    if (bad || !r->buf) {
        free(r->buf);
        return cpa_fail(CP_ENOMEM, msg, cap, "%s: out of memory building the report", path);
    }
    const cp_status st = cph_write_atomic(path, r->buf, r->len, msg, cap);
    free(r->buf);
    return st;
}

static const char *kind_of(const cph_diff *d) {
    return d->base->kind == d->next->kind ? cph_results_kind_name(d->base->kind) : "mixed";
}

cp_status cph_diff_write_junit(const cph_diff *d, const char *path, char *msg, size_t cap) {
    report rep;
    if (!report_open(&rep, path, msg, cap)) return CP_ENOMEM;
    FILE *f = rep.f;
    const size_t fails = d->counts[CPH_SHIFT_SLOWER];
    char line[1024], label[512];
    fprintf(f, "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n");
    fprintf(f, "<testsuites name=\"convpick diff\" tests=\"%zu\" failures=\"%zu\" errors=\"0\">\n",
            d->npairs, fails);
    fprintf(f, "  <testsuite name=\"convpick diff (");
    cph_xml_escape(f, kind_of(d));
    fprintf(f, ")\" tests=\"%zu\" failures=\"%zu\" errors=\"0\" skipped=\"0\">\n", d->npairs, fails);
    fprintf(f, "    <properties>\n      <property name=\"base\" value=\"");
    cph_xml_escape(f, d->base->path);
    fprintf(f, "\"/>\n      <property name=\"new\" value=\"");
    cph_xml_escape(f, d->next->path);
    fprintf(f, "\"/>\n      <property name=\"alpha\" value=\"%g\"/>\n"
               "      <property name=\"tolerance_pct\" value=\"%g\"/>\n"
               "      <property name=\"other_device\" value=\"%s\"/>\n",
            d->alpha, 100.0 * d->tol, d->other_device ? "true" : "false");
    char ctl[512];
    cph_diff_control_text(d, ctl, sizeof ctl);
    if (d->control.compared)
        fprintf(f, "      <property name=\"control_ratio\" value=\"%.6g\"/>\n"
                   "      <property name=\"control_verdict\" value=\"%s\"/>\n",
                d->control.cmp.ratio, cph_shift_verdict_name(d->control.verdict));
    fprintf(f, "      <property name=\"drift\" value=\"%s\"/>\n"
               "      <property name=\"drift_factor\" value=\"%.6g\"/>\n",
            d->control.drift ? "true" : "false", d->control.factor);
    if (ctl[0]) {
        fprintf(f, "      <property name=\"control\" value=\"");
        cph_xml_escape(f, ctl);
        fprintf(f, "\"/>\n");
    }
    fprintf(f, "    </properties>\n");
    for (size_t i = 0; i < d->npairs; i++) {
        const cph_diff_pair *p = &d->pairs[i];
        cph_diff_item_label(p->base, label, sizeof label);
        cph_diff_pair_figures(d, p, line, sizeof line);
        fprintf(f, "    <testcase classname=\"convpick.diff.");
        cph_xml_escape(f, p->base->layer);
        fprintf(f, "\" name=\"");
        cph_xml_escape(f, label);
        fprintf(f, "\" time=\"%.9f\">\n", isfinite(p->cmp.new_median) ? p->cmp.new_median : 0.0);
        if (p->verdict == CPH_SHIFT_SLOWER) {
            fprintf(f, "      <failure type=\"regression\" message=\"slower: ");
            cph_xml_escape(f, line);
            fprintf(f, "\">");
            cph_xml_escape(f, label);
            if (d->control.drift)
                fprintf(f, ": NEW is slower than BASE beyond the tolerance, significant at alpha, "
                           "after dividing NEW's times by the machine drift %.4f that the "
                           "control showed.\n",
                        d->control.factor);
            else
                fprintf(f, ": NEW is slower than BASE beyond the tolerance, significant at alpha.\n");
            cph_xml_escape(f, line);
            fprintf(f, "</failure>\n");
        }
        fprintf(f, "      <system-out>%s: ", cph_shift_verdict_name(p->verdict));
        cph_xml_escape(f, line);
        fprintf(f, "</system-out>\n    </testcase>\n");
    }
    fprintf(f, "  </testsuite>\n</testsuites>\n");
    return report_finish(&rep, path, msg, cap);
}

/* A Markdown table cell: '|' escaped, newlines flattened. */
static void md_cell(FILE *f, const char *s) {
    for (; *s; s++) {
        if (*s == '|')
            fputs("\\|", f);
        else if (*s == '\n' || *s == '\r')
            fputc(' ', f);
        else
            fputc(*s, f);
    }
}

cp_status cph_diff_write_markdown(const cph_diff *d, const char *path, char *msg, size_t cap) {
    report rep;
    if (!report_open(&rep, path, msg, cap)) return CP_ENOMEM;
    FILE *f = rep.f;
    const size_t fails = d->counts[CPH_SHIFT_SLOWER];
    fprintf(f, "## convpick speed check: %s\n\n",
            fails ? "regression" : "no regression");
    if (d->other_device)
        fprintf(f, "> **Warning:** BASE and NEW were measured on different devices (%s, %s); "
                   "compared because --allow-other-device was given.\n\n",
                d->base->fingerprint, d->next->fingerprint);
    fprintf(f, "BASE `");
    md_cell(f, d->base->path);
    fprintf(f, "` (%s), NEW `", cph_results_kind_name(d->base->kind));
    md_cell(f, d->next->path);
    fprintf(f, "` (%s).  %zu compared: **%zu slower**, %zu inconclusive, %zu unchanged, "
               "%zu faster; %zu only in BASE, %zu only in NEW.\n\n",
            cph_results_kind_name(d->next->kind), d->npairs, fails,
            d->counts[CPH_SHIFT_INCONCLUSIVE], d->counts[CPH_SHIFT_UNCHANGED],
            d->counts[CPH_SHIFT_FASTER], d->nonly_base, d->nonly_next);
    fprintf(f, "Verdicts: Mann-Whitney U test at alpha %g, Hodges-Lehmann ratio with its "
               "%g %% interval, tolerance +-%g %% (docs/diff.md).\n\n",
            d->alpha, 100.0 * (1.0 - d->alpha), 100.0 * d->tol);
    char ctl[512];
    cph_diff_control_text(d, ctl, sizeof ctl);
    if (ctl[0]) {
        fprintf(f, "%s", d->control.drift ? "> **Machine drift:** " : "Control: ");
        md_cell(f, ctl);
        fprintf(f, "%s\n\n", d->control.drift ? ". Ratios below are drift-corrected; "
                                                 "`new ms` is as measured." : "");
    }
    if (d->network.rows && d->network.base > 0) {
        fprintf(f, "Network (%zu chosen rows, count-weighted%s): BASE %.4g ms, NEW %.4g ms, "
                   "ratio %.4f",
                d->network.rows, d->control.drift ? ", drift-corrected" : "",
                1e3 * d->network.base, 1e3 * d->network.next, d->network.next / d->network.base);
        if (d->network.compared && d->network.cmp.bounded)
            fprintf(f, "; over the trials %s, interval %.4f..%.4f",
                    cph_shift_verdict_name(d->network.verdict), d->network.cmp.ratio_lo,
                    d->network.cmp.ratio_hi);
        fprintf(f, ".\n\n");
    }
    fprintf(f, "| verdict | layer | flip | threads | algo | params | base ms | new ms | ratio | "
               "HL ratio | interval | p |\n|---|---|---|---:|---|---|---:|---:|---:|---:|---|---:|\n");
    for (size_t i = 0; i < d->npairs; i++) {
        const cph_diff_pair *p = &d->pairs[i];
        const cph_shift_cmp *c = &p->cmp;
        fprintf(f, "| %s%s%s | ", p->verdict == CPH_SHIFT_SLOWER ? "**" : "",
                cph_shift_verdict_name(p->verdict), p->verdict == CPH_SHIFT_SLOWER ? "**" : "");
        md_cell(f, p->base->layer);
        fprintf(f, " | %s | %d | ", cph_flip_word(p->base->flip), p->base->threads);
        md_cell(f, p->base->algo);
        fprintf(f, " | ");
        md_cell(f, p->base->params[0] ? p->base->params : "-");
        fprintf(f, " | %.4g | %.4g | %.4f | ", 1e3 * c->base_median, 1e3 * c->new_median,
                c->median_ratio);
        if (p->compared && c->bounded)
            fprintf(f, "%.4f | %.4f..%.4f | %.2g |\n", c->ratio, c->ratio_lo, c->ratio_hi,
                    c->mwu.p);
        else if (p->compared)
            fprintf(f, "%.4f | unbounded | %.2g |\n", c->ratio, c->mwu.p);
        else {
            fprintf(f, "- | ");
            md_cell(f, p->note);
            fprintf(f, " | - |\n");
        }
    }
    if (d->nchanges) {
        fprintf(f, "\n### Changed choices\n\n| layer | flip | threads | BASE chose | NEW chose | "
                   "BASE's choice in NEW |\n|---|---|---:|---|---|---|\n");
        for (size_t i = 0; i < d->nchanges; i++) {
            const cph_choice_change *ch = &d->changes[i];
            fprintf(f, "| ");
            md_cell(f, ch->next->layer);
            fprintf(f, " | %s | %d | ", cph_flip_word(ch->next->flip),
                    ch->next->threads);
            md_cell(f, ch->base->algo);
            fprintf(f, "%s", ch->base->params[0] ? " " : "");
            md_cell(f, ch->base->params);
            fprintf(f, " | ");
            md_cell(f, ch->next->algo);
            fprintf(f, "%s", ch->next->params[0] ? " " : "");
            md_cell(f, ch->next->params);
            if (ch->old_in_new && isfinite(ch->next->median) && ch->next->median > 0) {
                const double r = ch->old_in_new->median / ch->next->median;
                fprintf(f, " | %.4g ms (%.3g times NEW's choice) |\n",
                        1e3 * ch->old_in_new->median, r);
            } else
                fprintf(f, " | not measured |\n");
        }
    }
    if (d->nonly_base || d->nonly_next) {
        char label[512];
        fprintf(f, "\n### Unmatched\n\n");
        for (size_t i = 0; i < d->nonly_base; i++) {
            cph_diff_item_label(d->only_base[i], label, sizeof label);
            fprintf(f, "- only in BASE: `");
            md_cell(f, label);
            fprintf(f, "`\n");
        }
        for (size_t i = 0; i < d->nonly_next; i++) {
            cph_diff_item_label(d->only_next[i], label, sizeof label);
            fprintf(f, "- only in NEW: `");
            md_cell(f, label);
            fprintf(f, "`\n");
        }
    }
    return report_finish(&rep, path, msg, cap);
}
