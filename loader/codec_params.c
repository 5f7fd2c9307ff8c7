/* An algorithm and its parameters (codec.h). */
#include <limits.h>
#include <stdio.h>
#include <string.h>

#include "convpick/plugin.h"
#include "loader/codec.h"

/* obj.plugin (absent for a built-in): the algorithm a must come from the
 * loaded plugin of that name and that build (hash).  No fallback: a table
 * chosen with a plugin's algorithm needs that plugin, the same build. */
static cp_status check_plugin(const cpl_jctx *c, const json_t *obj, const char *where,
                              const char *name, const cp_algo *a) {
    const json_t *pj = json_object_get(obj, "plugin");
    const cp_plugin *have = a ? cp_algo_plugin(a) : NULL;
    if (!pj) {
        if (have)
            return cpl_jfail(c, CP_ENOTFOUND,
                             "%s.algo: '%s' is recorded as built in, but here it comes from "
                             "plugin '%s' (%s)",
                             where, name, cp_plugin_name(have), cp_plugin_path(have));
        return CP_OK;
    }
    char sub[200];
    cpl_jpath(sub, sizeof sub, where, "plugin");
    const char *pname, *hash;
    cp_status st;
    if (!json_is_object(pj))
        return cpl_jfail(c, CP_EFORMAT, "%s: expected object, found %s", sub,
                         cpl_json_type_name(pj));
    if ((st = cpl_jstr(c, pj, sub, "name", &pname)) != CP_OK ||
        (st = cpl_jstr(c, pj, sub, "hash", &hash)) != CP_OK)
        return st;
    if (!a || !have)
        return cpl_jfail(c, CP_ENOTFOUND,
                         "%s: '%s' comes from plugin '%s' (hash %s), which is not loaded: load "
                         "it before the table (cp_plugin_load, --plugin)",
                         sub, name, pname, hash);
    if (strcmp(cp_plugin_name(have), pname) != 0 || strcmp(cp_plugin_hash(have), hash) != 0)
        return cpl_jfail(c, CP_ENOTFOUND,
                         "%s: '%s' was chosen from plugin '%s' hash %s, but the loaded one is "
                         "plugin '%s' hash %s (%s): another build; load the same one or tune again",
                         sub, name, pname, hash, cp_plugin_name(have), cp_plugin_hash(have),
                         cp_plugin_path(have));
    return CP_OK;
}

cp_status cpl_decode_algo(const cpl_jctx *c, const json_t *obj, const char *where,
                          const cp_algo **out) {
    const char *name;
    cp_status st = cpl_jstr(c, obj, where, "algo", &name);
    if (st != CP_OK) return st;
    *out = cp_algo_find(name);
    if ((st = check_plugin(c, obj, where, name, *out)) != CP_OK) return st;
    if (*out) return CP_OK;
    char known[256] = "";
    size_t len = 0;
    for (size_t i = 0; i < cp_algo_count() && len < sizeof known; i++) {
        int n = snprintf(known + len, sizeof known - len, "%s%s", i ? ", " : "", cp_algo_at(i)->name);
        if (n < 0) break;
        len += (size_t)n;
    }
    return cpl_jfail(c, CP_ENOTFOUND, "%s.algo: unknown algorithm '%s' (this build has: %s)",
                     where, name, known);
}

/* A parameter the object lacks takes the algorithm's default for the entry's
 * shape and the table's cache sizes: tables written before an algorithm
 * gained a parameter still load, and run as that default says. */
cp_status cpl_decode_params(const cpl_jctx *c, const json_t *obj, const char *where,
                            const cp_algo *a, const cp_shape *shape, const cp_cache_sizes *caches,
                            cp_params *out) {
    json_t *p = NULL;
    cp_status st = cpl_jfield(c, obj, where, "params", JSON_OBJECT, 0, &p);
    if (st != CP_OK) return st;
    memset(out, 0, sizeof *out);
    const char *key;
    json_t *v = NULL;
    json_object_foreach(p, key, v) {
        if (cp_algo_param_index(a, key) < 0)
            return cpl_jfail(c, CP_EFORMAT, "%s.params.%s: %s has no parameter of that name",
                             where, key, a->name);
    }
    char sub[200];
    cpl_jpath(sub, sizeof sub, where, "params");
    cp_params defaults;
    cp_algo_defaults(a, shape, caches, &defaults);
    for (int i = 0; i < a->nparams; i++) {
        long long x;
        if (!json_object_get(p, a->params[i].name)) {
            out->v[i] = defaults.v[i];
            continue;
        }
        if ((st = cpl_jint(c, p, sub, a->params[i].name, LLONG_MIN, LLONG_MAX, &x)) != CP_OK)
            return st;
        out->v[i] = (int64_t)x;
    }
    char why[200];
    if (cp_params_check(a, out, why, sizeof why) != CP_OK)
        return cpl_jfail(c, CP_EFORMAT, "%s: %s", sub, why);
    return CP_OK;
}
