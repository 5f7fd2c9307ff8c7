/* Shape selection shared by verify, bench, tune and the cache study:
 * --shape SPEC (repeatable), --shapes FILE, --suite NAME, --algo a,b,
 * --mode xcorr|conv|both, --seed N.
 *
 * Shape spec syntax (ours): comma-separated key=value pairs, e.g.
 *   n=1,c=64,h=56,w=56,k=64,r=3,s=3,stride=1,pad=1
 * keys: n c h w k r s; stride (both) stride_h stride_w; pad=NUMBER (all four)
 * or pad=valid|same|full; pad_h pad_w (top+bottom / left+right) pad_top
 * pad_left pad_bottom pad_right; dilation (both) dilation_h dilation_w; groups.
 * Missing n, stride, dilation and groups default to 1, pads to 0; c,h,w,k,r
 * are required, s defaults to r.  A pad mode is applied after all numbers are
 * read, whatever the order of keys.
 * Shape file: one layer a line, optional "name:" first, '#' starts a comment,
 * blank lines ignored. */
#ifndef CONVPICK_SELECT_H
#define CONVPICK_SELECT_H

#include <stddef.h>
#include <stdint.h>

#include "convpick/convpick.h"

typedef struct cph_layer {
    char name[64];   /* "conv2_1a" or "layer3" when unnamed */
    cp_shape shape;
    int count;       /* how many times the shape occurs in its network */
} cph_layer;

typedef struct cph_layer_list {
    cph_layer *v;
    size_t n, cap;
} cph_layer_list;

/* Parses one spec.  On error returns CP_EINVAL with a message naming the key
 * (and, when ctx is not NULL, prefixed by ctx such as "file.txt:12"). */
cp_status cph_parse_shape(const char *spec, const char *ctx, cp_shape *out, char *msg, size_t cap);

/* A short spec that cph_parse_shape reads back to an equal shape: keys at
 * their defaults are left out and equal pairs merged ("stride=2,pad=3").
 * Returns the length the full text needs (like snprintf). */
int cph_shape_format_short(const cp_shape *s, char *buf, size_t cap);

/* Appends a layer; a shape already in the list only increments its count. */
cp_status cph_layers_add(cph_layer_list *l, const char *name, const cp_shape *s, int count);
void cph_layers_free(cph_layer_list *l);

/* Reads a shape file (syntax above), appending its layers to out; errors name
 * file:line and the key.  A file without any layer is an error. */
cp_status cph_load_shape_file(const char *path, cph_layer_list *out, char *msg, size_t cap);
/* The same from text in memory (len bytes, NUL bytes allowed); name stands
 * for the file in messages. */
cp_status cph_load_shape_text(const char *text, size_t len, const char *name,
                              cph_layer_list *out, char *msg, size_t cap);

/* Built-in suites: resnet50, vgg16, mobilenet_v1, demo. */
size_t cph_suite_count(void);
const char *cph_suite_name(size_t i);
const char *cph_suite_source(const char *name); /* citation of the network's paper */
/* Appends the suite's layers to out (CP_ENOTFOUND for an unknown name). */
cp_status cph_suite_load(const char *name, cph_layer_list *out, char *msg, size_t cap);

typedef struct cph_selection {
    cph_layer_list layers;
    const cp_algo *algos[32];
    size_t nalgos;        /* 0 after parsing = all registered */
    cp_flip flips[2];
    int nflips;           /* 0 after parsing = default of the command */
    uint64_t seed;        /* default 1 */
} cph_selection;

/* The getopt_long entries of the shared options; a command appends its own.
 * Option codes are >= 1000 so they never clash with a command's short options. */
enum {
    CPH_OPT_SHAPE = 1000,
    CPH_OPT_SHAPES,
    CPH_OPT_SUITE,
    CPH_OPT_ALGO,
    CPH_OPT_FLIP,
    CPH_OPT_SEED
};
#define CPH_SELECTION_LONGOPTS                                                        \
    {"shape", required_argument, NULL, CPH_OPT_SHAPE},                                \
        {"shapes", required_argument, NULL, CPH_OPT_SHAPES},                          \
        {"suite", required_argument, NULL, CPH_OPT_SUITE},                            \
        {"algo", required_argument, NULL, CPH_OPT_ALGO},                              \
        {"mode", required_argument, NULL, CPH_OPT_FLIP},                              \
        {"seed", required_argument, NULL, CPH_OPT_SEED}

void cph_selection_init(cph_selection *sel);
/* Handles one shared option (opt is a CPH_OPT_ code).  Returns CP_OK, or an
 * error with a one-line message (unknown algorithm, bad mode, bad spec, ...). */
cp_status cph_selection_option(cph_selection *sel, int opt, const char *arg, char *msg, size_t cap);
/* After parsing: fills defaults (all algorithms; modes = default_modes) and
 * fails if no layer was selected. */
cp_status cph_selection_finish(cph_selection *sel, const cp_flip *default_modes, int ndefault,
                               char *msg, size_t cap);
void cph_selection_free(cph_selection *sel);

/* The help text lines of the shared options (for a command's --help). */
extern const char cph_selection_help[];

#endif
