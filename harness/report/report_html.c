/* The report page (report.h): one self-contained HTML document, inline CSS
 * and SVG, no script, no external asset.  Tooltips are SVG <title>s. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "harness/io/textbuf.h"
#include "harness/report/report.h"

static const char *const css =
    "body{font:14px/1.4 'DejaVu Sans',sans-serif;color:#111;margin:24px;max-width:1200px}"
    "h1{font-size:22px}h2{font-size:18px;border-bottom:1px solid #999;margin-top:32px}"
    "h3{font-size:15px}table{border-collapse:collapse;margin:8px 0}"
    "td,th{border:1px solid #bbb;padding:2px 6px;text-align:left;vertical-align:top}"
    "td.num,th.num{text-align:right;font-variant-numeric:tabular-nums}"
    "tr.chosen td{font-weight:bold}details table{font-size:12px}summary{cursor:pointer}.note{color:#444;font-size:13px}"
    "svg text{font:11px 'DejaVu Sans',sans-serif;fill:#111}"
    "svg .grid{stroke:#ddd;stroke-width:1}svg .frame{fill:none;stroke:#333}"
    "svg .roof{stroke:#000;stroke-width:2}svg .roof.bw{stroke-dasharray:6 3}"
    "svg .rooflabel{font-size:10px;fill:#333}"
    "svg .chosen{fill:none;stroke:#000;stroke-width:2}"
    "svg .noisy{fill:none;stroke:#777;stroke-width:1.2;stroke-dasharray:2 2}"
    ".changed td{background:#eee;font-weight:bold}";

static void esc(cph_textbuf *b, const char *s) { cph_tb_escaped(b, s); }

static void device(cph_textbuf *b, const cph_report *r) {
    cph_tb_printf(b, "<h2>Inputs and devices</h2><table><tr><th>file</th><th>kind</th>"
                  "<th>device</th><th>fingerprint</th></tr>");
    for (size_t i = 0; i < r->n; i++) {
        const cph_rep_source *s = &r->src[i];
        cph_tb_printf(b, "<tr><td>");
        esc(b, s->path);
        cph_tb_printf(b, "</td><td>%s</td><td>", cph_rep_kind_name(s->kind));
        esc(b, s->description);
        cph_tb_printf(b, "</td><td><code>");
        esc(b, s->fingerprint);
        cph_tb_printf(b, "</code></td></tr>");
    }
    cph_tb_printf(b, "</table><h3>Roofs measured</h3>");
    int any = 0;
    for (size_t i = 0; i < r->n; i++)
        for (int k = 0; k < r->src[i].nroofs; k++) {
            const cph_rep_roof *f = &r->src[i].roofs[k];
            if (!any++)
                cph_tb_printf(b, "<table id=\"roofs\"><tr><th>from</th><th>roof</th>"
                              "<th class=\"num\">threads</th><th class=\"num\">value</th></tr>");
            cph_tb_printf(b, "<tr><td>");
            esc(b, r->src[i].path);
            cph_tb_printf(b, "</td><td>");
            esc(b, f->name);
            cph_tb_printf(b, "</td><td class=\"num\">%d</td><td class=\"num\">%.2f %s</td></tr>",
                          f->threads, f->value, f->compute ? "GFLOP/s" : "GB/s");
        }
    cph_tb_printf(b, any ? "</table>" : "<p class=\"note\">No roofs: none of the inputs records "
                  "any (give <code>convpick probe --json</code> output or bench results). The "
                  "rooflines below show the points only.</p>");
}

static void cand_cells(cph_textbuf *b, const cph_rep_entry *e, const cph_rep_cand *x) {
    cph_tb_printf(b, "<td>");
    esc(b, x->algo);
    if (x->params[0]) {
        cph_tb_printf(b, " <span class=\"note\">");
        esc(b, x->params);
        cph_tb_printf(b, "</span>");
    }
    cph_tb_printf(b, "</td><td class=\"num\">%.4f</td><td class=\"num\">[%.4f, %.4f]%s</td>"
                  "<td class=\"num\">%.1f</td>", x->median * 1e3, x->ci_lo * 1e3,
                  x->ci_hi * 1e3, x->noisy ? " noisy" : "", cph_rep_gflops(&e->shape, x->median));
    if (isfinite(x->rel_err))
        cph_tb_printf(b, "<td class=\"num\">%.2e</td>", x->rel_err);
    else
        cph_tb_printf(b, "<td class=\"num\">not recorded</td>");
}

static const char *const cand_head =
    "<th>algorithm, parameters</th><th class=\"num\">median ms</th><th class=\"num\">"
    "interval ms</th><th class=\"num\">GFLOP/s</th><th class=\"num\">error vs oracle</th>";

/* Every candidate of e, fastest first, in a nested table that opens on click. */
static void all_candidates(cph_textbuf *b, const cph_rep_entry *e) {
    cph_tb_printf(b, "<td><details><summary>%zu measured</summary><table><tr>%s</tr>",
                  e->ncands, cand_head);
    size_t done[256];
    size_t nd = 0;
    while (nd < e->ncands && nd < 256) {
        long best = -1;
        for (size_t c = 0; c < e->ncands; c++) {
            int used = 0;
            for (size_t k = 0; k < nd; k++) used |= done[k] == c;
            if (!used && (best < 0 || e->cands[c].median < e->cands[best].median)) best = (long)c;
        }
        done[nd++] = (size_t)best;
        cph_tb_printf(b, "<tr%s>", e->choice == best ? " class=\"chosen\"" : "");
        cand_cells(b, e, &e->cands[best]);
        cph_tb_printf(b, "</tr>");
    }
    cph_tb_printf(b, "</table></details></td>");
}

static void runner_up(cph_textbuf *b, const cph_rep_entry *e) {
    cph_tb_printf(b, "<td>");
    if (e->runner[0]) {
        esc(b, e->runner);
        cph_tb_printf(b, ": %+.1f%%", 100 * e->margin);
        if (isfinite(e->margin_lo))
            cph_tb_printf(b, " [%+.1f%%, %+.1f%%]", 100 * e->margin_lo, 100 * e->margin_hi);
        cph_tb_printf(b, ", %s", e->confident ? "confident" : "in the noise");
    } else {
        cph_tb_printf(b, e->choice >= 0 ? "none (one candidate qualified)" : "-");
    }
    cph_tb_printf(b, "</td>");
}

/* One row per layer: the choice (or, in bench results, the fastest) with its
 * interval and error, the runner-up and margin, every candidate on click. */
static void entries(cph_textbuf *b, const cph_rep_source *s, size_t si, int threads) {
    cph_tb_printf(b, "<h3>Per layer</h3><table class=\"layers\"><tr><th>layer</th>"
                  "<th class=\"num\">count</th><th>%s</th><th class=\"num\">median ms</th>"
                  "<th class=\"num\">interval ms</th><th class=\"num\">GFLOP/s</th>"
                  "<th class=\"num\">error vs oracle</th><th>runner-up: margin [interval]</th>"
                  "<th>candidates</th></tr>",
                  s->kind == CPH_REP_TABLE ? "choice" : "fastest measured (no choice recorded)");
    for (size_t k = 0; k < s->nentries; k++) {
        const cph_rep_entry *e = &s->entries[k];
        if (e->threads != threads || !e->ncands) continue;
        long show = e->choice;
        if (show < 0) show = cph_rep_best_of(e, e->cands[0].algo);
        for (size_t c = 0; c < e->ncands && e->choice < 0; c++)
            if (e->cands[c].median < e->cands[show].median) show = (long)c;
        cph_tb_printf(b, "<tr data-src=\"%zu\" data-entry=\"%zu\"><td>", si, k);
        esc(b, e->layer);
        cph_tb_printf(b, "%s</td><td class=\"num\">%d%s</td>",
                      e->flip == CP_CONV ? " (flipped)" : "", e->count, e->count_known ? "" : "*");
        cand_cells(b, e, &e->cands[show]);
        runner_up(b, e);
        all_candidates(b, e);
        cph_tb_printf(b, "</tr>\n");
    }
    cph_tb_printf(b, "</table>");
}

static void total_row(cph_textbuf *b, size_t si, int threads, const char *what,
                      const cph_rep_total *t) {
    cph_tb_printf(b, "<tr><td>");
    esc(b, what);
    cph_tb_printf(b, "</td><td class=\"num total\" data-src=\"%zu\" data-threads=\"%d\" "
                  "data-what=\"", si, threads);
    esc(b, what);
    cph_tb_printf(b, "\" data-seconds=\"%.9g\">%.3f</td><td class=\"num\">%zu</td><td>%s</td>"
                  "</tr>", t->seconds, t->seconds * 1e3, t->layers,
                  t->missing ? "not measured on every layer: the total covers fewer" : "");
}

static void totals(cph_textbuf *b, const cph_rep_source *s, size_t si, int threads) {
    cph_tb_printf(b, "<h3>Network total</h3><p class=\"note\">Sum over layers of count &times; median time. An "
                  "algorithm's total takes its fastest parameter set on each layer.</p>"
                  "<table class=\"totals\"><tr><th>running</th><th class=\"num\">total ms</th>"
                  "<th class=\"num\">layers</th><th></th></tr>");
    if (s->kind == CPH_REP_TABLE) {
        const cph_rep_total t = cph_rep_total_choice(s, threads);
        total_row(b, si, threads, "the table's choice", &t);
    }
    const char *algos[32];
    const int n = cph_rep_algos(s, threads, algos, 32);
    for (int i = 0; i < n; i++) {
        const cph_rep_total t = cph_rep_total_algo(s, threads, algos[i]);
        total_row(b, si, threads, algos[i], &t);
    }
    cph_tb_printf(b, "</table>");
}

void cph_rep_html(cph_textbuf *b, const cph_report *r) {
    cph_tb_printf(b, "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
                  "<title>convpick report</title><style>%s</style></head><body>\n"
                  "<h1>convpick report</h1>", css);
    device(b, r);
    cph_tb_printf(b, "<p class=\"note\">Arithmetic intensity = the layer's FLOPs (2 per "
                  "multiply-add, direct-equivalent) / its minimal traffic: input, weights and "
                  "output each moved once as float32 (4 bytes per element). Times are medians; "
                  "intervals are the confidence intervals of the median recorded with them. "
                  "A count marked * was not recorded by any input and is taken as 1.</p>");
    int th[64];
    const int nt = cph_rep_thread_counts(r, th, 64);
    for (int t = 0; t < nt; t++) {
        cph_tb_printf(b, "<h2>%d thread(s)</h2>", th[t]);
        for (size_t i = 0; i < r->n; i++) {
            const cph_rep_source *s = &r->src[i];
            int has = 0;
            for (size_t k = 0; k < s->nentries && !has; k++) has = s->entries[k].threads == th[t];
            if (!has) continue;
            cph_tb_printf(b, "<h3>%d thread(s): ", th[t]);
            esc(b, s->path);
            cph_tb_printf(b, " (%s)</h3>", cph_rep_kind_name(s->kind));
            cph_rep_roofline_svg(b, r, i, th[t]);
            entries(b, s, i, th[t]);
            totals(b, s, i, th[t]);
        }
    }
    const cph_rep_source *tables[2] = {NULL, NULL};
    for (size_t i = 0; i < r->n && !tables[1]; i++)
        if (r->src[i].kind == CPH_REP_TABLE) tables[tables[0] ? 1 : 0] = &r->src[i];
    if (tables[1]) cph_rep_compare_html(b, tables[0], tables[1]);
    for (size_t i = 0; i < r->n; i++)
        if (r->src[i].kind == CPH_REP_CACHE) cph_rep_cache_html(b, &r->src[i]);
    cph_tb_printf(b, "</body></html>\n");
}
