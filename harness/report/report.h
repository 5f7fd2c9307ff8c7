/* convpick report and convpick show: what they read and what they compute.
 *
 *   report_collect.c   input files -> sources (tables through the loader,
 *                      bench results through harness/io/results_read.h,
 *                      probe output and roofs through report_roofs.c)
 *   report_roofs.c     the roofs any of them recorded, read leniently
 *   report_model.c     arithmetic intensity, GFLOP/s, roofs per thread
 *                      count, network totals
 *   report_roofline.c  one roofline SVG per thread count
 *   report_html.c      the self-contained page
 *   report_compare.c   two tables of two machines side by side
 *   report_cache.c     the cache study's miss ratios
 *   report_summary.c   the terminal summary (show, and the end of tune)
 *
 * Arithmetic intensity is the layer's FLOPs (cp_shape_flops: 2 per
 * multiply-add, direct-equivalent) over its minimal float32 traffic: input,
 * weights and output each read or written once, 4 bytes per element. */
#ifndef CONVPICK_REPORT_H
#define CONVPICK_REPORT_H

#include <stddef.h>

#include "convpick/convpick.h"

typedef enum cph_rep_kind {
    CPH_REP_TABLE = 0,
    CPH_REP_BENCH,
    CPH_REP_PROBE,
    CPH_REP_CACHE
} cph_rep_kind;

/* One measured algorithm with its parameters on one entry. */
typedef struct cph_rep_cand {
    char algo[32];
    char params[160];          /* "name=value,..."; "" without parameters */
    double median, ci_lo, ci_hi; /* seconds */
    int noisy;
    double rel_err;            /* against the fp64 oracle; NaN when not recorded */
} cph_rep_cand;

/* One layer x flip x threads with its candidates. */
typedef struct cph_rep_entry {
    char layer[64];
    cp_shape shape;
    cp_flip flip;
    int threads;
    int count;                 /* occurrences in the network; 1 when no input says */
    int count_known;           /* 0: count 1 assumed */
    cph_rep_cand *cands;
    size_t ncands;
    long choice;               /* index into cands, -1 without a choice (bench results) */
    char runner[200];          /* "algo (params)" or "" */
    double margin, margin_lo, margin_hi; /* NaN when not recorded */
    int confident;             /* runner-up recorded and its margin not in the noise */
} cph_rep_entry;

#define CPH_REP_MAX_ROOFS 48
/* One measured roof: a compute roof (GFLOP/s) or a bandwidth roof (GB/s). */
typedef struct cph_rep_roof {
    char name[64];             /* the field it was read from, e.g. "peak_1core_gflops" */
    int compute;               /* 1 GFLOP/s, 0 GB/s */
    int threads;               /* the thread count it was measured with */
    double value;
} cph_rep_roof;

typedef struct cph_rep_source {
    cph_rep_kind kind;
    char path[1024];
    char fingerprint[17];
    char model[128];
    char description[512];     /* vendor, family/model, cores, caches, ISA: one line */
    cph_rep_entry *entries;
    size_t nentries;
    cph_rep_roof roofs[CPH_REP_MAX_ROOFS];
    int nroofs;
    char *cache_json;          /* CPH_REP_CACHE: the document's text (owned) */
    size_t cache_len;
} cph_rep_source;

typedef struct cph_report {
    cph_rep_source *src;
    size_t n;
} cph_report;

/* Reads each path and tells its kind from its content: a tuning table, bench
 * results, `convpick probe --json` output or a cache study.  On error
 * CP_EIO / CP_EFORMAT / CP_EVERSION with one line in msg naming the file
 * (and the field); nothing is kept. */
cp_status cph_report_collect(const char *const *paths, size_t npaths, cph_report *out, char *msg,
                             size_t cap);
void cph_report_free(cph_report *r);
const char *cph_rep_kind_name(cph_rep_kind k);

/* ---- report_roofs.c ---- */
/* roofs (a JSON object, may be NULL or null): every number whose key ends in
 * "gflops" (compute) or "gbs" (bandwidth), nested objects and arrays of
 * objects included; the thread count from the enclosing object's "threads",
 * else "1core" in the name (1), else "cores_used" (else cores).  Appends to
 * s->roofs. */
struct json_t;
void cph_rep_roofs_read(const struct json_t *roofs, int cores, cph_rep_source *s);

/* ---- report_model.c ---- */
double cph_rep_intensity(const cp_shape *s);      /* FLOP/byte, as above */
double cph_rep_gflops(const cp_shape *s, double seconds);
/* The highest compute roof and the bandwidth roof measured with exactly
 * threads, else the nearest thread count; 0 when none. */
double cph_rep_roof_for(const cph_report *r, int compute, int threads);
/* Every entry of this shape occurs count times in the network. */
void cph_rep_set_count(cph_report *r, const cp_shape *shape, int count);
/* The sorted distinct thread counts of every table and bench entry (max 64). */
int cph_rep_thread_counts(const cph_report *r, int *out, int max);

/* Totals over one source's entries of one thread count: the choice's, and
 * one algorithm's (its fastest parameter set on each layer).  missing:
 * layers where it has no measurement (then the total covers only the rest). */
typedef struct cph_rep_total {
    double seconds;
    size_t layers, missing;
} cph_rep_total;
cph_rep_total cph_rep_total_choice(const cph_rep_source *s, int threads);
cph_rep_total cph_rep_total_algo(const cph_rep_source *s, int threads, const char *algo);
/* The distinct algorithm names measured in s at threads (at most max). */
int cph_rep_algos(const cph_rep_source *s, int threads, const char **out, int max);
/* The fastest candidate of algo on e (-1 when not measured). */
long cph_rep_best_of(const cph_rep_entry *e, const char *algo);

/* ---- report_roofline.c / report_html.c / report_compare.c ---- */
struct cph_textbuf;
/* The roofline of source src's entries at threads. */
void cph_rep_roofline_svg(struct cph_textbuf *b, const cph_report *r, size_t src, int threads);
/* Entries of a with an entry of the same shape, flip and threads in b. */
size_t cph_rep_common(const cph_rep_source *a, const cph_rep_source *b);
void cph_rep_compare_html(struct cph_textbuf *b, const cph_rep_source *a, const cph_rep_source *c);
void cph_rep_cache_html(struct cph_textbuf *b, const cph_rep_source *s);
/* The whole page into b. */
void cph_rep_html(struct cph_textbuf *b, const cph_report *r);

/* ---- report_summary.c ---- */
#include <stdio.h>
/* One line per entry and the network totals of every table and bench source. */
void cph_rep_summary(FILE *f, const cph_report *r);

#endif
