/* The cache study's chart (cache_chart.h).  Greyscale: a family is told by
 * the fill's lightness, a flipped kind by its hatching (preflip solid,
 * flipidx hatched, any other dotted). */
#include "harness/cache/cache_chart.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

enum { MAX_SERIES = 24, MAX_LEVELS = 8, LEFT = 72, PANEL_H = 170, GAP = 46, TOP = 60 };

static const char *const fills[] = {"#17365d", "#d98b3a", "#5a9b5e", "#b7b7e0", "#6b4226",
                                    "#9ec9d6"};

typedef struct series {
    char id[48];      /* "family kind", e.g. "direct.o0 preflip" */
    char family[32], kind[16];
} series;

typedef struct chart {
    series s[MAX_SERIES];
    int ns;
    char level[MAX_LEVELS][16];
    int nlevels;
    double lo, hi;    /* log10 of the axis ends */
} chart;

static const char *str(const json_t *o, const char *k, const char *dflt) {
    const json_t *v = json_object_get(o, k);
    return json_is_string(v) ? json_string_value(v) : dflt;
}

static const char *layer_name(const json_t *L) { return str(L, "name", str(L, "layer", "?")); }

/* The series in first-seen order (the bar order) and the ratio range. */
static void scan(const json_t *layers, chart *c) {
    double m = log10(1.01); /* at least +-1 % */
    for (size_t i = 0; i < json_array_size(layers); i++) {
        const json_t *vs = json_object_get(json_array_get(layers, i), "variants");
        for (size_t j = 0; j < json_array_size(vs); j++) {
            const json_t *v = json_array_get(vs, j);
            const char *kind = str(v, "kind", "?");
            /* no bar, no legend entry: missing() names it with the reason */
            if (strcmp(kind, "xcorr") == 0 || !json_is_object(json_object_get(v, "sim"))) continue;
            char id[48];
            snprintf(id, sizeof id, "%s %s", str(v, "family", "?"), kind);
            int k = 0;
            while (k < c->ns && strcmp(c->s[k].id, id) != 0) k++;
            if (k == c->ns && c->ns < MAX_SERIES) {
                snprintf(c->s[k].id, sizeof c->s[k].id, "%s", id);
                snprintf(c->s[k].family, sizeof c->s[k].family, "%s", str(v, "family", "?"));
                snprintf(c->s[k].kind, sizeof c->s[k].kind, "%s", kind);
                c->ns++;
            }
            const json_t *lv = json_object_get(json_object_get(v, "sim"), "levels");
            for (size_t l = 0; l < json_array_size(lv); l++) {
                const json_t *x = json_array_get(lv, l);
                const double r = json_number_value(json_object_get(x, "ratio_to_xcorr"));
                if (r > 0) m = fmax(m, fabs(log10(r)));
                if (l < MAX_LEVELS && (int)l >= c->nlevels) {
                    snprintf(c->level[l], sizeof c->level[l], "%s", str(x, "name", "?"));
                    c->nlevels = (int)l + 1;
                }
            }
        }
    }
    c->lo = -m * 1.1;
    c->hi = m * 1.1;
}

static double ypos(const chart *c, int top, double ratio) {
    return top + PANEL_H * (c->hi - log10(ratio)) / (c->hi - c->lo);
}

/* Ticks: powers of two when the range spans a factor 2, else 1 +- a round
 * step in percent. */
static void ticks(cph_textbuf *b, const chart *c, int top, int width) {
    double vals[32];
    int n = 0;
    if (c->hi >= log10(2.0)) {
        for (int e = -8; e <= 8 && n < 32; e++)
            if (fabs(e * log10(2.0)) <= c->hi) vals[n++] = pow(2.0, e);
    } else {
        static const double steps[] = {0.001, 0.002, 0.005, 0.01, 0.02, 0.05, 0.1, 0.2};
        const double span = pow(10, c->hi) - 1;
        double st = steps[7];
        for (int i = 0; i < 8; i++)
            if (span / steps[i] <= 4) {
                st = steps[i];
                break;
            }
        for (int k = -6; k <= 6 && n < 32; k++) {
            const double v = 1 + k * st;
            if (v > 0 && fabs(log10(v)) <= c->hi) vals[n++] = v;
        }
    }
    for (int i = 0; i < n; i++) {
        const double y = ypos(c, top, vals[i]);
        cph_tb_printf(b, "<line x1=\"%d\" y1=\"%.1f\" x2=\"%d\" y2=\"%.1f\" stroke=\"%s\"/>"
                      "<text x=\"%d\" y=\"%.1f\" text-anchor=\"end\">%.4g</text>\n",
                      LEFT, y, width - 10, y, vals[i] == 1 ? "#000" : "#ccc", LEFT - 5, y + 4,
                      vals[i]);
    }
}

static void defs(cph_textbuf *b) {
    cph_tb_printf(b, "<defs><pattern id=\"cc-hatch\" width=\"4\" height=\"4\" "
                  "patternUnits=\"userSpaceOnUse\"><path d=\"M0,4L4,0\" stroke=\"#000\" "
                  "stroke-width=\"1\"/></pattern><pattern id=\"cc-dots\" width=\"4\" height=\"4\" "
                  "patternUnits=\"userSpaceOnUse\"><circle cx=\"2\" cy=\"2\" r=\"0.9\" "
                  "fill=\"#000\"/></pattern></defs>\n");
}

static int family_index(const chart *c, const char *family) {
    int n = 0;
    for (int i = 0; i < c->ns; i++) {
        if (strcmp(c->s[i].family, family) == 0) return n;
        int seen = 0;
        for (int j = 0; j < i; j++) seen |= strcmp(c->s[j].family, c->s[i].family) == 0;
        n += !seen;
    }
    return n;
}

/* A bar (or legend swatch): the family's fill, the kind's overlay. */
static void bar(cph_textbuf *b, const chart *c, int si, double x, double y, double w, double h) {
    const series *s = &c->s[si];
    cph_tb_printf(b, "<rect x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" height=\"%.1f\" fill=\"%s\" "
                  "stroke=\"#000\" stroke-width=\"0.5\"/>", x, y, w, h,
                  fills[family_index(c, s->family) % 6]);
    if (strcmp(s->kind, "preflip") != 0)
        cph_tb_printf(b, "<rect x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" height=\"%.1f\" "
                      "fill=\"url(#%s)\"/>", x, y, w, h,
                      strcmp(s->kind, "flipidx") == 0 ? "cc-hatch" : "cc-dots");
}

static void panel(cph_textbuf *b, const chart *c, const json_t *layers, int lvl, int top,
                  int width) {
    const size_t ng = json_array_size(layers);
    const double gw = (double)(width - LEFT - 20) / (double)(ng ? ng : 1);
    const double bw = (gw - 10) / (c->ns ? c->ns : 1);
    cph_tb_printf(b, "<text x=\"%d\" y=\"%d\" font-size=\"12\" font-weight=\"bold\">", LEFT,
                  top - 8);
    cph_tb_escaped(b, c->level[lvl]);
    cph_tb_printf(b, ": simulated misses, ratio to cross-correlation</text>\n"
                  "<text transform=\"translate(16,%d) rotate(-90)\" text-anchor=\"middle\">"
                  "misses / xcorr misses (log)</text>\n", top + PANEL_H / 2);
    ticks(b, c, top, width);
    for (size_t g = 0; g < ng; g++) {
        const json_t *L = json_array_get(layers, g);
        const json_t *vs = json_object_get(L, "variants");
        const double gx = LEFT + 5 + gw * (double)g;
        for (size_t j = 0; j < json_array_size(vs); j++) {
            const json_t *v = json_array_get(vs, j);
            const json_t *lv = json_array_get(json_object_get(json_object_get(v, "sim"),
                                                              "levels"), (size_t)lvl);
            const double r = json_number_value(json_object_get(lv, "ratio_to_xcorr"));
            if (!(r > 0) || strcmp(str(v, "kind", ""), "xcorr") == 0) continue;
            char id[48];
            snprintf(id, sizeof id, "%s %s", str(v, "family", "?"), str(v, "kind", "?"));
            int si = 0;
            while (si < c->ns && strcmp(c->s[si].id, id) != 0) si++;
            if (si == c->ns) continue;
            const double y1 = ypos(c, top, 1.0), y = ypos(c, top, r);
            cph_tb_printf(b, "<g><title>");
            cph_tb_escaped(b, layer_name(L));
            cph_tb_printf(b, " ");
            cph_tb_escaped(b, id);
            cph_tb_printf(b, ": %.4f x cross-correlation's misses</title>", r);
            bar(b, c, si, gx + bw * si, fmin(y, y1), bw * 0.9, fmax(fabs(y1 - y), 0.8));
            cph_tb_printf(b, "</g>\n");
        }
        cph_tb_printf(b, "<text x=\"%.1f\" y=\"%d\" text-anchor=\"middle\">", gx + (gw - 10) / 2,
                      top + PANEL_H + 14);
        cph_tb_escaped(b, layer_name(L));
        cph_tb_printf(b, "</text>\n");
    }
    cph_tb_printf(b, "<rect x=\"%d\" y=\"%d\" width=\"%d\" height=\"%d\" fill=\"none\" "
                  "stroke=\"#333\"/>\n", LEFT, top, width - LEFT - 10, PANEL_H);
}

/* The variants not simulated, each once with its reason. */
static int missing(cph_textbuf *b, const json_t *layers, int y) {
    char seen[MAX_SERIES][48];
    int ns = 0;
    for (size_t i = 0; i < json_array_size(layers); i++) {
        const json_t *vs = json_object_get(json_array_get(layers, i), "variants");
        for (size_t j = 0; j < json_array_size(vs); j++) {
            const json_t *v = json_array_get(vs, j);
            if (json_is_object(json_object_get(v, "sim"))) continue;
            const char *fam = str(v, "family", "?");
            int k = 0;
            while (k < ns && strcmp(seen[k], fam) != 0) k++;
            if (k < ns || ns >= MAX_SERIES) continue;
            snprintf(seen[ns++], sizeof seen[0], "%s", fam);
            const char *why = str(v, "sim_unavailable", NULL);
            if (!why) why = json_is_false(json_object_get(v, "supported"))
                                ? "the algorithm does not support the layer" : "not simulated";
            cph_tb_printf(b, "<text x=\"10\" y=\"%d\">not shown: ", y);
            cph_tb_escaped(b, fam);
            cph_tb_printf(b, " (all kinds): ");
            cph_tb_escaped(b, why);
            cph_tb_printf(b, "</text>\n");
            y += 16;
        }
    }
    return y;
}

void cph_cache_chart_svg(cph_textbuf *b, const json_t *study) {
    const json_t *layers = json_object_get(study, "layers");
    chart c;
    memset(&c, 0, sizeof c);
    scan(layers, &c);
    const int ng = (int)json_array_size(layers);
    const int width = LEFT + 30 + (ng ? ng : 1) * (c.ns * 10 + 40);
    const int w = width < 760 ? 760 : width;
    const int legend_rows = (c.ns + 3) / 4;
    const int height = TOP + legend_rows * 18 + c.nlevels * (PANEL_H + GAP) + 16 * 4 + 20;
    cph_tb_printf(b, "<svg xmlns=\"http://www.w3.org/2000/svg\" class=\"cache-chart\" "
                  "width=\"%d\" height=\"%d\" viewBox=\"0 0 %d %d\" font-family=\"DejaVu Sans, "
                  "sans-serif\" font-size=\"11\">\n<rect width=\"100%%\" height=\"100%%\" "
                  "fill=\"white\"/>\n", w, height, w, height);
    defs(b);
    cph_tb_printf(b, "<text x=\"10\" y=\"20\" font-size=\"14\">Cache misses of true convolution "
                  "relative to cross-correlation (1 = the same; bars above: more misses)</text>\n"
                  "<text x=\"10\" y=\"38\">legend, in bar order within each layer:</text>\n");
    for (int i = 0; i < c.ns; i++) {
        const double x = 10 + (i % 4) * 190, y = 46 + (i / 4) * 18;
        bar(b, &c, i, x, y, 14, 12);
        cph_tb_printf(b, "<text x=\"%.0f\" y=\"%.0f\">", x + 20, y + 10);
        cph_tb_escaped(b, c.s[i].id);
        cph_tb_printf(b, "</text>\n");
    }
    int top = TOP + legend_rows * 18 + 10;
    for (int l = 0; l < c.nlevels; l++, top += PANEL_H + GAP) panel(b, &c, layers, l, top, w);
    missing(b, layers, top);
    cph_tb_printf(b, "</svg>\n");
}
