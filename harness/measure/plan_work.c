/* One run of a plan as timed work (plan_work.h). */
#include "harness/measure/plan_work.h"

int cph_plan_work_run(void *arg) {
    const cph_plan_work *r = arg;
    return cp_plan_run(r->plan, r->x, r->bias, r->y, r->exec) == CP_OK ? 0 : 1;
}
