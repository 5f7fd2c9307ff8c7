/* Where timed work's memory lies: every buffer of a trial (input, output) and
 * every block its plan allocates (prepared weights, workspace) placed at a
 * random 64-byte step within a span, on memory backed by 2 MiB transparent
 * huge pages where the kernel grants them.
 *
 * Why both (docs/measurement.md, "the two speeds"):
 *  - Random offsets turn placement effects (4 KiB aliasing between streams,
 *    cache-set conflicts between the weights and the activations) into
 *    variance between trials instead of a bias fixed for a run (Mytkowicz et
 *    al., ASPLOS 2009; Curtsinger & Berger, "STABILIZER", ASPLOS 2013).  The
 *    span covers the part of an address that picks an L2 set (one way's worth:
 *    L2 size / associativity), so the relative offsets of the streams cover
 *    every set alignment.
 *  - Huge pages make the physical address agree with the virtual one below
 *    2 MiB.  With 4 KiB pages the physical pages behind a buffer, and so its
 *    L2 sets above bit 12, are whatever the kernel handed the process: fixed
 *    for every trial of one process (the heap reuses them), different in the
 *    next process.  That is a per-process bias no within-run randomisation
 *    reaches; on huge pages the offsets drawn here decide it.
 *
 * Regions are mapped once and reused (a region freed by one trial serves the
 * next), so a trial pays no page faults after the first.  Not thread-safe:
 * one placer per thread that creates plans and buffers. */
#ifndef CONVPICK_PLACER_H
#define CONVPICK_PLACER_H

#include <stddef.h>
#include <stdint.h>

#include "convpick/convpick.h"

/* Default span of the random offsets: 128 KiB, one L2 way of a 2 MiB 16-way
 * L2 (and two of a 1 MiB 16-way one). */
#define CPH_PLACE_SPAN_DEFAULT ((size_t)128 << 10)

typedef struct cph_placer cph_placer;

/* span: offsets are drawn from [0, span) in 64-byte steps (0: every block
 * 64-byte aligned at a region's start, still on huge pages).  NULL when out
 * of memory. */
cph_placer *cph_placer_create(size_t span, uint64_t seed);
void cph_placer_destroy(cph_placer *pl);

/* bytes of memory at a fresh random offset, 64-byte aligned; NULL when out of
 * memory.  Give it back with cph_placer_release. */
void *cph_placer_alloc(cph_placer *pl, size_t bytes);
void cph_placer_release(cph_placer *pl, void *ptr);

/* The placer as the library's allocator (cp_set_allocator). */
cp_allocator cph_placer_allocator(cph_placer *pl);

/* Regions mapped, and how many bytes of them the kernel backs with huge pages
 * (from /proc/self/smaps; 0 when it cannot tell). */
typedef struct cph_placer_stats {
    size_t regions, mapped_bytes, huge_bytes;
} cph_placer_stats;
void cph_placer_stats_get(const cph_placer *pl, cph_placer_stats *st);

#endif
