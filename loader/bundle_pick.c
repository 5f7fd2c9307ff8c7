/* Picking a bundle's table for a device (the rules: convpick/bundle.h). */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "loader/bundle_impl.h"

static int popcount32(uint32_t v) {
    int n = 0;
    for (; v; v &= v - 1) n++;
    return n;
}

/* |log2(a / b)|, or 1 when either is unknown. */
static double log_dist(double a, double b) {
    return a > 0 && b > 0 ? fabs(log2(a / b)) : 1.0;
}

static double cache_dist(const cp_device_desc *t, const cp_device_desc *m) {
    return log_dist((double)t->l1d, (double)m->l1d) + log_dist((double)t->l2, (double)m->l2) +
           log_dist((double)t->l3, (double)m->l3);
}

/* Names of the features in bits, space-separated. */
static void isa_list(uint32_t bits, char *out, size_t cap) {
    size_t len = 0;
    out[0] = '\0';
    for (unsigned i = 0; i < CP_ISA_COUNT && len < cap; i++)
        if (bits & (1u << i)) {
            int k = snprintf(out + len, cap - len, "%s%s", len ? " " : "", cp_isa_names[i]);
            if (k < 0) break;
            len += (size_t)k;
        }
}

static const char *base_name(const char *p) {
    const char *s = strrchr(p, '/');
    return s ? s + 1 : p;
}

/* 1 when table a is nearer to m than table b (both ISA-compatible). */
static int nearer(const cp_device_desc *a, const cp_device_desc *b, const cp_device_desc *m) {
    const int fa = popcount32(a->isa), fb = popcount32(b->isa);
    if (fa != fb) return fa > fb;
    const double ca = cache_dist(a, m), cb = cache_dist(b, m);
    if (ca != cb) return ca < cb;
    return log_dist(a->cpus, m->cpus) < log_dist(b->cpus, m->cpus);
    /* equal: the earlier file (the caller keeps the first) */
}

cp_status cp_bundle_pick_for(const cp_bundle *b, const cp_device_desc *dev, cp_bundle_pick *out) {
    memset(out, 0, sizeof *out);
    for (size_t i = 0; i < b->n; i++)
        if (strcmp(b->devs[i].fingerprint, dev->fingerprint) == 0) {
            out->kind = CP_PICK_EXACT;
            out->index = i;
            snprintf(out->why, sizeof out->why, "%s: exact: its device fingerprint %s is this "
                     "machine's", base_name(b->paths[i]), dev->fingerprint);
            return CP_OK;
        }
    long best = -1;
    for (size_t i = 0; i < b->n; i++) {
        if (b->devs[i].isa & ~dev->isa) continue; /* needs a feature this machine lacks */
        if (best < 0 || nearer(&b->devs[i], &b->devs[best], dev)) best = (long)i;
    }
    if (best < 0) {
        char have[160];
        isa_list(dev->isa, have, sizeof have);
        out->kind = CP_PICK_NONE;
        snprintf(out->why, sizeof out->why, "none: no table of the bundle (%zu) was tuned with "
                 "ISA features this machine has (%s); the default choice applies", b->n,
                 have[0] ? have : "none");
        return CP_ENOTFOUND;
    }
    const cp_device_desc *t = &b->devs[best];
    char isa[160];
    isa_list(t->isa, isa, sizeof isa);
    out->kind = CP_PICK_NEAREST;
    out->index = (size_t)best;
    snprintf(out->why, sizeof out->why, "%s: nearest: no table of fingerprint %s; %d of this "
             "machine's %d ISA features (%s), cache distance %.2f (L1d/L2/L3 %zu/%zu/%zu KiB "
             "vs %zu/%zu/%zu), %d logical CPUs vs %d", base_name(b->paths[best]),
             dev->fingerprint, popcount32(t->isa), popcount32(dev->isa), isa[0] ? isa : "none",
             cache_dist(t, dev), t->l1d >> 10, t->l2 >> 10, t->l3 >> 10, dev->l1d >> 10,
             dev->l2 >> 10, dev->l3 >> 10, t->cpus, dev->cpus);
    return CP_OK;
}
