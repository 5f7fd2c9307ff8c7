/* A bundle's storage (loader/bundle.c reads it, bundle_pick.c picks). */
#ifndef CONVPICK_BUNDLE_IMPL_H
#define CONVPICK_BUNDLE_IMPL_H

#include "convpick/bundle.h"

struct cp_bundle {
    char **paths;         /* dir/name, sorted by name */
    cp_device_desc *devs; /* one per path */
    size_t n, cap;
};

/* One table's device from its header (the entries are not parsed). */
cp_status cpl_bundle_read_device(const char *path, cp_device_desc *d, char *msg, size_t cap);

#endif
