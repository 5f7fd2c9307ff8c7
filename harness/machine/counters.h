/* Hardware performance counters through perf_event_open(2), for the cache
 * study: cycles, instructions, L1d read accesses and misses, last-level
 * read accesses and misses, dTLB read misses, counted in user space for the
 * calling thread.
 *
 * Many virtual machines expose no PMU: then opening fails and the reason is
 * kept, so that reports say "not available here (reason)" instead of
 * printing zeros.  Each event is opened on its own, so a machine that has
 * some of them reports those and names the others as unavailable. */
#ifndef CONVPICK_COUNTERS_H
#define CONVPICK_COUNTERS_H

#include <stddef.h>
#include <stdint.h>

enum {
    CPH_CTR_CYCLES = 0,
    CPH_CTR_INSTRUCTIONS,
    CPH_CTR_L1D_READ_ACCESS,
    CPH_CTR_L1D_READ_MISS,
    CPH_CTR_LL_READ_ACCESS,
    CPH_CTR_LL_READ_MISS,
    CPH_CTR_DTLB_READ_MISS,
    CPH_NCTR
};

typedef struct cph_counters {
    int fd[CPH_NCTR];          /* -1 when the event could not be opened */
    int any;                   /* at least one event is open */
    char why[CPH_NCTR][160];   /* per event: why it is unavailable ("" when open) */
    char reason[160];          /* when none is open: the first failure, in words */
} cph_counters;

typedef struct cph_counter_values {
    int valid[CPH_NCTR];       /* 1: counted (and scaled if multiplexed) */
    double value[CPH_NCTR];
    double running_fraction[CPH_NCTR]; /* time_running / time_enabled (1 = never multiplexed) */
} cph_counter_values;

/* Short names for reports ("cycles", "l1d_read_access", ...). */
const char *cph_counter_name(int i);

/* Opens what the machine offers (disabled).  Returns the number of events
 * opened; 0 means none, with c->reason saying why. */
int cph_counters_open(cph_counters *c);
/* Resets and enables the open events. */
void cph_counters_start(cph_counters *c);
/* Disables them and reads the counts into v. */
void cph_counters_stop(cph_counters *c, cph_counter_values *v);
void cph_counters_close(cph_counters *c);

#endif
