/* The registry's dynamic part: algorithms added at run time by plugins
 * (loader/plugin.c), listed after the built-in ones.  Internal (prefix cpa_). */
#ifndef CONVPICK_REGISTRY_H
#define CONVPICK_REGISTRY_H

#include <stddef.h>

#include "convpick/algo.h"

/* At most this many plugin algorithms at once. */
#define CPA_REGISTRY_MAX_DYNAMIC 64

/* Appends n algorithms owned by owner (never NULL); 0, or -1 when they do not
 * fit (nothing added).  The caller has checked their names. */
int cpa_registry_add(const cp_algo *const *algos, size_t n, const void *owner);
/* The owner an algorithm was added with, NULL for a built-in. */
const void *cpa_registry_owner(const cp_algo *a);
/* Removes every algorithm of owner. */
void cpa_registry_remove(const void *owner);

#endif
