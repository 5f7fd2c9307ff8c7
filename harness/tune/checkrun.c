/* The checking run, in this process or in a child (checkrun.h). */
#define _DEFAULT_SOURCE /* MAP_ANONYMOUS */
#include "harness/tune/checkrun.h"

#include <errno.h>
#include <math.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/mman.h>
#include <sys/wait.h>
#include <unistd.h>

static cp_status run_here(const cph_check_run *r, const cp_exec *exec, float *y, size_t ny,
                          char *why, size_t cap) {
    for (size_t i = 0; i < ny; i++) y[i] = (float)NAN;
    cp_plan *plan = NULL;
    cp_status st = cp_plan_create(r->algo, r->shape, r->flip, r->params, r->caches, r->threads,
                                  r->w, &plan, why, cap);
    if (st != CP_OK) return st;
    st = cp_plan_run(plan, r->x, r->bias, y, exec);
    cp_plan_destroy(plan);
    if (st != CP_OK) snprintf(why, cap, "run failed: %s", cp_status_str(st));
    return st;
}

static const char *signal_name(int sig) {
    switch (sig) {
    case SIGSEGV: return "SIGSEGV";
    case SIGBUS: return "SIGBUS";
    case SIGFPE: return "SIGFPE";
    case SIGILL: return "SIGILL";
    case SIGABRT: return "SIGABRT";
    case SIGKILL: return "SIGKILL";
    default: return "signal";
    }
}

/* What the child hands back beside y. */
typedef struct {
    int status;
    char why[256];
} child_result;

static cp_status run_child(const cph_check_run *r, float *y, size_t ny, char *why, size_t cap) {
    const size_t bytes = sizeof(child_result) + ny * sizeof *y;
    void *shm = mmap(NULL, bytes, PROT_READ | PROT_WRITE, MAP_SHARED | MAP_ANONYMOUS, -1, 0);
    if (shm == MAP_FAILED) {
        snprintf(why, cap, "cannot map memory for the isolated run: %s", strerror(errno));
        return CP_ENOMEM;
    }
    child_result *res = shm;
    float *ys = (float *)(res + 1);
    fflush(NULL);
    const pid_t pid = fork();
    if (pid < 0) {
        snprintf(why, cap, "cannot fork for the isolated run: %s", strerror(errno));
        munmap(shm, bytes);
        return CP_ENOMEM;
    }
    if (pid == 0) {
        /* The crash is the parent's to report: the default action, no
         * sanitizer or other handler inherited from the parent. */
        const int sigs[] = {SIGSEGV, SIGBUS, SIGFPE, SIGILL, SIGABRT};
        for (size_t i = 0; i < sizeof sigs / sizeof sigs[0]; i++) signal(sigs[i], SIG_DFL);
        res->status = (int)run_here(r, NULL, ys, ny, res->why, sizeof res->why);
        _exit(0);
    }
    int wst = 0;
    pid_t got;
    while ((got = waitpid(pid, &wst, 0)) < 0 && errno == EINTR) {
    }
    cp_status st;
    if (got < 0) {
        snprintf(why, cap, "cannot wait for the isolated run: %s", strerror(errno));
        st = CP_EINVAL;
    } else if (WIFSIGNALED(wst)) {
        snprintf(why, cap, "crashed in its checking run: signal %d (%s)", WTERMSIG(wst),
                 signal_name(WTERMSIG(wst)));
        st = CP_EINVAL;
    } else if (!WIFEXITED(wst) || WEXITSTATUS(wst) != 0) {
        snprintf(why, cap, "its checking run exited with status %d", WEXITSTATUS(wst));
        st = CP_EINVAL;
    } else {
        st = (cp_status)res->status;
        memcpy(y, ys, ny * sizeof *y);
        if (st != CP_OK) snprintf(why, cap, "%s", res->why);
    }
    munmap(shm, bytes);
    return st;
}

cp_status cph_check_run_once(const cph_check_run *r, float *y, size_t ny, char *why, size_t cap) {
    if (r->isolate && cp_algo_plugin(r->algo)) return run_child(r, y, ny, why, cap);
    return run_here(r, r->exec, y, ny, why, cap);
}

cp_status cph_check_error(const cph_check_run *r, const double *ref, const double *mag, float *y,
                          size_t ny, cp_error *e, char *why, size_t cap) {
    const cp_status st = cph_check_run_once(r, y, ny, why, cap);
    if (st == CP_OK) *e = cp_error_measure(y, ref, mag, ny);
    return st;
}

int cph_error_within_tolerance(const cp_algo *a, const cp_error *e, char *why, size_t cap) {
    if (e->nonfinite == 0 && e->rel_err <= a->tolerance) return 1;
    snprintf(why, cap, "error %.3g above its tolerance %.3g against the oracle%s", e->rel_err,
             a->tolerance, e->nonfinite ? " (non-finite outputs)" : "");
    return 0;
}
