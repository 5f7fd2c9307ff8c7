/* Detecting the machine: topology and caches from hwloc, the processor from
 * cpuid, BLAS and build facts from the libraries and the build. */
#define _GNU_SOURCE
#include "harness/machine/machine.h"

#include <cblas.h>
#include <hwloc.h>
#include <stdio.h>
#include <string.h>

#include "loader/cpuid.h"

/* Copies with truncation, dropping trailing blanks (OpenBLAS ends its
 * configuration string with one). */
static void copy(char *dst, size_t cap, const char *src) {
    snprintf(dst, cap, "%s", src ? src : "");
    size_t n = strlen(dst);
    while (n && (dst[n - 1] == ' ' || dst[n - 1] == '\n')) dst[--n] = '\0';
}

static int count(hwloc_topology_t t, hwloc_obj_type_t type) {
    const int n = hwloc_get_nbobjs_by_type(t, type);
    return n < 0 ? 0 : n;
}

/* Data and unified cache levels, L1 first.  When instances of one level
 * differ (hybrid processors), the first instance describes the level. */
static void read_caches(hwloc_topology_t t, cph_machine *m) {
    static const hwloc_obj_type_t levels[] = {HWLOC_OBJ_L1CACHE, HWLOC_OBJ_L2CACHE,
                                              HWLOC_OBJ_L3CACHE, HWLOC_OBJ_L4CACHE,
                                              HWLOC_OBJ_L5CACHE};
    m->ncaches = 0;
    for (size_t i = 0; i < sizeof levels / sizeof levels[0] && m->ncaches < CPH_MAX_CACHES; i++) {
        const int n = count(t, levels[i]);
        if (n == 0) continue;
        hwloc_obj_t o = hwloc_get_obj_by_type(t, levels[i], 0);
        if (!o || o->attr->cache.type == HWLOC_OBJ_CACHE_INSTRUCTION) continue;
        cph_cache_level *c = &m->caches[m->ncaches++];
        c->level = (int)o->attr->cache.depth;
        copy(c->kind, sizeof c->kind,
             o->attr->cache.type == HWLOC_OBJ_CACHE_DATA ? "data" : "unified");
        c->size = (size_t)o->attr->cache.size;
        c->line = o->attr->cache.linesize;
        c->assoc = o->attr->cache.associativity;
        c->instances = n;
        c->cores_sharing = hwloc_get_nbobjs_inside_cpuset_by_type(t, o->cpuset, HWLOC_OBJ_CORE);
    }
}

static void read_cpu(cph_machine *m) {
    cpl_cpu_id id;
    cpl_cpuid_read(&id);
    copy(m->vendor, sizeof m->vendor, id.vendor);
    copy(m->model, sizeof m->model, id.brand);
    m->family = id.family;
    m->model_id = id.model;
    m->stepping = id.stepping;
    m->sse42 = id.sse42;
    m->avx = id.avx;
    m->avx2 = id.avx2;
    m->fma = id.fma;
    m->avx512f = id.avx512f;
    m->avx512bw = id.avx512bw;
    m->avx512vl = id.avx512vl;
    m->avx512dq = id.avx512dq;
    m->avx512_vnni = id.avx512_vnni;
    m->avx512_bf16 = id.avx512_bf16;
}

cp_status cph_machine_detect(cph_machine *m, const char *synthetic, char *msg, size_t cap) {
    memset(m, 0, sizeof *m);
    hwloc_topology_t t;
    if (hwloc_topology_init(&t) != 0) {
        if (msg && cap) snprintf(msg, cap, "hwloc: cannot initialise a topology");
        return CP_ENOMEM;
    }
    if (synthetic && hwloc_topology_set_synthetic(t, synthetic) != 0) {
        if (msg && cap)
            snprintf(msg, cap, "synthetic topology '%s': rejected by hwloc (see hwloc's synthetic "
                               "syntax, e.g. \"pack:2 l3:1(size=32MiB) core:8 pu:2\")",
                     synthetic);
        hwloc_topology_destroy(t);
        return CP_EINVAL;
    }
    if (hwloc_topology_load(t) != 0) {
        if (msg && cap) snprintf(msg, cap, "hwloc: cannot load the topology");
        hwloc_topology_destroy(t);
        return CP_EINVAL;
    }
    m->topology = t;
    m->synthetic = synthetic != NULL;
    m->packages = count(t, HWLOC_OBJ_PACKAGE);
    if (m->packages == 0) m->packages = 1; /* some VMs expose none: the machine is one */
    m->numa_nodes = count(t, HWLOC_OBJ_NUMANODE);
    m->cores = count(t, HWLOC_OBJ_CORE);
    m->pus = count(t, HWLOC_OBJ_PU);
    if (m->cores == 0) m->cores = m->pus; /* no core level: each PU is a core */
    m->memory_bytes = (size_t)hwloc_get_root_obj(t)->total_memory;
    read_caches(t, m);
    read_cpu(m);
    cp_device_fingerprint(m->fingerprint);

    copy(m->blas_version, sizeof m->blas_version, openblas_get_config());
    copy(m->blas_core, sizeof m->blas_core, openblas_get_corename());
    copy(m->compiler, sizeof m->compiler, CP_COMPILER);
    copy(m->build_flags, sizeof m->build_flags, CP_BUILD_FLAGS);
    return CP_OK;
}

void cph_machine_free(cph_machine *m) {
    if (m && m->topology) {
        hwloc_topology_destroy((hwloc_topology_t)m->topology);
        m->topology = NULL;
    }
}

const cph_cache_level *cph_machine_cache(const cph_machine *m, int level) {
    for (int i = 0; i < m->ncaches; i++)
        if (m->caches[i].level == level) return &m->caches[i];
    return NULL;
}

cp_cache_sizes cph_machine_caches(const cph_machine *m) {
    cp_cache_sizes c = cp_cache_sizes_fallback();
    const cph_cache_level *l1 = cph_machine_cache(m, 1), *l2 = cph_machine_cache(m, 2),
                          *l3 = cph_machine_cache(m, 3);
    if (l1 && l1->size) c.l1d = l1->size;
    if (l2 && l2->size) c.l2 = l2->size;
    if (l3 && l3->size) c.l3 = l3->size;
    if (l1 && l1->line) c.line = l1->line;
    return c;
}

size_t cph_machine_llc_total(const cph_machine *m) {
    if (m->ncaches == 0) return cp_cache_sizes_fallback().l3;
    const cph_cache_level *llc = &m->caches[m->ncaches - 1];
    return llc->size * (size_t)llc->instances;
}
