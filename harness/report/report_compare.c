/* Two tables of two machines side by side (report.h): the entries of the same
 * shape, flip and thread count, which changed choice, and the totals of each
 * over those common entries. */
#include <stdio.h>
#include <string.h>

#include "harness/io/textbuf.h"
#include "harness/report/report.h"

/* b's entry of a's point, or NULL. */
static const cph_rep_entry *match(const cph_rep_source *b, const cph_rep_entry *e) {
    for (size_t k = 0; k < b->nentries; k++) {
        const cph_rep_entry *x = &b->entries[k];
        if (x->threads == e->threads && x->flip == e->flip && cp_shape_equal(&x->shape, &e->shape))
            return x;
    }
    return NULL;
}

size_t cph_rep_common(const cph_rep_source *a, const cph_rep_source *b) {
    size_t n = 0;
    for (size_t k = 0; k < a->nentries; k++) n += match(b, &a->entries[k]) != NULL;
    return n;
}

static void side(cph_textbuf *b, const cph_rep_entry *e) {
    if (e->choice < 0) {
        cph_tb_printf(b, "<td>-</td><td class=\"num\">-</td>");
        return;
    }
    cph_tb_printf(b, "<td>");
    cph_tb_escaped(b, e->cands[e->choice].algo);
    cph_tb_printf(b, "</td><td class=\"num\">%.4f</td>", e->cands[e->choice].median * 1e3);
}

void cph_rep_compare_html(cph_textbuf *b, const cph_rep_source *a, const cph_rep_source *c) {
    cph_tb_printf(b, "<h2>Two tables side by side</h2><p>A: ");
    cph_tb_escaped(b, a->path);
    cph_tb_printf(b, " (");
    cph_tb_escaped(b, a->model);
    cph_tb_printf(b, ", %s)<br>B: ", a->fingerprint);
    cph_tb_escaped(b, c->path);
    cph_tb_printf(b, " (");
    cph_tb_escaped(b, c->model);
    cph_tb_printf(b, ", %s)</p><table id=\"compare\"><tr><th>layer</th><th class=\"num\">"
                  "threads</th><th>choice A</th><th class=\"num\">ms A</th><th>choice B</th>"
                  "<th class=\"num\">ms B</th><th>changed</th></tr>", c->fingerprint);
    double ta = 0, tc = 0;
    size_t changed = 0;
    for (size_t k = 0; k < a->nentries; k++) {
        const cph_rep_entry *e = &a->entries[k], *f = match(c, e);
        if (!f) continue;
        const int ch = e->choice >= 0 && f->choice >= 0 &&
                       (strcmp(e->cands[e->choice].algo, f->cands[f->choice].algo) != 0 ||
                        strcmp(e->cands[e->choice].params, f->cands[f->choice].params) != 0);
        changed += (size_t)ch;
        if (e->choice >= 0) ta += e->count * e->cands[e->choice].median;
        if (f->choice >= 0) tc += e->count * f->cands[f->choice].median;
        cph_tb_printf(b, "<tr%s><td>", ch ? " class=\"changed\"" : "");
        cph_tb_escaped(b, e->layer);
        cph_tb_printf(b, "</td><td class=\"num\">%d</td>", e->threads);
        side(b, e);
        side(b, f);
        cph_tb_printf(b, "<td>%s</td></tr>\n", ch ? "changed" : "same");
    }
    cph_tb_printf(b, "</table><p>%zu of %zu common entries changed choice. Network total over "
                  "the common entries (count &times; median of the choice, all thread counts "
                  "together): A <span class=\"cmp-total\" data-seconds=\"%.9g\">%.3f ms</span>, B "
                  "<span class=\"cmp-total\" data-seconds=\"%.9g\">%.3f ms</span>.</p>",
                  changed, cph_rep_common(a, c), ta, ta * 1e3, tc, tc * 1e3);
}
