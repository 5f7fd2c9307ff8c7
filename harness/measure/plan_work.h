/* The work most measurements time: one run of a plan, as a cph_work_fn for
 * cph_measure (timing.h).  Shared by trials, the cache study and the
 * placement experiment. */
#ifndef CONVPICK_PLAN_WORK_H
#define CONVPICK_PLAN_WORK_H

#include "convpick/convpick.h"

typedef struct cph_plan_work {
    cp_plan *plan;
    const float *x, *bias; /* bias may be NULL */
    float *y;
    const cp_exec *exec;   /* NULL: serial */
} cph_plan_work;

/* cp_plan_run on arg (a cph_plan_work); 0, or 1 when the run failed. */
int cph_plan_work_run(void *arg);

#endif
