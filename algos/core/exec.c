/* The serial executor and the call every kernel uses to go parallel. */
#include "convpick/exec.h"

#include <stddef.h>

cp_exec cp_exec_serial(void) {
    cp_exec e = {1, NULL, NULL};
    return e;
}

void cp_parallel_for(const cp_exec *exec, int64_t count, cp_task_fn fn, void *arg) {
    if (count <= 0) return;
    if (!exec || !exec->parallel_for || exec->nthreads <= 1) {
        fn(arg, 0, count, 0);
        return;
    }
    exec->parallel_for(exec->pool, count, fn, arg);
}

int cp_exec_threads(const cp_exec *exec) {
    return (exec && exec->nthreads > 1 && exec->parallel_for) ? exec->nthreads : 1;
}
