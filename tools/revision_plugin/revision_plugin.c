/* One revision's built-in algorithms as a plugin (convpick/plugin.h), for the
 * in-process A/B check (scripts/ci-speed-check --ab, docs/speed-check.md).
 *
 * Compiled against the revision's own headers and linked with its own
 * libconvpick.a, with the library's symbols kept private to this module
 * (CMakeLists.txt beside this file), so that two revisions' algorithms can
 * live in one process: the process times both sides' trials back to back in
 * every round, and a state of the machine that lasts a second moves both.
 * Every built-in algorithm X of the revision is offered as PREFIX_X (PREFIX
 * from CP_REV_PREFIX, e.g. "base" or "new") with the revision's own
 * functions: its supports, defaults, candidates, workspace, prepare and run.
 * What it does not carry is the revision's plan code (algos/core/plan.c):
 * the host's plans run both sides, so a change there is not measured. */
#include <stdio.h>
#include <string.h>

#include "convpick/algo.h"
#include "convpick/plugin.h"

#ifndef CP_REV_PREFIX
#error "CP_REV_PREFIX must name the side (e.g. -DCP_REV_PREFIX=\"base\")"
#endif

static cp_algo renamed[CP_PLUGIN_MAX_ALGOS];
static char names[CP_PLUGIN_MAX_ALGOS][64];
static const cp_algo *list[CP_PLUGIN_MAX_ALGOS];
static cp_plugin_info info;

/* The loader asks every plugin algorithm for a workspace size; a built-in
 * one may leave it unset for none. */
static size_t no_workspace(const cp_shape *s, cp_flip flip, const cp_params *p, int nthreads) {
    (void)s;
    (void)flip;
    (void)p;
    (void)nthreads;
    return 0;
}

/* Not thread-safe, as plugin loading is not (convpick/plugin.h): the host
 * loads plugins before any other thread uses the registry. */
__attribute__((visibility("default"))) const cp_plugin_info *convpick_plugin_entry(void) {
    if (info.nalgos) return &info;
    size_t n = cp_algo_count();
    if (n > CP_PLUGIN_MAX_ALGOS) n = CP_PLUGIN_MAX_ALGOS; /* the loader takes at most this many */
    for (size_t i = 0; i < n; i++) {
        renamed[i] = *cp_algo_at(i);
        /* a name too long for the loader's 31 bytes is refused by it, by name */
        snprintf(names[i], sizeof names[i], "%s_%s", CP_REV_PREFIX, renamed[i].name);
        renamed[i].name = names[i];
        if (!renamed[i].workspace_size) renamed[i].workspace_size = no_workspace;
        list[i] = &renamed[i];
    }
    info.abi_version = CP_PLUGIN_ABI_VERSION;
    info.name = CP_REV_PREFIX;
    info.algos = list;
    info.nalgos = n;
    return &info;
}
