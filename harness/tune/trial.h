/* One trial of one candidate: the unit of evidence of the tuner.
 *
 * A trial builds a FRESH plan (the weights prepared anew) and FRESH input and
 * output buffers.  With a placer (placer.h), every one of those blocks, the
 * plan's prepared weights and workspace included, lies at a random 64-byte
 * step on huge-page regions (layout randomisation: Mytkowicz et al.,
 * "Producing Wrong Data Without Doing Anything Obviously Wrong!", ASPLOS 2009;
 * Curtsinger & Berger, "STABILIZER", ASPLOS 2013), so that placement effects
 * become variance between trials instead of a fixed bias of one run or one
 * process.  Then warm-up runs and a short batch of timed samples
 * (cph_measure); the batch's median is the trial's result.
 *
 * It computes no convolution itself: the candidate runs through cp_plan_run. */
#ifndef CONVPICK_TRIAL_H
#define CONVPICK_TRIAL_H

#include <stddef.h>
#include <stdint.h>

#include "convpick/convpick.h"
#include "harness/measure/placer.h"
#include "harness/measure/plan_work.h"
#include "harness/measure/timing.h"

typedef struct cph_trial_setup {
    const cp_shape *shape;
    cp_flip flip;
    int threads;                  /* plans are sized for this many workers */
    const cp_cache_sizes *caches; /* may be NULL: fallback sizes */
    const cp_exec *exec;          /* NULL = serial */
    const float *x, *w, *bias;    /* the layer's test tensors; x is copied into each trial */
    cph_timing_opts timing;       /* per trial: warm-up, samples, time cap */
    cph_placer *placer;           /* NULL: buffers page-aligned and plans on the C library's heap */
} cph_trial_setup;

/* Runs one trial of algorithm a with parameters p.  Fills *median (seconds) and *wall (seconds
 * spent, plan and buffers included).  Returns 0, or -1 with a reason in msg
 * (plan creation failed, a run failed, out of memory). */
int cph_trial_run(const cph_trial_setup *t, const cp_algo *a, const cp_params *p, double *median, double *wall, char *msg, size_t cap);

#endif
