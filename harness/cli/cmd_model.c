/* convpick model: the Conv layers of an ONNX model as a shape file, to read,
 * edit and give back with --shapes (or use the model directly with --onnx). */
#define _POSIX_C_SOURCE 200809L /* open_memstream */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "harness/cli/cli.h"
#include "harness/cli/options.h"
#include "harness/io/rawfile.h"
#include "harness/model/onnx_import.h"
#include "harness/select/shapefile.h"

static void usage(FILE *f) {
    fputs("usage: convpick model FILE.onnx [OPTIONS]\n\n"
          "Reads the Conv layers of an ONNX model (input sizes by shape propagation from\n"
          "the graph inputs) and writes them as a shape file: one 'name: spec' line per\n"
          "Conv node, layers of identical shape with count=N.  Edit it and give it back\n"
          "with --shapes, or give the model itself with --onnx.\n\n"
          "options:\n"
          "  --batch N           every layer's batch size n, a symbolic one too\n"
          "                      (default: the model's)\n"
          "  --input-size H,W    a graph input's symbolic height and width (default: none,\n"
          "                      a symbolic size is refused)\n"
          "  --output FILE       write the shape file there (default: standard output)\n"
          "  --partial           when an operator cannot be propagated, still write the\n"
          "                      layers found before it; the exit status stays 2\n"
          "                      (default: write nothing)\n"
          "  --tensors           also list every tensor shape the propagation computed\n"
          "                      as '# tensor NAME DIMS' comments (default: layers only)\n",
          f);
    cph_help_end(f, "0 written, 2 bad usage or a model that cannot be read");
}

enum { OPT_OUTPUT = 'o', OPT_PARTIAL = 1, OPT_TENSORS };

typedef struct model_cli {
    cph_selection sel; /* only --batch and --input-size */
    const char *path, *output;
    int partial, tensors;
} model_cli;

static int parse(int argc, char **argv, model_cli *m) {
    static const struct option longopts[] = {
        {"batch", required_argument, NULL, CPH_OPT_BATCH},
        {"input-size", required_argument, NULL, CPH_OPT_INPUT_SIZE},
        {"output", required_argument, NULL, OPT_OUTPUT},
        {"partial", no_argument, NULL, OPT_PARTIAL},
        {"tensors", no_argument, NULL, OPT_TENSORS},
        CPH_OPTS_HELP_END};
    int opt;
    while ((opt = cph_opt_next("model", argc, argv, longopts)) != -1) {
        switch (opt) {
        case 'h': usage(stdout); return CPH_EXIT_OK;
        case OPT_OUTPUT: m->output = optarg; break;
        case OPT_PARTIAL: m->partial = 1; break;
        case OPT_TENSORS: m->tensors = 1; break;
        case CPH_OPT_BATCH:
        case CPH_OPT_INPUT_SIZE:
            if (cph_opt_selection("model", &m->sel, opt, optarg)) return CPH_EXIT_USAGE;
            break;
        default: return CPH_EXIT_USAGE;
        }
    }
    if (optind >= argc) return cph_opt_error("model", NULL, "no model file (see convpick model --help)");
    m->path = argv[optind++];
    return cph_opt_no_operands("model", argc, argv) ? CPH_EXIT_USAGE : -1;
}

/* The shape file's text (heap, *len bytes), or NULL. */
static char *render(const model_cli *m, const cph_layer_list *l, const cph_onnx_tensors *t,
                    const char *error, size_t *len) {
    char *text = NULL;
    FILE *f = open_memstream(&text, len);
    if (!f) return NULL;
    char header[1200];
    snprintf(header, sizeof header,
             "Conv layers of %s (convpick model%s): %zu shape(s), %lld layer(s)%s%.900s",
             m->path, m->sel.batch > 0 ? ", --batch given" : "", l->n, cph_layers_total(l),
             error ? "\nPARTIAL, stopped at: " : "", error ? error : "");
    int bad = cph_write_shape_file(f, header, l);
    for (size_t i = 0; t && i < t->n; i++) {
        char dims[160];
        cph_onnx_shape_format(&t->v[i].shape, dims, sizeof dims);
        fprintf(f, "# tensor %s %s\n", t->v[i].name, dims);
    }
    if (fclose(f) != 0 || bad) {
        free(text);
        return NULL;
    }
    return text;
}

int cph_cmd_model(int argc, char **argv) {
    model_cli m;
    memset(&m, 0, sizeof m);
    cph_selection_init(&m.sel);
    int rc = parse(argc, argv, &m);
    if (rc >= 0) return rc;
    if (m.output) {
        char msg[512];
        if (cph_check_output_dir(m.output, msg, sizeof msg) != CP_OK) {
            cph_err("model: %s", msg);
            return CPH_EXIT_USAGE;
        }
    }
    const cph_onnx_opts o = {m.sel.batch, m.sel.input_h, m.sel.input_w};
    cph_layer_list l = {0};
    cph_onnx_tensors t = {0};
    char msg[1024] = "";
    const cp_status st = cph_onnx_import(m.path, &o, &l, m.tensors ? &t : NULL, msg, sizeof msg);
    rc = st == CP_OK ? CPH_EXIT_OK : CPH_EXIT_USAGE;
    if (st != CP_OK) cph_err("model: %s", msg);
    if (st == CP_OK || (m.partial && l.n > 0)) {
        size_t len = 0;
        char *text = render(&m, &l, m.tensors ? &t : NULL, st == CP_OK ? NULL : msg, &len);
        char wmsg[512];
        if (!text) {
            cph_err("model: out of memory");
            rc = CPH_EXIT_FAIL;
        } else if (!m.output) {
            fwrite(text, 1, len, stdout);
        } else if (cph_write_atomic(m.output, text, len, wmsg, sizeof wmsg) != CP_OK) {
            cph_err("model: %s", wmsg);
            rc = CPH_EXIT_FAIL;
        }
        free(text);
    }
    cph_onnx_tensors_free(&t);
    cph_layers_free(&l);
    return rc;
}
