/* Loading plugins (convpick/plugin.h): dlopen, the checks the header lists,
 * then the registry's dynamic part (algos/core/registry.h). */
#define _POSIX_C_SOURCE 200809L /* strdup */
#include <dlfcn.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "algos/core/cpa.h"
#include "algos/core/registry.h"
#include "convpick/plugin.h"
#include "loader/device.h"

#define CPL_MAX_PLUGINS 16
#define CPL_NAME_MAX 31

struct cp_plugin {
    void *handle;
    char name[CPL_NAME_MAX + 1];
    char *path;
    char hash[17];
    const cp_plugin_info *info;
};

static cp_plugin *plugins[CPL_MAX_PLUGINS];
static size_t nplugins;

/* [a-z0-9_], 1..CPL_NAME_MAX bytes: what registry names and table keys take. */
static int name_ok(const char *s) {
    if (!s || !*s || strlen(s) > CPL_NAME_MAX) return 0;
    for (; *s; s++)
        if (!((*s >= 'a' && *s <= 'z') || (*s >= '0' && *s <= '9') || *s == '_')) return 0;
    return 1;
}

/* The content hash: FNV-1a 64 over the file's bytes, as 16 hex digits. */
static cp_status hash_file(const char *path, char out[17], char *msg, size_t cap) {
    FILE *f = fopen(path, "rb");
    if (!f) return cpa_fail(CP_EIO, msg, cap, "%s: cannot read the file to hash it", path);
    uint64_t h = CPL_FNV1A64_OFFSET;
    unsigned char buf[65536];
    size_t n;
    while ((n = fread(buf, 1, sizeof buf, f)) > 0) h = cpl_fnv1a64(h, buf, n);
    const int err = ferror(f);
    fclose(f);
    if (err) return cpa_fail(CP_EIO, msg, cap, "%s: read error while hashing", path);
    snprintf(out, 17, "%016llx", (unsigned long long)h);
    return CP_OK;
}

/* The declaration of one algorithm (the header's list), or CP_EINVAL naming
 * the field. */
static cp_status check_algo(const char *path, size_t i, const cp_algo *a, char *msg, size_t cap) {
    if (!a) return cpa_fail(CP_EINVAL, msg, cap, "%s: algos[%zu] is NULL", path, i);
    if (!name_ok(a->name))
        return cpa_fail(CP_EINVAL, msg, cap, "%s: algos[%zu].name '%s' is not 1..%d of [a-z0-9_]",
                        path, i, a->name ? a->name : "(null)", CPL_NAME_MAX);
    const char *missing = !a->summary          ? "summary"
                          : !a->supports       ? "supports"
                          : !a->workspace_size ? "workspace_size"
                          : !a->run            ? "run"
                          : a->prepared_size && !a->prepare ? "prepare (prepared_size is set)"
                          : a->nparams > 0 && !a->defaults  ? "defaults (nparams > 0)"
                          : a->nparams > 0 && !a->params    ? "params (nparams > 0)"
                                                            : NULL;
    if (missing)
        return cpa_fail(CP_EINVAL, msg, cap, "%s: algorithm '%s': %s is not set", path, a->name,
                        missing);
    if (!isfinite(a->tolerance) || !(a->tolerance > 0))
        return cpa_fail(CP_EINVAL, msg, cap, "%s: algorithm '%s': tolerance %g is not finite > 0",
                        path, a->name, a->tolerance);
    if (a->nparams < 0 || a->nparams > CP_MAX_PARAMS)
        return cpa_fail(CP_EINVAL, msg, cap, "%s: algorithm '%s': nparams %d is not in [0, %d]",
                        path, a->name, a->nparams, CP_MAX_PARAMS);
    for (int k = 0; k < a->nparams; k++) {
        const cp_param_desc *d = &a->params[k];
        if (!name_ok(d->name))
            return cpa_fail(CP_EINVAL, msg, cap,
                            "%s: algorithm '%s': params[%d].name is not 1..%d of [a-z0-9_]", path,
                            a->name, k, CPL_NAME_MAX);
        if (d->min > d->max)
            return cpa_fail(CP_EINVAL, msg, cap,
                            "%s: algorithm '%s': parameter '%s' has an empty range [%lld, %lld]",
                            path, a->name, d->name, (long long)d->min, (long long)d->max);
    }
    return CP_OK;
}

/* Names: no clash with the registry (built-ins, plugins before) nor inside
 * the plugin; no plugin name twice. */
static cp_status check_names(const char *path, const cp_plugin_info *info, char *msg,
                             size_t cap) {
    if (cp_plugin_find(info->name))
        return cpa_fail(CP_EINVAL, msg, cap, "%s: a plugin named '%s' is already loaded (from %s)",
                        path, info->name, cp_plugin_path(cp_plugin_find(info->name)));
    for (size_t i = 0; i < info->nalgos; i++) {
        const char *n = info->algos[i]->name;
        const cp_algo *old = cp_algo_find(n);
        if (old) {
            const cp_plugin *owner = cp_algo_plugin(old);
            if (owner)
                return cpa_fail(CP_EINVAL, msg, cap,
                                "%s: algorithm '%s' clashes with plugin '%s' (%s); not loaded",
                                path, n, owner->name, owner->path);
            return cpa_fail(CP_EINVAL, msg, cap,
                            "%s: algorithm '%s' clashes with the built-in one; not loaded", path, n);
        }
        for (size_t j = 0; j < i; j++)
            if (strcmp(info->algos[j]->name, n) == 0)
                return cpa_fail(CP_EINVAL, msg, cap, "%s: algorithm '%s' is declared twice", path,
                                n);
    }
    return CP_OK;
}

static cp_status check_info(const char *path, const cp_plugin_info *info, char *msg, size_t cap) {
    if (!info) return cpa_fail(CP_EINVAL, msg, cap, "%s: " CP_PLUGIN_ENTRY_NAME "() returned NULL", path);
    if (info->abi_version != CP_PLUGIN_ABI_VERSION)
        return cpa_fail(CP_EVERSION, msg, cap,
                        "%s: plugin ABI version %d is not supported (this convpick supports %d)",
                        path, info->abi_version, CP_PLUGIN_ABI_VERSION);
    if (!name_ok(info->name))
        return cpa_fail(CP_EINVAL, msg, cap, "%s: plugin name '%s' is not 1..%d of [a-z0-9_]", path,
                        info->name ? info->name : "(null)", CPL_NAME_MAX);
    if (info->nalgos < 1 || info->nalgos > CP_PLUGIN_MAX_ALGOS || !info->algos)
        return cpa_fail(CP_EINVAL, msg, cap, "%s: nalgos %zu is not in [1, %d]", path,
                        info->nalgos, CP_PLUGIN_MAX_ALGOS);
    cp_status st;
    for (size_t i = 0; i < info->nalgos; i++)
        if ((st = check_algo(path, i, info->algos[i], msg, cap)) != CP_OK) return st;
    return check_names(path, info, msg, cap);
}

static void plugin_free(cp_plugin *p) {
    if (!p) return;
    if (p->handle) dlclose(p->handle);
    free(p->path);
    free(p);
}

cp_status cp_plugin_load(const char *path, const cp_plugin **out, char *msg, size_t cap) {
    if (!path || !*path) return cpa_fail(CP_EINVAL, msg, cap, "plugin: empty path");
    if (nplugins == CPL_MAX_PLUGINS)
        return cpa_fail(CP_EINVAL, msg, cap, "%s: more than %d plugins", path, CPL_MAX_PLUGINS);
    cp_plugin *p = calloc(1, sizeof *p);
    if (!p || !(p->path = strdup(path))) {
        plugin_free(p);
        return cpa_fail(CP_ENOMEM, msg, cap, "%s: out of memory", path);
    }
    cp_status st = CP_OK;
    p->handle = dlopen(path, RTLD_NOW | RTLD_LOCAL);
    if (!p->handle) {
        const char *e = dlerror();
        st = cpa_fail(CP_EIO, msg, cap, "cannot load plugin: %s", e ? e : path);
        goto fail;
    }
    /* dlsym returns void *; the entry point is a function (POSIX allows the
     * conversion through a union-free memcpy). */
    void *sym = dlsym(p->handle, CP_PLUGIN_ENTRY_NAME);
    if (!sym) {
        st = cpa_fail(CP_ENOTFOUND, msg, cap,
                      "%s: no entry point '" CP_PLUGIN_ENTRY_NAME "' (not a convpick plugin)",
                      path);
        goto fail;
    }
    cp_plugin_entry_fn entry;
    memcpy(&entry, &sym, sizeof entry);
    p->info = entry();
    if ((st = check_info(path, p->info, msg, cap)) != CP_OK ||
        (st = hash_file(path, p->hash, msg, cap)) != CP_OK)
        goto fail;
    snprintf(p->name, sizeof p->name, "%s", p->info->name);
    if (cpa_registry_add(p->info->algos, p->info->nalgos, p) != 0) {
        st = cpa_fail(CP_EINVAL, msg, cap, "%s: more than %d plugin algorithms in all", path,
                      CPA_REGISTRY_MAX_DYNAMIC);
        goto fail;
    }
    plugins[nplugins++] = p;
    if (out) *out = p;
    return CP_OK;
fail:
    plugin_free(p);
    return st;
}

size_t cp_plugin_count(void) { return nplugins; }
const cp_plugin *cp_plugin_at(size_t i) { return i < nplugins ? plugins[i] : NULL; }

const cp_plugin *cp_plugin_find(const char *name) {
    for (size_t i = 0; name && i < nplugins; i++)
        if (strcmp(plugins[i]->name, name) == 0) return plugins[i];
    return NULL;
}

const char *cp_plugin_name(const cp_plugin *p) { return p->name; }
const char *cp_plugin_path(const cp_plugin *p) { return p->path; }
const char *cp_plugin_hash(const cp_plugin *p) { return p->hash; }
size_t cp_plugin_algo_count(const cp_plugin *p) { return p->info->nalgos; }

const cp_algo *cp_plugin_algo_at(const cp_plugin *p, size_t i) {
    return i < p->info->nalgos ? p->info->algos[i] : NULL;
}

const cp_plugin *cp_algo_plugin(const cp_algo *a) { return cpa_registry_owner(a); }

void cp_plugins_unload_all(void) {
    while (nplugins > 0) {
        cp_plugin *p = plugins[--nplugins];
        cpa_registry_remove(p);
        plugin_free(p);
    }
}
