/* convpick report --out FILE INPUT...: one self-contained HTML page of any
 * mix of tuning tables, bench results, probe output and cache studies
 * (harness/report/report.h), written atomically. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "harness/cli/cli.h"
#include "harness/cli/options.h"
#include "harness/io/rawfile.h"
#include "harness/io/textbuf.h"
#include "harness/report/report.h"

static void usage(FILE *f) {
    fputs("usage: convpick report --out FILE INPUT...\n\n"
          "Writes one HTML page (inline SVG and CSS, nothing fetched) from any mix of\n"
          "INPUT files, each told apart by its content: tuning tables (tune), bench\n"
          "results (bench --json), probe output (probe --json) and cache studies\n"
          "(cache --json).  The page shows the devices and every roof measured, a\n"
          "roofline per thread count (every layer x algorithm measured as a point at\n"
          "its arithmetic intensity: FLOPs over input + weights + output bytes in\n"
          "float32), per layer each candidate's median and interval, the choice, the\n"
          "runner-up and margin and the error against the oracle, the network totals\n"
          "(sum of count x median) of the choice and of every algorithm, two tables of\n"
          "two machines side by side (the first two tables given; they must share a\n"
          "shape), and the cache study's miss ratios.  Layer counts come from bench\n"
          "results of the same shapes (tables do not record them; else 1).\n\n"
          "options:\n"
          "  --out FILE          the HTML file to write (required; replaced atomically)\n",
          f);
    cph_help_end(f, "0 written, 2 bad usage or input (nothing written)");
}

/* Checks the inputs make one report; the exit code, or -1 to go on. */
static int check(const cph_report *r) {
    const cph_rep_source *t[2] = {NULL, NULL};
    for (size_t i = 0; i < r->n && !t[1]; i++)
        if (r->src[i].kind == CPH_REP_TABLE) t[t[0] ? 1 : 0] = &r->src[i];
    if (t[1] && cph_rep_common(t[0], t[1]) == 0)
        return cph_opt_error("report", NULL, "%s and %s share no layer shape, flip and thread "
                             "count: nothing to put side by side", t[0]->path, t[1]->path);
    return -1;
}

static int write_report(const char *out, const char *const *inputs, size_t n) {
    char msg[1024];
    cph_report r;
    if (cph_report_collect(inputs, n, &r, msg, sizeof msg) != CP_OK)
        return cph_opt_error("report", NULL, "%s", msg);
    int rc = check(&r);
    if (rc >= 0) {
        cph_report_free(&r);
        return rc;
    }
    cph_textbuf b = {NULL, 0, 0, 0};
    cph_rep_html(&b, &r);
    cph_report_free(&r);
    if (b.failed) {
        cph_tb_free(&b);
        return cph_opt_error("report", NULL, "out of memory building the page");
    }
    rc = CPH_EXIT_OK;
    if (cph_write_atomic(out, b.buf, b.len, msg, sizeof msg) != CP_OK)
        rc = cph_opt_error("report", "--out", "%s", msg);
    else
        fprintf(stderr, "convpick report: wrote %s (%zu bytes)\n", out, b.len);
    cph_tb_free(&b);
    return rc;
}

int cph_cmd_report(int argc, char **argv) {
    enum { OPT_OUT = 1 };
    static const struct option longopts[] = {
        {"out", required_argument, NULL, OPT_OUT},
        CPH_OPTS_HELP_END,
    };
    const char *out = NULL;
    int opt;
    while ((opt = cph_opt_next("report", argc, argv, longopts)) != -1) {
        switch (opt) {
        case OPT_OUT: out = optarg; break;
        case 'h': usage(stdout); return CPH_EXIT_OK;
        default: return CPH_EXIT_USAGE;
        }
    }
    if (!out) return cph_opt_error("report", "--out", "required (see convpick report --help)");
    if (optind >= argc)
        return cph_opt_error("report", NULL, "expected at least one INPUT (see convpick report "
                             "--help)");
    char msg[512];
    if (cph_check_output_dir(out, msg, sizeof msg) != CP_OK)
        return cph_opt_error("report", "--out", "%s", msg);
    return write_report(out, (const char *const *)(argv + optind), (size_t)(argc - optind));
}
