/* The shape spec parser, the layer list and the shared selection options
 * (syntax in select.h).
 *
 * The parser is strict on purpose: a typo in a layer description would
 * otherwise silently measure a different layer.  Every error names the key
 * and what is wrong with its value; the shape rules themselves stay in
 * cp_shape_validate so that there is one place that decides validity. */
#define _POSIX_C_SOURCE 200809L /* strdup */
#include "harness/select/select.h"
#include "algos/core/cpa.h"

#include <ctype.h>
#include <errno.h>
#include <limits.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* --- The spec parser ------------------------------------------------------ */

/* The fields a key sets, as bits, so that two keys writing the same field
 * ("stride" and "stride_h", "pad" and "pad_top") are caught as a conflict
 * instead of one silently winning. */
enum {
    F_N = 1 << 0, F_C = 1 << 1, F_H = 1 << 2, F_W = 1 << 3, F_K = 1 << 4, F_R = 1 << 5,
    F_S = 1 << 6, F_SH = 1 << 7, F_SW = 1 << 8, F_PT = 1 << 9, F_PL = 1 << 10,
    F_PB = 1 << 11, F_PR = 1 << 12, F_DH = 1 << 13, F_DW = 1 << 14, F_G = 1 << 15
};

typedef struct {
    const char *name;
    unsigned fields;
} spec_key;

static const spec_key keys[] = {
    {"n", F_N},
    {"c", F_C},
    {"h", F_H},
    {"w", F_W},
    {"k", F_K},
    {"r", F_R},
    {"s", F_S},
    {"stride", F_SH | F_SW},
    {"stride_h", F_SH},
    {"stride_w", F_SW},
    {"pad", F_PT | F_PL | F_PB | F_PR},
    {"pad_h", F_PT | F_PB},
    {"pad_w", F_PL | F_PR},
    {"pad_top", F_PT},
    {"pad_left", F_PL},
    {"pad_bottom", F_PB},
    {"pad_right", F_PR},
    {"dilation", F_DH | F_DW},
    {"dilation_h", F_DH},
    {"dilation_w", F_DW},
    {"groups", F_G},
};
#define NKEYS (sizeof keys / sizeof keys[0])

static void set_fields(cp_shape *s, unsigned fields, int64_t v) {
    if (fields & F_N) s->n = v;
    if (fields & F_C) s->c = v;
    if (fields & F_H) s->h = v;
    if (fields & F_W) s->w = v;
    if (fields & F_K) s->k = v;
    if (fields & F_R) s->r = v;
    if (fields & F_S) s->s = v;
    if (fields & F_SH) s->stride_h = v;
    if (fields & F_SW) s->stride_w = v;
    if (fields & F_PT) s->pad_top = v;
    if (fields & F_PL) s->pad_left = v;
    if (fields & F_PB) s->pad_bottom = v;
    if (fields & F_PR) s->pad_right = v;
    if (fields & F_DH) s->dil_h = v;
    if (fields & F_DW) s->dil_w = v;
    if (fields & F_G) s->groups = v;
}

static char *trim(char *t) {
    while (*t && isspace((unsigned char)*t)) t++;
    size_t len = strlen(t);
    while (len && isspace((unsigned char)t[len - 1])) t[--len] = '\0';
    return t;
}

/* Decimal integer in int range; writes a message naming the key otherwise. */
static cp_status parse_int_value(const char *key, const char *val, int64_t *out, char *msg,
                                 size_t cap) {
    if (!*val) return cpa_fail(CP_EINVAL, msg, cap, "%s: empty value (expected a number)", key);
    errno = 0;
    char *end = NULL;
    long long v = strtoll(val, &end, 10);
    if (end == val) return cpa_fail(CP_EINVAL, msg, cap, "%s=%s: not a number", key, val);
    if (*end)
        return cpa_fail(CP_EINVAL, msg, cap, "%s=%s: trailing characters '%s' after the number", key,
                    val, end);
    if (errno == ERANGE || v < INT_MIN || v > INT_MAX)
        return cpa_fail(CP_EINVAL, msg, cap, "%s=%s: out of range (must fit in an int, %d..%d)",
                    key, val, INT_MIN, INT_MAX);
    *out = v;
    return CP_OK;
}

static cp_status parse_spec(char *buf, cp_shape *out, char *msg, size_t cap) {
    cp_shape s = cp_shape_init();
    unsigned seen_fields = 0;
    unsigned seen_keys = 0; /* bit i: keys[i] given */
    int pad_mode = -1;      /* a cp_pad_mode, applied after all keys */
    if (!*trim(buf)) return cpa_fail(CP_EINVAL, msg, cap, "empty shape spec (expected key=value,...)");
    char *save = NULL;
    int item = 0;
    /* A manual split (not strtok) keeps empty items visible as errors. */
    for (char *p = buf; p; p = save) {
        char *comma = strchr(p, ',');
        save = comma ? comma + 1 : NULL;
        if (comma) *comma = '\0';
        item++;
        char *tok = trim(p);
        if (!*tok)
            return cpa_fail(CP_EINVAL, msg, cap, "item %d is empty (stray ',')", item);
        char *eq = strchr(tok, '=');
        if (!eq) return cpa_fail(CP_EINVAL, msg, cap, "%s: missing '=' (expected key=value)", tok);
        *eq = '\0';
        char *key = trim(tok), *val = trim(eq + 1);
        if (!*key) return cpa_fail(CP_EINVAL, msg, cap, "item %d: missing key before '='", item);
        size_t ki = NKEYS;
        for (size_t i = 0; i < NKEYS; i++)
            if (strcmp(keys[i].name, key) == 0) ki = i;
        if (ki == NKEYS)
            return cpa_fail(CP_EINVAL, msg, cap,
                        "unknown key '%s' (keys: n c h w k r s stride stride_h stride_w pad "
                        "pad_h pad_w pad_top pad_left pad_bottom pad_right dilation dilation_h "
                        "dilation_w groups)",
                        key);
        if (seen_keys & (1u << ki)) return cpa_fail(CP_EINVAL, msg, cap, "%s: key given twice", key);
        if (seen_fields & keys[ki].fields) {
            const char *other = "?";
            for (size_t i = 0; i < NKEYS; i++)
                if ((seen_keys & (1u << i)) && (keys[i].fields & keys[ki].fields))
                    other = keys[i].name;
            return cpa_fail(CP_EINVAL, msg, cap, "%s: conflicts with '%s' given before", key, other);
        }
        seen_keys |= 1u << ki;
        seen_fields |= keys[ki].fields;
        if (strcmp(key, "pad") == 0 && *val && isalpha((unsigned char)*val)) {
            if (strcmp(val, "valid") == 0)
                pad_mode = CP_PAD_VALID;
            else if (strcmp(val, "same") == 0)
                pad_mode = CP_PAD_SAME;
            else if (strcmp(val, "full") == 0)
                pad_mode = CP_PAD_FULL;
            else
                return cpa_fail(CP_EINVAL, msg, cap,
                            "pad=%s: expected a number or valid|same|full", val);
            continue;
        }
        int64_t v = 0;
        cp_status st = parse_int_value(key, val, &v, msg, cap);
        if (st != CP_OK) return st;
        set_fields(&s, keys[ki].fields, v);
    }
    static const struct { const char *name; unsigned f; } required[] = {
        {"c", F_C}, {"h", F_H}, {"w", F_W}, {"k", F_K}, {"r", F_R}};
    for (size_t i = 0; i < sizeof required / sizeof required[0]; i++)
        if (!(seen_fields & required[i].f))
            return cpa_fail(CP_EINVAL, msg, cap, "missing required key '%s'", required[i].name);
    if (!(seen_fields & F_S)) s.s = s.r;
    if (pad_mode >= 0) cp_shape_set_padding(&s, (cp_pad_mode)pad_mode);
    char why[256];
    if (cp_shape_validate(&s, why, sizeof why) != CP_SHAPE_OK)
        return cpa_fail(CP_EINVAL, msg, cap, "invalid shape: %s", why);
    *out = s;
    return CP_OK;
}

cp_status cph_parse_shape(const char *spec, const char *ctx, cp_shape *out, char *msg,
                          size_t cap) {
    if (!spec) return cpa_fail(CP_EINVAL, msg, cap, "%s%sno shape spec", ctx ? ctx : "", ctx ? ": " : "");
    char *buf = strdup(spec);
    if (!buf) return cpa_fail(CP_ENOMEM, msg, cap, "out of memory");
    char m[512];
    cp_status st = parse_spec(buf, out, m, sizeof m);
    free(buf);
    if (st != CP_OK) {
        if (ctx)
            cpa_fail(st, msg, cap, "%s: %s", ctx, m);
        else
            cpa_fail(st, msg, cap, "%s", m);
    }
    return st;
}

int cph_shape_format_short(const cp_shape *s, char *buf, size_t cap) {
    char t[320];
    int n = snprintf(t, sizeof t, "n=%lld,c=%lld,h=%lld,w=%lld,k=%lld,r=%lld", (long long)s->n,
                     (long long)s->c, (long long)s->h, (long long)s->w, (long long)s->k,
                     (long long)s->r);
#define ADD(...)                                                                   \
    do {                                                                           \
        if (n >= 0 && (size_t)n < sizeof t) n += snprintf(t + n, sizeof t - (size_t)n, __VA_ARGS__); \
    } while (0)
    if (s->s != s->r) ADD(",s=%lld", (long long)s->s);
    if (s->stride_h == s->stride_w) {
        if (s->stride_h != 1) ADD(",stride=%lld", (long long)s->stride_h);
    } else
        ADD(",stride_h=%lld,stride_w=%lld", (long long)s->stride_h, (long long)s->stride_w);
    if (s->pad_top == s->pad_bottom && s->pad_left == s->pad_right && s->pad_top == s->pad_left) {
        if (s->pad_top) ADD(",pad=%lld", (long long)s->pad_top);
    } else if (s->pad_top == s->pad_bottom && s->pad_left == s->pad_right)
        ADD(",pad_h=%lld,pad_w=%lld", (long long)s->pad_top, (long long)s->pad_left);
    else
        ADD(",pad_top=%lld,pad_left=%lld,pad_bottom=%lld,pad_right=%lld", (long long)s->pad_top,
            (long long)s->pad_left, (long long)s->pad_bottom, (long long)s->pad_right);
    if (s->dil_h == s->dil_w) {
        if (s->dil_h != 1) ADD(",dilation=%lld", (long long)s->dil_h);
    } else
        ADD(",dilation_h=%lld,dilation_w=%lld", (long long)s->dil_h, (long long)s->dil_w);
    if (s->groups != 1) ADD(",groups=%lld", (long long)s->groups);
#undef ADD
    return snprintf(buf, cap, "%s", t);
}

/* --- Layer lists ---------------------------------------------------------- */

cp_status cph_layers_add(cph_layer_list *l, const char *name, const cp_shape *s, int count) {
    if (count < 1) return CP_EINVAL;
    for (size_t i = 0; i < l->n; i++)
        if (cp_shape_equal(&l->v[i].shape, s)) {
            if (l->v[i].count > INT_MAX - count) return CP_EINVAL;
            l->v[i].count += count;
            return CP_OK;
        }
    if (l->n == l->cap) {
        size_t ncap = l->cap ? 2 * l->cap : 16;
        cph_layer *nv = realloc(l->v, ncap * sizeof *nv);
        if (!nv) return CP_ENOMEM;
        l->v = nv;
        l->cap = ncap;
    }
    cph_layer *e = &l->v[l->n++];
    memset(e, 0, sizeof *e);
    snprintf(e->name, sizeof e->name, "%s", name ? name : "");
    if (!e->name[0]) snprintf(e->name, sizeof e->name, "layer%zu", l->n);
    e->shape = *s;
    e->count = count;
    return CP_OK;
}

void cph_layers_free(cph_layer_list *l) {
    free(l->v);
    l->v = NULL;
    l->n = l->cap = 0;
}

/* --- Selection options ---------------------------------------------------- */

const char cph_selection_help[] =
    "  --shape SPEC      a layer, e.g. n=1,c=64,h=56,w=56,k=64,r=3,s=3,stride=1,pad=1\n"
    "                    (keys: n c h w k r s stride[_h|_w] pad[_h|_w|_top|_left|_bottom|_right]\n"
    "                    dilation[_h|_w] groups; pad=valid|same|full); repeatable\n"
    "  --shapes FILE     layers from a file: one spec a line, optional 'name:' first, '#' comments\n"
    "  --suite NAME      a built-in network: resnet50, vgg16, mobilenet_v1, demo\n"
    "  --algo A,B        only these algorithms (default: all; see convpick algos)\n"
    "  --mode M          xcorr, conv or both\n"
    "  --seed N          seed of the random tensors (default 1)\n";

void cph_selection_init(cph_selection *sel) {
    memset(sel, 0, sizeof *sel);
    sel->seed = 1;
}

void cph_selection_free(cph_selection *sel) { cph_layers_free(&sel->layers); }

static cp_status add_algos(cph_selection *sel, const char *arg, char *msg, size_t cap) {
    char *buf = strdup(arg);
    if (!buf) return cpa_fail(CP_ENOMEM, msg, cap, "out of memory");
    cp_status st = CP_OK;
    char *save = NULL;
    for (char *p = buf; p; p = save) {
        char *comma = strchr(p, ',');
        save = comma ? comma + 1 : NULL;
        if (comma) *comma = '\0';
        char *name = trim(p);
        const cp_algo *a = cp_algo_find(name);
        if (!a) {
            char known[512] = "";
            size_t off = 0;
            for (size_t i = 0; i < cp_algo_count() && off < sizeof known; i++) {
                int w = snprintf(known + off, sizeof known - off, "%s%s", i ? ", " : "",
                                 cp_algo_at(i)->name);
                if (w < 0) break;
                off += (size_t)w;
            }
            st = cpa_fail(CP_EINVAL, msg, cap, "--algo: unknown algorithm '%s' (known: %s)", name,
                      known);
            break;
        }
        int dup = 0;
        for (size_t i = 0; i < sel->nalgos; i++) dup |= sel->algos[i] == a;
        if (dup) continue;
        if (sel->nalgos == sizeof sel->algos / sizeof sel->algos[0]) {
            st = cpa_fail(CP_EINVAL, msg, cap, "--algo: too many algorithms");
            break;
        }
        sel->algos[sel->nalgos++] = a;
    }
    free(buf);
    return st;
}

cp_status cph_selection_option(cph_selection *sel, int opt, const char *arg, char *msg,
                               size_t cap) {
    switch (opt) {
    case CPH_OPT_SHAPE: {
        cp_shape s;
        char ctx[96];
        snprintf(ctx, sizeof ctx, "--shape '%.60s%s'", arg, strlen(arg) > 60 ? "..." : "");
        cp_status st = cph_parse_shape(arg, ctx, &s, msg, cap);
        if (st != CP_OK) return st;
        char name[32];
        snprintf(name, sizeof name, "shape%zu", sel->layers.n + 1);
        if (cph_layers_add(&sel->layers, name, &s, 1) != CP_OK)
            return cpa_fail(CP_ENOMEM, msg, cap, "out of memory");
        return CP_OK;
    }
    case CPH_OPT_SHAPES:
        return cph_load_shape_file(arg, &sel->layers, msg, cap);
    case CPH_OPT_SUITE:
        return cph_suite_load(arg, &sel->layers, msg, cap);
    case CPH_OPT_ALGO:
        return add_algos(sel, arg, msg, cap);
    case CPH_OPT_FLIP:
        if (strcmp(arg, "xcorr") == 0) {
            sel->flips[0] = CP_XCORR;
            sel->nflips = 1;
        } else if (strcmp(arg, "conv") == 0) {
            sel->flips[0] = CP_CONV;
            sel->nflips = 1;
        } else if (strcmp(arg, "both") == 0) {
            sel->flips[0] = CP_XCORR;
            sel->flips[1] = CP_CONV;
            sel->nflips = 2;
        } else {
            return cpa_fail(CP_EINVAL, msg, cap, "--mode %s: expected xcorr, conv or both", arg);
        }
        return CP_OK;
    case CPH_OPT_SEED: {
        errno = 0;
        char *end = NULL;
        if (!isdigit((unsigned char)arg[0]))
            return cpa_fail(CP_EINVAL, msg, cap, "--seed %s: expected a non-negative integer", arg);
        unsigned long long v = strtoull(arg, &end, 10);
        if (*end || errno == ERANGE)
            return cpa_fail(CP_EINVAL, msg, cap, "--seed %s: expected a non-negative integer below 2^64",
                        arg);
        sel->seed = (uint64_t)v;
        return CP_OK;
    }
    default:
        return cpa_fail(CP_EINVAL, msg, cap, "internal: option code %d is not a selection option",
                    opt);
    }
}

cp_status cph_selection_finish(cph_selection *sel, const cp_flip *default_modes, int ndefault,
                               char *msg, size_t cap) {
    if (sel->nalgos == 0) {
        size_t n = cp_algo_count();
        if (n > sizeof sel->algos / sizeof sel->algos[0]) n = sizeof sel->algos / sizeof sel->algos[0];
        for (size_t i = 0; i < n; i++) sel->algos[i] = cp_algo_at(i);
        sel->nalgos = n;
    }
    if (sel->nflips == 0) {
        if (ndefault > 2) ndefault = 2;
        for (int i = 0; i < ndefault; i++) sel->flips[i] = default_modes[i];
        sel->nflips = ndefault;
    }
    if (sel->layers.n == 0)
        return cpa_fail(CP_EINVAL, msg, cap, "no layers selected (give --shape, --shapes or --suite)");
    return CP_OK;
}
