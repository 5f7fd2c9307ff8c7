/* perf_event_open(2) counting for the cache study (see counters.h).  Events
 * are the kernel's generic hardware and hardware-cache events, user space
 * only (exclude_kernel, exclude_hv), which perf_event_paranoid <= 2 allows
 * for one's own thread. */
#define _GNU_SOURCE
#include "harness/machine/counters.h"

#include <errno.h>
#include <linux/perf_event.h>
#include <stdio.h>
#include <string.h>
#include <sys/ioctl.h>
#include <sys/syscall.h>
#include <unistd.h>

static const char *const names[CPH_NCTR] = {
    "cycles", "instructions", "l1d_read_access", "l1d_read_miss",
    "ll_read_access", "ll_read_miss", "dtlb_read_miss",
};

const char *cph_counter_name(int i) { return i >= 0 && i < CPH_NCTR ? names[i] : "?"; }

static uint64_t cache_cfg(uint64_t cache, uint64_t op, uint64_t result) {
    return cache | (op << 8) | (result << 16);
}

static void event_attr(int i, struct perf_event_attr *a) {
    memset(a, 0, sizeof *a);
    a->size = sizeof *a;
    a->disabled = 1;
    a->exclude_kernel = 1;
    a->exclude_hv = 1;
    a->read_format = PERF_FORMAT_TOTAL_TIME_ENABLED | PERF_FORMAT_TOTAL_TIME_RUNNING;
    const uint64_t rd = PERF_COUNT_HW_CACHE_OP_READ;
    switch (i) {
    case CPH_CTR_CYCLES:
        a->type = PERF_TYPE_HARDWARE;
        a->config = PERF_COUNT_HW_CPU_CYCLES;
        break;
    case CPH_CTR_INSTRUCTIONS:
        a->type = PERF_TYPE_HARDWARE;
        a->config = PERF_COUNT_HW_INSTRUCTIONS;
        break;
    case CPH_CTR_L1D_READ_ACCESS:
        a->type = PERF_TYPE_HW_CACHE;
        a->config = cache_cfg(PERF_COUNT_HW_CACHE_L1D, rd, PERF_COUNT_HW_CACHE_RESULT_ACCESS);
        break;
    case CPH_CTR_L1D_READ_MISS:
        a->type = PERF_TYPE_HW_CACHE;
        a->config = cache_cfg(PERF_COUNT_HW_CACHE_L1D, rd, PERF_COUNT_HW_CACHE_RESULT_MISS);
        break;
    case CPH_CTR_LL_READ_ACCESS:
        a->type = PERF_TYPE_HW_CACHE;
        a->config = cache_cfg(PERF_COUNT_HW_CACHE_LL, rd, PERF_COUNT_HW_CACHE_RESULT_ACCESS);
        break;
    case CPH_CTR_LL_READ_MISS:
        a->type = PERF_TYPE_HW_CACHE;
        a->config = cache_cfg(PERF_COUNT_HW_CACHE_LL, rd, PERF_COUNT_HW_CACHE_RESULT_MISS);
        break;
    case CPH_CTR_DTLB_READ_MISS:
    default:
        a->type = PERF_TYPE_HW_CACHE;
        a->config = cache_cfg(PERF_COUNT_HW_CACHE_DTLB, rd, PERF_COUNT_HW_CACHE_RESULT_MISS);
        break;
    }
}

static void explain(int err, char *buf, size_t cap) {
    const char *hint = "";
    if (err == ENOENT || err == EOPNOTSUPP || err == ENODEV)
        hint = "; the CPU or hypervisor exposes no such hardware event";
    else if (err == EACCES || err == EPERM)
        hint = "; see /proc/sys/kernel/perf_event_paranoid";
    else if (err == ENOSYS)
        hint = "; the kernel has no perf events";
    snprintf(buf, cap, "perf_event_open: %s%s", strerror(err), hint);
}

int cph_counters_open(cph_counters *c) {
    memset(c, 0, sizeof *c);
    int opened = 0;
    for (int i = 0; i < CPH_NCTR; i++) {
        struct perf_event_attr a;
        event_attr(i, &a);
        long fd = syscall(SYS_perf_event_open, &a, 0, -1, -1, 0UL);
        if (fd < 0) {
            const int err = errno;
            c->fd[i] = -1;
            explain(err, c->why[i], sizeof c->why[i]);
            if (!c->reason[0]) {
                FILE *f = fopen("/proc/sys/kernel/perf_event_paranoid", "r");
                int par = -99;
                if (f) {
                    if (fscanf(f, "%d", &par) != 1) par = -99;
                    fclose(f);
                }
                char e[120];
                explain(err, e, sizeof e);
                if (par != -99)
                    snprintf(c->reason, sizeof c->reason, "%s (event %s; perf_event_paranoid=%d)",
                             e, names[i], par);
                else
                    snprintf(c->reason, sizeof c->reason, "%s (event %s)", e, names[i]);
            }
            continue;
        }
        c->fd[i] = (int)fd;
        opened++;
    }
    c->any = opened > 0;
    if (c->any) c->reason[0] = '\0';
    return opened;
}

void cph_counters_start(cph_counters *c) {
    for (int i = 0; i < CPH_NCTR; i++)
        if (c->fd[i] >= 0) {
            ioctl(c->fd[i], PERF_EVENT_IOC_RESET, 0);
            ioctl(c->fd[i], PERF_EVENT_IOC_ENABLE, 0);
        }
}

void cph_counters_stop(cph_counters *c, cph_counter_values *v) {
    memset(v, 0, sizeof *v);
    for (int i = 0; i < CPH_NCTR; i++)
        if (c->fd[i] >= 0) ioctl(c->fd[i], PERF_EVENT_IOC_DISABLE, 0);
    for (int i = 0; i < CPH_NCTR; i++) {
        if (c->fd[i] < 0) continue;
        uint64_t buf[3];
        if (read(c->fd[i], buf, sizeof buf) != (ssize_t)sizeof buf || buf[1] == 0) continue;
        v->running_fraction[i] = (double)buf[2] / (double)buf[1];
        if (buf[2] == 0) continue; /* enabled but never scheduled: nothing measured */
        v->value[i] = (double)buf[0] * (double)buf[1] / (double)buf[2];
        v->valid[i] = 1;
    }
}

void cph_counters_close(cph_counters *c) {
    for (int i = 0; i < CPH_NCTR; i++)
        if (c->fd[i] >= 0) close(c->fd[i]);
    memset(c, 0, sizeof *c);
    for (int i = 0; i < CPH_NCTR; i++) c->fd[i] = -1;
}
