/* Running the variants of the cache study on one layer (see cache_study.h).
 *
 * Order of work per variant: oracle check of the plain algorithm on the full
 * layer, timing, hardware counters, then the traced copy on the sampled
 * layer (first K' output channels) in a cold simulator of its own.  The
 * harness computes nothing itself: every output comes from an algorithm's
 * plan (plain or traced copy). */
#include "harness/measure/plan_work.h"
#include "harness/cache/cache_study.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "harness/cache/cache_traced.h"
#include "harness/measure/data.h"
#include "harness/measure/timing.h"

/* Each family in three variants, preflip before flipidx (flipidx is compared
 * with it): cross-correlation and pre-flipped weights run the plain
 * algorithm, flipped indexing its _flipidx twin. */
#define FAMILY(fam, plain, traced, traced_flipidx, param, value)                                   \
    {fam ".xcorr", plain, traced, CP_XCORR, CPH_FLIP_KIND_XCORR, fam, param, value},               \
    {fam ".preflip", plain, traced, CP_CONV, CPH_FLIP_KIND_PREFLIP, fam, param, value},            \
    {fam ".flipidx", plain "_flipidx", traced_flipidx, CP_CONV, CPH_FLIP_KIND_FLIPIDX, fam,        \
     param, value}
static const cph_variant variants[] = {
    FAMILY("direct.o0", "direct", &cph_traced_direct, &cph_traced_direct_flipidx, "order", 0),
    FAMILY("direct.o1", "direct", &cph_traced_direct, &cph_traced_direct_flipidx, "order", 1),
    FAMILY("blocked.ref", "blocked", &cph_traced_blocked, &cph_traced_blocked_flipidx, "tile_isa",
           1),
    FAMILY("blocked.avx2", "blocked", NULL, NULL, "tile_isa", 0), /* AVX2: not traceable */
};
#undef FAMILY

size_t cph_variant_count(void) { return sizeof variants / sizeof variants[0]; }

const cph_variant *cph_variant_at(size_t i) {
    return i < cph_variant_count() ? &variants[i] : NULL;
}

const cph_variant *cph_variant_find(const char *id) {
    for (size_t i = 0; i < cph_variant_count(); i++)
        if (strcmp(variants[i].id, id) == 0) return &variants[i];
    return NULL;
}

int64_t cph_study_sample_k(const cph_study_opts *o, const cp_shape *s) {
    if (o->channels > 0) return o->channels < s->k ? o->channels : s->k;
    if (s->groups > 1) return s->k; /* a K' must keep K/groups whole: not sampled */
    const double per_k = (double)s->n * (double)cp_shape_out_h(s) * (double)cp_shape_out_w(s) *
                         (3.0 * (double)(s->c * s->r * s->s) + 2.0);
    const double fit = (double)o->max_accesses / per_k;
    if (fit >= (double)s->k) return s->k;
    int64_t k = (int64_t)fit;
    if (k >= 6) k -= k % 6;
    return k < 1 ? 1 : k;
}

const cph_variant_result *cph_study_baseline(const cph_layer_result *r,
                                             const cph_variant_result *v) {
    for (size_t i = 0; i < r->nres; i++)
        if (r->res[i].v->kind == CPH_FLIP_KIND_XCORR &&
            strcmp(r->res[i].v->family, v->v->family) == 0)
            return &r->res[i];
    return NULL;
}

static int family_selected(const cph_variant *v, const char *const *fam, size_t nf) {
    if (!fam || nf == 0) return 1;
    for (size_t i = 0; i < nf; i++) {
        const size_t n = strlen(fam[i]);
        /* "direct" selects direct.o0 and direct.o1; "direct.o1" only that. */
        if (strncmp(v->family, fam[i], n) == 0 && (v->family[n] == '\0' || v->family[n] == '.'))
            return 1;
    }
    return 0;
}

/* Largest |y - ref| / mag over the first ks output channels of each image,
 * y holding a layer of ks channels and ref / mag one of s->k. */
static double prefix_rel_err(const cp_shape *s, int64_t ks, const float *y, const double *ref,
                             const double *mag) {
    const int64_t pq = cp_shape_out_h(s) * cp_shape_out_w(s);
    double worst = 0.0;
    for (int64_t n = 0; n < s->n; n++)
        for (int64_t k = 0; k < ks; k++)
            for (int64_t i = 0; i < pq; i++) {
                const float v = y[(n * ks + k) * pq + i];
                const size_t j = (size_t)((n * s->k + k) * pq + i);
                if (!isfinite(v)) return INFINITY;
                const double e = fabs((double)v - ref[j]);
                const double rel = mag[j] > 0.0 ? e / mag[j] : (e > 0.0 ? INFINITY : 0.0);
                if (rel > worst) worst = rel;
            }
    return worst;
}

static double pair_rel_diff(const float *a, const float *b, const double *mag, size_t n) {
    double worst = 0.0;
    for (size_t i = 0; i < n; i++) {
        const double e = fabs((double)a[i] - (double)b[i]);
        const double rel = mag[i] > 0.0 ? e / mag[i] : (e > 0.0 ? INFINITY : 0.0);
        if (rel > worst) worst = rel;
    }
    return worst;
}

static void simulate(const cph_study_opts *o, const cph_variant *v, const cp_shape *ss,
                     const cp_params *p, const float *x, const float *w, float *ys,
                     const cp_shape *full, const double *ref, const double *mag,
                     cph_variant_result *r, char *msg, size_t cap) {
    cph_cachesim sim;
    if (cph_sim_init(&sim, o->geom, o->nlevels, msg, cap) != CP_OK) return;
    cp_plan *plan = NULL;
    if (cp_plan_create(v->traced, ss, v->flip, p, &o->caches, 1, w, &plan, msg, cap) != CP_OK) {
        cph_sim_free(&sim);
        return;
    }
    const size_t nys = cp_shape_output_elems(ss);
    for (size_t i = 0; i < nys; i++) ys[i] = (float)NAN;
    const double t0 = cph_now();
    cph_trace_to(&sim);
    const cp_status st = cp_plan_run(plan, x, NULL, ys, NULL);
    cph_trace_to(NULL);
    r->seconds_sim = cph_now() - t0;
    cp_plan_destroy(plan);
    if (st == CP_OK) {
        r->simulated = 1;
        r->sim_rel_err = prefix_rel_err(full, ss->k, ys, ref, mag);
        /* The traced copy must compute the same layer as the plain one. */
        if (!(r->sim_rel_err <= r->tolerance)) r->pass = 0;
        r->refs = sim.refs;
        r->loads = sim.loads;
        r->stores = sim.stores;
        for (int i = 0; i < sim.nlevels; i++) r->lv[i] = sim.lv[i].c;
    }
    cph_sim_free(&sim);
}

/* Per-variant state kept across the phases of a layer. */
typedef struct {
    cp_plan *plan;
    cp_params p;
    double *samples;
    size_t ns, cap;
} vstate;

/* Phase 1: plan, oracle check, comparison with the family's preflip output. */
static void check_variant(const cph_study_opts *o, const cph_variant *v, const cp_shape *s,
                          const float *x, const float *w, float *y, float *ypre, int *have_pre,
                          const double *const ref[2], const double *const mag[2],
                          cph_variant_result *r, vstate *vs) {
    char msg[256];
    memset(r, 0, sizeof *r);
    r->v = v;
    r->diff_vs_preflip = -1.0;
    const cp_algo *a = cp_algo_find(v->algo);
    if (!a || !a->supports(s, v->flip, NULL, 0)) return;
    r->supported = 1;
    r->tolerance = a->tolerance;
    cp_algo_defaults(a, s, &o->caches, &vs->p);
    const int pi = cp_algo_param_index(a, v->param);
    if (pi >= 0) vs->p.v[pi] = v->param_value;
    cp_params_format(a, &vs->p, r->params, sizeof r->params);
    if (cp_plan_create(a, s, v->flip, &vs->p, &o->caches, 1, w, &vs->plan, msg, sizeof msg) !=
        CP_OK)
        return;
    const size_t ny = cp_shape_output_elems(s);
    for (size_t i = 0; i < ny; i++) y[i] = (float)NAN;
    cph_plan_work ra = {vs->plan, x, NULL, y, NULL};
    if (cph_plan_work_run(&ra) == 0) {
        const cp_error e = cp_error_measure(y, ref[v->flip], mag[v->flip], ny);
        r->rel_err = e.nonfinite ? INFINITY : e.rel_err;
        r->pass = e.nonfinite == 0 && e.rel_err <= a->tolerance;
    } else {
        r->rel_err = INFINITY;
    }
    if (v->kind == CPH_FLIP_KIND_PREFLIP) {
        memcpy(ypre, y, ny * sizeof *y);
        *have_pre = 1;
    } else if (v->kind == CPH_FLIP_KIND_FLIPIDX && *have_pre) {
        r->diff_vs_preflip = pair_rel_diff(y, ypre, mag[CP_CONV], ny);
    }
}

/* One round of timing for one variant: a short cph_measure whose samples
 * join the variant's pool. */
static void time_round(const cph_study_opts *o, vstate *vs, const float *x, float *y) {
    cph_timing_opts to;
    cph_timing_defaults(&to);
    to.max_seconds = o->time_cap / (double)o->rounds;
    to.warmup = 1;
    to.min_samples = 3;
    cph_measurement m;
    memset(&m, 0, sizeof m);
    cph_plan_work ra = {vs->plan, x, NULL, y, NULL};
    if (cph_measure(&to, cph_plan_work_run, &ra, &m) == 0 && m.n > 0) {
        if (vs->ns + m.n > vs->cap) {
            const size_t nc = (vs->ns + m.n) * 2;
            double *p = realloc(vs->samples, nc * sizeof *p);
            if (p) {
                vs->samples = p;
                vs->cap = nc;
            }
        }
        if (vs->ns + m.n <= vs->cap) {
            memcpy(vs->samples + vs->ns, m.samples, m.n * sizeof *m.samples);
            vs->ns += m.n;
        }
    }
    cph_measurement_free(&m);
}

cp_status cph_study_layer(const cph_study_opts *o, const cph_layer *L,
                          const char *const *families, size_t nfamilies, cph_layer_result *out,
                          char *msg, size_t cap) {
    memset(out, 0, sizeof *out);
    out->layer = L;
    const cp_shape *s = &L->shape;
    cp_shape ss = *s;
    ss.k = cph_study_sample_k(o, s);
    out->k_sim = ss.k;
    out->outputs_sim = (uint64_t)cp_shape_output_elems(&ss);
    const size_t nx = cp_shape_input_elems(s), nw = cp_shape_weight_elems(s);
    const size_t ny = cp_shape_output_elems(s);
    float *x = malloc(nx * sizeof *x), *w = malloc(nw * sizeof *w);
    float *y = malloc(ny * sizeof *y), *ypre = malloc(ny * sizeof *y);
    float *ys = malloc(cp_shape_output_elems(&ss) * sizeof *ys);
    double *refs[2] = {malloc(ny * sizeof(double)), malloc(ny * sizeof(double))};
    double *mags[2] = {malloc(ny * sizeof(double)), malloc(ny * sizeof(double))};
    cp_status st = CP_OK;
    if (!x || !w || !y || !ypre || !ys || !refs[0] || !refs[1] || !mags[0] || !mags[1]) {
        snprintf(msg, cap, "%s: out of memory for the tensors", L->name);
        st = CP_ENOMEM;
        goto out;
    }
    uint64_t seed = o->seed;
    cph_fill_uniform(x, nx, cph_rng_next(&seed));
    cph_fill_uniform(w, nw, cph_rng_next(&seed));
    for (int m = 0; m < 2; m++) cp_oracle_run(s, (cp_flip)m, x, w, NULL, refs[m], mags[m]);
    const double *const cref[2] = {refs[0], refs[1]};
    const double *const cmag[2] = {mags[0], mags[1]};
    int have_pre = 0;
    const char *pre_family = NULL;
    vstate vs[sizeof out->res / sizeof out->res[0]];
    memset(vs, 0, sizeof vs);
    for (size_t i = 0; i < cph_variant_count(); i++) {
        const cph_variant *v = &variants[i];
        if (!family_selected(v, families, nfamilies)) continue;
        if (out->nres == sizeof out->res / sizeof out->res[0]) break;
        if (!pre_family || strcmp(pre_family, v->family) != 0) {
            pre_family = v->family;
            have_pre = 0;
        }
        check_variant(o, v, s, x, w, y, ypre, &have_pre, cref, cmag, &out->res[out->nres],
                      &vs[out->nres]);
        out->nres++;
    }
    /* Timing in interleaved rounds within each family (xcorr, preflip,
     * flipidx, xcorr, ...), so that a drift of the machine (the other core's
     * load, clock changes) falls on every variant alike. */
    for (size_t f0 = 0; o->time && f0 < out->nres;) {
        size_t f1 = f0;
        while (f1 < out->nres && strcmp(out->res[f1].v->family, out->res[f0].v->family) == 0) f1++;
        for (int round = 0; round < o->rounds; round++)
            for (size_t j = f0; j < f1; j++)
                if (out->res[j].pass) time_round(o, &vs[j], x, y);
        for (size_t j = f0; j < f1; j++)
            if (vs[j].ns > 0) {
                out->res[j].timed = 1;
                out->res[j].rounds = o->rounds;
                cph_stats_compute(vs[j].samples, vs[j].ns, 0.95, &out->res[j].time);
            }
        f0 = f1;
    }
    for (size_t j = 0; j < out->nres; j++) {
        cph_variant_result *r = &out->res[j];
        if (r->pass && o->use_counters && o->counters) {
            cph_plan_work ra = {vs[j].plan, x, NULL, y, NULL};
            cph_plan_work_run(&ra); /* warm, like the timed samples */
            cph_counters_start(o->counters);
            cph_plan_work_run(&ra);
            cph_counters_stop(o->counters, &r->ctr);
            r->have_counters = 1;
        }
        cp_plan_destroy(vs[j].plan);
        free(vs[j].samples);
        if (r->pass && r->v->traced)
            simulate(o, r->v, &ss, &vs[j].p, x, w, ys, s, cref[r->v->flip], cmag[r->v->flip], r,
                     msg, cap);
    }
out:
    free(x); free(w); free(y); free(ypre); free(ys);
    for (int m = 0; m < 2; m++) {
        free(refs[m]);
        free(mags[m]);
    }
    return st;
}
