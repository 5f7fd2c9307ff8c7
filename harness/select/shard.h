/* Sharding a layer selection for tuning on several machines at once (tune
 * --shard I/N): a deterministic partition balanced by FLOPs. */
#ifndef CONVPICK_SHARD_H
#define CONVPICK_SHARD_H

#include <stddef.h>

#include "convpick/status.h"
#include "harness/select/layers.h"

/* Which shard (0 .. nshards-1) each of the n layers goes to, in out[0..n).
 * Rule: layers in order of decreasing FLOPs (cp_shape_flops; ties: the
 * earlier layer first), each given to the shard with the fewest FLOPs so far
 * (ties: the lower shard).  The same list and nshards always give the same
 * partition, on every machine. */
cp_status cph_shard_assign(const cph_layer_list *l, int nshards, int *out, char *msg, size_t cap);

/* Keeps in l only the layers of shard index (0-based), in their order. */
cp_status cph_shard_keep(cph_layer_list *l, int index, int nshards, char *msg, size_t cap);

#endif
