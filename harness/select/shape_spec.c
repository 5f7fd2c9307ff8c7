/* The shape spec parser (syntax in shape_spec.h).
 *
 * The parser is strict on purpose: a typo in a layer description would
 * otherwise silently measure a different layer.  Every error names the key
 * and what is wrong with its value; the shape rules themselves stay in
 * cp_shape_validate so that there is one place that decides validity. */
#define _POSIX_C_SOURCE 200809L /* strdup */
#include "harness/select/shape_spec.h"
#include "algos/core/cpa.h"

#include <ctype.h>
#include <errno.h>
#include <limits.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

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
    if (!*cpa_trim(buf)) return cpa_fail(CP_EINVAL, msg, cap, "empty shape spec (expected key=value,...)");
    char *save = NULL;
    int item = 0;
    /* A manual split (not strtok) keeps empty items visible as errors. */
    for (char *p = buf; p; p = save) {
        char *comma = strchr(p, ',');
        save = comma ? comma + 1 : NULL;
        if (comma) *comma = '\0';
        item++;
        char *tok = cpa_trim(p);
        if (!*tok)
            return cpa_fail(CP_EINVAL, msg, cap, "item %d is empty (stray ',')", item);
        char *eq = strchr(tok, '=');
        if (!eq) return cpa_fail(CP_EINVAL, msg, cap, "%s: missing '=' (expected key=value)", tok);
        *eq = '\0';
        char *key = cpa_trim(tok), *val = cpa_trim(eq + 1);
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
