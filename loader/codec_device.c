/* The device and settings objects, the parts a reader relies on (codec.h). */
#include <limits.h>
#include <stdio.h>
#include <string.h>

#include "loader/codec.h"

cp_status cpl_decode_device(const cpl_jctx *c, const json_t *root, char fingerprint[17],
                            cp_cache_sizes *caches_out) {
    json_t *dev = NULL, *caches = NULL;
    const char *fp;
    cp_status st;
    if ((st = cpl_jfield(c, root, "", "device", JSON_OBJECT, 0, &dev)) != CP_OK) return st;
    if ((st = cpl_jstr(c, dev, "device", "fingerprint", &fp)) != CP_OK) return st;
    if (strlen(fp) != 16 || strspn(fp, "0123456789abcdef") != 16)
        return cpl_jfail(c, CP_EFORMAT, "device.fingerprint: '%s' is not 16 lower-case hex digits", fp);
    memcpy(fingerprint, fp, 17);
    *caches_out = cp_cache_sizes_fallback();
    if ((st = cpl_jfield(c, dev, "device", "caches", JSON_ARRAY, 0, &caches)) != CP_OK) return st;
    for (size_t i = 0; i < json_array_size(caches); i++) {
        char sub[48];
        snprintf(sub, sizeof sub, "device.caches[%zu]", i);
        json_t *cj = json_array_get(caches, i);
        if (!json_is_object(cj))
            return cpl_jfail(c, CP_EFORMAT, "%s: expected object, found %s", sub,
                             cpl_json_type_name(cj));
        long long level, size, line;
        const char *kind;
        if ((st = cpl_jint(c, cj, sub, "level", 1, 8, &level)) != CP_OK ||
            (st = cpl_jint(c, cj, sub, "size", 1, LLONG_MAX, &size)) != CP_OK ||
            (st = cpl_jint(c, cj, sub, "line", 1, 65536, &line)) != CP_OK ||
            (st = cpl_jstr(c, cj, sub, "kind", &kind)) != CP_OK)
            return st;
        if (level == 1 && strcmp(kind, "data") == 0) caches_out->l1d = (size_t)size;
        if (level == 1) caches_out->line = (size_t)line;
        if (level == 2) caches_out->l2 = (size_t)size;
        if (level == 3) caches_out->l3 = (size_t)size;
    }
    return CP_OK;
}

cp_status cpl_decode_cold(const cpl_jctx *c, const json_t *root, int *cold) {
    json_t *settings = NULL, *timing = NULL;
    cp_status st;
    if ((st = cpl_jfield(c, root, "", "settings", JSON_OBJECT, 0, &settings)) != CP_OK ||
        (st = cpl_jfield(c, settings, "settings", "timing", JSON_OBJECT, 0, &timing)) != CP_OK)
        return st;
    return cpl_jbool(c, timing, "settings.timing", "cold", cold);
}
