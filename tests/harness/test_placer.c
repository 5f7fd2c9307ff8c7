/* The placer (harness/measure/placer.c): blocks 64-byte aligned at offsets
 * that vary within the span, live blocks never overlapping, regions reused
 * once released, and plans taking their memory from it through
 * cp_set_allocator.  Facts checked are the placer's own contract (placer.h);
 * the alignment rule is common practice, no source. */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>

#include "convpick/convpick.h"
#include "harness/measure/placer.h"

static void test_offsets_vary_aligned(void **state) {
    (void)state;
    cph_placer *pl = cph_placer_create(CPH_PLACE_SPAN_DEFAULT, 7);
    assert_non_null(pl);
    uintptr_t seen[32];
    size_t distinct = 0;
    for (int i = 0; i < 32; i++) {
        char *p = cph_placer_alloc(pl, 1000);
        assert_non_null(p);
        assert_int_equal((uintptr_t)p % 64, 0);
        memset(p, 0xab, 1000); /* the whole block is writable */
        const uintptr_t off = (uintptr_t)p % CPH_PLACE_SPAN_DEFAULT;
        int known = 0;
        for (size_t j = 0; j < distinct; j++) known |= seen[j] == off;
        if (!known) seen[distinct++] = off;
        cph_placer_release(pl, p);
    }
    /* 2048 possible offsets, 32 draws: all but a few distinct */
    assert_true(distinct >= 28);
    cph_placer_stats st;
    cph_placer_stats_get(pl, &st);
    assert_int_equal(st.regions, 1); /* one region served every released block */
    cph_placer_destroy(pl);
}

static void test_live_blocks_disjoint(void **state) {
    (void)state;
    cph_placer *pl = cph_placer_create(CPH_PLACE_SPAN_DEFAULT, 11);
    enum { N = 8 };
    char *b[N];
    const size_t sz[N] = {1, 64, 4096, 100000, 3 << 20, 17, 65536, 5 << 20};
    for (int i = 0; i < N; i++) {
        b[i] = cph_placer_alloc(pl, sz[i]);
        assert_non_null(b[i]);
        memset(b[i], i + 1, sz[i]);
    }
    for (int i = 0; i < N; i++) /* no later block wrote over an earlier one */
        for (size_t k = 0; k < sz[i]; k += sz[i] / 7 + 1) assert_int_equal(b[i][k], i + 1);
    cph_placer_stats st;
    cph_placer_stats_get(pl, &st);
    assert_int_equal(st.regions, N);
    for (int i = 0; i < N; i++) cph_placer_release(pl, b[i]);
    cph_placer_destroy(pl);
}

static void test_zero_span_aligned_at_start(void **state) {
    (void)state;
    cph_placer *pl = cph_placer_create(0, 1);
    char *a = cph_placer_alloc(pl, 100);
    assert_non_null(a);
    assert_int_equal((uintptr_t)a % (2u << 20), 0); /* a region starts on 2 MiB */
    cph_placer_release(pl, a);
    cph_placer_destroy(pl);
}

/* A plan's prepared weights and workspace come from the allocator set when
 * it was created, and go back to it when destroyed. */
typedef struct {
    cph_placer *pl;
    int allocs, releases;
} counting;

static void *count_alloc(void *ctx, size_t bytes) {
    counting *c = ctx;
    c->allocs++;
    return cph_placer_alloc(c->pl, bytes);
}
static void count_release(void *ctx, void *p, size_t bytes) {
    (void)bytes;
    counting *c = ctx;
    c->releases++;
    cph_placer_release(c->pl, p);
}

static void test_plan_memory_from_placer(void **state) {
    (void)state;
    counting c = {cph_placer_create(CPH_PLACE_SPAN_DEFAULT, 3), 0, 0};
    const cp_allocator a = {count_alloc, count_release, &c};
    cp_shape s = {.n = 1, .c = 8, .h = 9, .w = 9, .k = 8, .r = 3, .s = 3, .stride_h = 1,
                  .stride_w = 1, .pad_top = 1, .pad_left = 1, .pad_bottom = 1, .pad_right = 1,
                  .dil_h = 1, .dil_w = 1, .groups = 1};
    float w[8 * 8 * 9];
    for (size_t i = 0; i < sizeof w / sizeof w[0]; i++) w[i] = (float)i / 100.0f;
    char msg[256];
    cp_set_allocator(&a);
    cp_plan *p = NULL;
    assert_int_equal(cp_plan_create(cp_algo_find("winograd_2x2_3x3"), &s, CP_XCORR, NULL, NULL, 1,
                                    w, &p, msg, sizeof msg),
                     CP_OK);
    cp_set_allocator(NULL);
    assert_true(c.allocs >= 2); /* prepared weights and workspace */
    /* plans made after the reset use the heap */
    cp_plan *q = NULL;
    assert_int_equal(cp_plan_create(cp_algo_find("direct"), &s, CP_XCORR, NULL, NULL, 1, w, &q,
                                    msg, sizeof msg),
                     CP_OK);
    const int after_reset = c.allocs;
    cp_plan_destroy(q);
    assert_int_equal(c.allocs, after_reset);
    cp_plan_destroy(p);
    assert_int_equal(c.releases, c.allocs);
    cph_placer_destroy(c.pl);
}

int main(void) {
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_offsets_vary_aligned),
        cmocka_unit_test(test_live_blocks_disjoint),
        cmocka_unit_test(test_zero_span_aligned_at_start),
        cmocka_unit_test(test_plan_memory_from_placer),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
