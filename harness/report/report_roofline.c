/* One roofline per thread count (report.h): log-log axes, arithmetic
 * intensity (FLOP/byte) across, GFLOP/s up; the bandwidth roof(s) as the
 * slope bw x AI, the compute roof(s) flat, every measured candidate as a
 * point whose shape and colour name its algorithm (shapes alone tell them
 * apart in greyscale), the choice ringed, noisy measurements dashed.
 *
 * One source's points (a table or bench results), every source's roofs.
 * Each point is <g class="rl-pt" transform="translate(X,Y)" data-ai data-gflops
 * ...>; the <svg> carries its mapping (data-px0, data-py0, data-pw, data-ph and
 * the decades data-lx0..data-lx1, data-ly0..data-ly1) so a reader can check
 *   X = px0 + pw (log10 ai - lx0) / (lx1 - lx0),
 *   Y = py0 + ph (1 - (log10 gflops - ly0) / (ly1 - ly0)). */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "harness/io/textbuf.h"
#include "harness/report/report.h"

enum { PX0 = 78, PY0 = 24, PW = 560, PH = 330, SVG_W = 800, SVG_H = 410, MAX_ALGOS = 16 };

static const char *const colours[] = {"#1f4e79", "#b5541b", "#2f7d32", "#7b2d8e",
                                      "#8a7400", "#3d3d3d", "#0e7c86", "#a0224a"};

/* Marker i centred on 0,0: circle, triangle, square, diamond, cross, ... */
static void marker(cph_textbuf *b, int i, const char *colour) {
    const char *fill = i / 5 % 2 ? "white" : colour;
    switch (i % 5) {
    case 0: cph_tb_printf(b, "<circle r=\"4.5\" fill=\"%s\" stroke=\"%s\"/>", fill, colour); break;
    case 1:
        cph_tb_printf(b, "<path d=\"M0,-5.5L5,4L-5,4Z\" fill=\"%s\" stroke=\"%s\"/>", fill, colour);
        break;
    case 2:
        cph_tb_printf(b, "<rect x=\"-4\" y=\"-4\" width=\"8\" height=\"8\" fill=\"%s\" "
                      "stroke=\"%s\"/>", fill, colour);
        break;
    case 3:
        cph_tb_printf(b, "<path d=\"M0,-5.5L5.5,0L0,5.5L-5.5,0Z\" fill=\"%s\" stroke=\"%s\"/>",
                      fill, colour);
        break;
    default:
        cph_tb_printf(b, "<path d=\"M-5,-5L5,5M-5,5L5,-5\" stroke=\"%s\" stroke-width=\"2\"/>",
                      colour);
    }
}

typedef struct axes {
    double lx0, lx1, ly0, ly1;
} axes;

static double xpix(const axes *a, double v) {
    return PX0 + PW * (log10(v) - a->lx0) / (a->lx1 - a->lx0);
}
static double ypix(const axes *a, double v) {
    return PY0 + PH * (1.0 - (log10(v) - a->ly0) / (a->ly1 - a->ly0));
}

static int algo_index(const char **names, int *n, const char *algo) {
    for (int i = 0; i < *n; i++)
        if (strcmp(names[i], algo) == 0) return i;
    if (*n < MAX_ALGOS) names[(*n)++] = algo;
    return *n - 1;
}

/* The roofs drawn for threads: those of the nearest thread count measured. */
static int roof_threads(const cph_report *r, int threads) {
    int best = -1;
    for (size_t i = 0; i < r->n; i++)
        for (int k = 0; k < r->src[i].nroofs; k++) {
            const int t = r->src[i].roofs[k].threads;
            if (best < 0 || abs(t - threads) < abs(best - threads)) best = t;
        }
    return best;
}

static void extent(const cph_report *r, size_t src, int threads, int rt, double *x, double *y) {
    x[0] = y[0] = INFINITY;
    x[1] = y[1] = 0;
    for (size_t i = 0; i < r->n; i++) {
        for (size_t k = 0; k < r->src[i].nentries && i == src; k++) {
            const cph_rep_entry *e = &r->src[i].entries[k];
            if (e->threads != threads) continue;
            const double ai = cph_rep_intensity(&e->shape);
            x[0] = fmin(x[0], ai), x[1] = fmax(x[1], ai);
            for (size_t c = 0; c < e->ncands; c++) {
                const double g = cph_rep_gflops(&e->shape, e->cands[c].median);
                y[0] = fmin(y[0], g), y[1] = fmax(y[1], g);
            }
        }
        for (int k = 0; k < r->src[i].nroofs; k++) {
            const cph_rep_roof *f = &r->src[i].roofs[k];
            if (f->threads == rt && f->compute) y[1] = fmax(y[1], f->value);
        }
    }
    const double peak = cph_rep_roof_for(r, 1, threads), bw = cph_rep_roof_for(r, 0, threads);
    if (peak > 0 && bw > 0) { /* the ridge and some of the slope in view */
        x[0] = fmin(x[0], peak / bw / 4);
        x[1] = fmax(x[1], 2 * peak / bw);
    }
    if (!(x[0] < INFINITY)) x[0] = 1, x[1] = 100;
    if (!(y[0] < INFINITY)) y[0] = 1, y[1] = 100;
}

static void axis_ticks(cph_textbuf *b, const axes *a) {
    for (int d = (int)a->lx0; d <= (int)a->lx1; d++) {
        const double x = xpix(a, pow(10, d));
        cph_tb_printf(b, "<line class=\"grid\" x1=\"%.1f\" y1=\"%d\" x2=\"%.1f\" y2=\"%d\"/>"
                      "<text x=\"%.1f\" y=\"%d\" text-anchor=\"middle\">%g</text>",
                      x, PY0, x, PY0 + PH, x, PY0 + PH + 16, pow(10, d));
    }
    for (int d = (int)a->ly0; d <= (int)a->ly1; d++) {
        const double y = ypix(a, pow(10, d));
        cph_tb_printf(b, "<line class=\"grid\" x1=\"%d\" y1=\"%.1f\" x2=\"%d\" y2=\"%.1f\"/>"
                      "<text x=\"%d\" y=\"%.1f\" text-anchor=\"end\">%g</text>",
                      PX0, y, PX0 + PW, y, PX0 - 6, y + 4, pow(10, d));
    }
    cph_tb_printf(b, "<rect class=\"frame\" x=\"%d\" y=\"%d\" width=\"%d\" height=\"%d\"/>"
                  "<text x=\"%d\" y=\"%d\" text-anchor=\"middle\">arithmetic intensity "
                  "(FLOP/byte, minimal float32 traffic)</text>"
                  "<text transform=\"translate(18,%d) rotate(-90)\" text-anchor=\"middle\">"
                  "performance (GFLOP/s)</text>",
                  PX0, PY0, PW, PH, PX0 + PW / 2, PY0 + PH + 36, PY0 + PH / 2);
}

static void roofs(cph_textbuf *b, const cph_report *r, const axes *a, int rt) {
    const double xl = pow(10, a->lx0), xr = pow(10, a->lx1);
    for (size_t i = 0; i < r->n; i++)
        for (int k = 0; k < r->src[i].nroofs; k++) {
            const cph_rep_roof *f = &r->src[i].roofs[k];
            if (f->threads != rt) continue;
            if (f->compute) {
                const double y = ypix(a, f->value);
                cph_tb_printf(b, "<line class=\"roof\" x1=\"%d\" y1=\"%.1f\" x2=\"%d\" "
                              "y2=\"%.1f\"/><text class=\"rooflabel\" x=\"%d\" y=\"%.1f\">",
                              PX0, y, PX0 + PW, y, PX0 + 4, y - 4);
                cph_tb_escaped(b, f->name);
                cph_tb_printf(b, " %.1f GFLOP/s</text>", f->value);
            } else {
                /* bw x AI, clipped to the plot */
                double x0 = xl, x1 = xr;
                const double ylo = pow(10, a->ly0), yhi = pow(10, a->ly1);
                if (f->value * x0 < ylo) x0 = ylo / f->value;
                if (f->value * x1 > yhi) x1 = yhi / f->value;
                if (x1 <= x0) continue;
                cph_tb_printf(b, "<line class=\"roof bw\" x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" "
                              "y2=\"%.1f\"/><text class=\"rooflabel\" x=\"%.1f\" y=\"%.1f\">",
                              xpix(a, x0), ypix(a, f->value * x0), xpix(a, x1),
                              ypix(a, f->value * x1), xpix(a, x0) + 4,
                              ypix(a, f->value * x0) - 6);
                cph_tb_escaped(b, f->name);
                cph_tb_printf(b, " %.1f GB/s</text>", f->value);
            }
        }
}

static void points(cph_textbuf *b, const cph_report *r, size_t i, const axes *a, int threads,
                   const char **names, int *nnames) {
    for (size_t k = 0; k < r->src[i].nentries; k++) {
        const cph_rep_entry *e = &r->src[i].entries[k];
        if (e->threads != threads) continue;
        const double ai = cph_rep_intensity(&e->shape);
        for (size_t c = 0; c < e->ncands; c++) {
            const cph_rep_cand *x = &e->cands[c];
            const double g = cph_rep_gflops(&e->shape, x->median);
            const int ai_i = algo_index(names, nnames, x->algo);
            const int chosen = e->choice == (long)c;
            cph_tb_printf(b, "<g class=\"rl-pt\" transform=\"translate(%.2f,%.2f)\" "
                          "data-src=\"%zu\" data-entry=\"%zu\" data-layer=\"", xpix(a, ai),
                          ypix(a, g), i, k);
            cph_tb_escaped(b, e->layer);
            cph_tb_printf(b, "\" data-algo=\"");
            cph_tb_escaped(b, x->algo);
            cph_tb_printf(b, "\" data-params=\"");
            cph_tb_escaped(b, x->params);
            cph_tb_printf(b, "\" data-ai=\"%.6g\" data-gflops=\"%.6g\" data-chosen=\"%d\" "
                          "data-noisy=\"%d\"><title>", ai, g, chosen, x->noisy);
            cph_tb_escaped(b, e->layer);
            cph_tb_printf(b, ": ");
            cph_tb_escaped(b, x->algo);
            cph_tb_printf(b, "%s", x->params[0] ? " (" : "");
            cph_tb_escaped(b, x->params);
            cph_tb_printf(b, "%s, %.3f ms, %.1f GFLOP/s, %.2f FLOP/byte%s%s</title>",
                          x->params[0] ? ")" : "", x->median * 1e3, g, ai,
                          chosen ? ", the choice" : "", x->noisy ? ", noisy" : "");
            marker(b, ai_i, colours[ai_i % 8]);
            if (chosen) cph_tb_printf(b, "<circle class=\"chosen\" r=\"9\"/>");
            if (x->noisy) cph_tb_printf(b, "<circle class=\"noisy\" r=\"12\"/>");
            cph_tb_printf(b, "</g>\n");
        }
    }
}

static void legend(cph_textbuf *b, const char **names, int n) {
    int y = PY0 + 8;
    for (int i = 0; i < n; i++, y += 20) {
        cph_tb_printf(b, "<g transform=\"translate(%d,%d)\">", PX0 + PW + 18, y);
        marker(b, i, colours[i % 8]);
        cph_tb_printf(b, "<text x=\"12\" y=\"4\">");
        cph_tb_escaped(b, names[i]);
        cph_tb_printf(b, "</text></g>");
    }
    cph_tb_printf(b, "<g transform=\"translate(%d,%d)\"><circle class=\"chosen\" r=\"9\"/>"
                  "<text x=\"12\" y=\"4\">the choice</text></g>"
                  "<g transform=\"translate(%d,%d)\"><circle class=\"noisy\" r=\"8\"/>"
                  "<text x=\"12\" y=\"4\">noisy</text></g>",
                  PX0 + PW + 18, y + 6, PX0 + PW + 18, y + 30);
}

void cph_rep_roofline_svg(cph_textbuf *b, const cph_report *r, size_t src, int threads) {
    const int rt = roof_threads(r, threads);
    double x[2], y[2];
    extent(r, src, threads, rt, x, y);
    axes a = {floor(log10(x[0])), ceil(log10(x[1])), floor(log10(y[0])), ceil(log10(y[1]))};
    if (a.lx1 <= a.lx0) a.lx1 = a.lx0 + 1;
    if (a.ly1 <= a.ly0) a.ly1 = a.ly0 + 1;
    cph_tb_printf(b, "<svg xmlns=\"http://www.w3.org/2000/svg\" class=\"roofline\" width=\"%d\" "
                  "height=\"%d\" viewBox=\"0 0 %d %d\" data-threads=\"%d\" data-roof-threads=\"%d\" "
                  "data-px0=\"%d\" data-py0=\"%d\" data-pw=\"%d\" data-ph=\"%d\" "
                  "data-lx0=\"%g\" data-lx1=\"%g\" data-ly0=\"%g\" data-ly1=\"%g\" role=\"img\">"
                  "<title>roofline, %d thread(s)</title>\n",
                  SVG_W, SVG_H, SVG_W, SVG_H, threads, rt, PX0, PY0, PW, PH, a.lx0, a.lx1, a.ly0,
                  a.ly1, threads);
    axis_ticks(b, &a);
    roofs(b, r, &a, rt);
    const char *names[MAX_ALGOS];
    int nnames = 0;
    points(b, r, src, &a, threads, names, &nnames);
    legend(b, names, nnames);
    cph_tb_printf(b, "</svg>\n");
}
