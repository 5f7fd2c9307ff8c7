/* The end-to-end network time: what the whole network costs, the sum over
 * its layers of count x median, for one flip and thread count, per row (the
 * table's choice, each single algorithm, the best of each layer).  A row
 * measured on only some of the layers is reported with its coverage rather
 * than as a total, so that a partial sum is never read as the network's. */
#ifndef CONVPICK_NETWORK_H
#define CONVPICK_NETWORK_H

#include <stddef.h>
#include <stdio.h>

#include "convpick/convpick.h"

#define CPH_NET_MAX_ROWS 40

typedef struct cph_net_row {
    char name[32];     /* "chosen", an algorithm, "best of each" (layer) */
    double seconds;    /* sum of count x median over the covered layers */
    size_t covered;    /* layers (shapes) with a time */
} cph_net_row;

typedef struct cph_net_total {
    cp_flip flip;
    int threads;
    size_t nshapes;    /* shapes of the selection */
    long long nlayers; /* their counts summed */
    cph_net_row rows[CPH_NET_MAX_ROWS];
    size_t nrows;
} cph_net_total;

void cph_net_init(cph_net_total *t, cp_flip flip, int threads, size_t nshapes, long long nlayers);
/* Adds count x seconds to the row named row (created on first use; rows past
 * CPH_NET_MAX_ROWS are dropped). */
void cph_net_add(cph_net_total *t, const char *row, int count, double seconds);
/* "network total, flip=no threads=1: 6 layers (5 shapes), sum of count x median"
 * then one line per row, fastest full row first. */
void cph_net_print(FILE *f, const cph_net_total *t);

#endif
